"""The x(t0) check at t0 != 0 in a ring: cos^2 u + sin^2 u = 1 used, a wrong x0 never passes."""

from __future__ import annotations

import sympy as sp

from derive import solve
from derive.initial_at import initial_is_zero_at

t = sp.Symbol("t", real=True)
c, k, m = sp.symbols("c k m", positive=True)


def test_pythagoras_is_the_relation_used() -> None:
    # at t = 3: sin^2 6 + cos^2 6 = 1 needs the relation, e^{3 - t} is 1 there
    x = [sp.sin(2 * t) ** 2 + sp.cos(2 * t) ** 2 * sp.exp(3 - t), sp.cos(2 * t) * sp.exp(t - 3)]
    assert initial_is_zero_at(x, [1, sp.cos(6)], t, 3)
    assert not initial_is_zero_at(x, [1, sp.sin(6)], t, 3)
    assert not initial_is_zero_at(x, [2, sp.cos(6)], t, 3)


def test_complex_phase_and_a_root_of_the_parameters() -> None:
    # at t = 1: e^{2 i t} is cos 2 + i sin 2, and (c - r)^2/(c + r) = (c - r)^3/(4 k m) needs r^2 = c^2 - 4 k m
    r = sp.sqrt(c**2 - 4 * k * m)
    x = [(sp.exp(2 * sp.I * t) + sp.exp(-2 * sp.I * t)) / 2 + (r * sp.exp(t - 1) - c) * (c - r) / (c + r)]
    right = sp.cos(2) - (c - r) ** 3 / (4 * k * m)
    assert initial_is_zero_at(x, [right + sp.sin(2) ** 2 + sp.cos(2) ** 2 - 1], t, 1)
    assert not initial_is_zero_at(x, [sp.cos(2) + (c - r) ** 3 / (4 * k * m)], t, 1)
    assert not initial_is_zero_at(x, [right + sp.sin(2) / 10**6], t, 1)


def test_a_wrong_result_still_fails_the_solve_check() -> None:
    # the ring settles only zeros: a perturbed x(t) goes to the general test and is reported
    from derive.verify import verify

    sol = solve([[0, 1], [-2, -3]], [0, sp.sin(2 * t)], t=t, x0=[1, 0], t0=1)
    assert sol.verification.initial_ok
    assert initial_is_zero_at(list(sol.x), [1, 0], t, 1)
    bad = sol.x + sp.ImmutableMatrix([sp.sin(2 * t) / 1000, 0])
    ver = verify(sol.system, bad)
    assert ver.initial_ok is False
