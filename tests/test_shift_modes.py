"""Written back in t, the input's own modes of an IVP at t0 != 0 are those of the same problem from 0.

The forced response of a mode that is not an eigenvalue is the particular
solution's, which does not depend on t0 (common practice: x_p is fixed by the
forcing alone, t0 and x0 enter only the free response).
"""

from __future__ import annotations

import sympy as sp

from derive import solve

t = sp.Symbol("t", real=True)
A3 = [[0, 1, 0], [0, 0, 1], [-6, -11, -6]]  # a lag chain of our own, eigenvalues -1, -2, -3
F3 = [0, 0, sp.sin(2 * t) + sp.exp(-t / 2)]


def _input_terms(e: sp.Expr) -> dict[sp.Expr, sp.Expr]:
    """Coefficients of sin 2t, cos 2t and e^{-t/2} in e."""
    e = sp.expand(e)
    return {g: sp.nsimplify(e.coeff(g)) for g in (sp.sin(2 * t), sp.cos(2 * t), sp.exp(-t / 2))}


def test_input_modes_do_not_depend_on_t0() -> None:
    zero = solve(A3, F3, t=t, x0=[1, -1, 2], t0=0)
    later = solve(A3, F3, t=t, x0=[1, -1, 2], t0=sp.Rational(3, 2))
    for a, b in zip(zero.x, later.x):
        assert _input_terms(a) == _input_terms(b)
        assert all(v != 0 for v in _input_terms(b).values())
    # the free response is in (t - t0) and carries the start's own numbers
    assert later.x[0].has(sp.sin(3)) and later.verification.ok


def test_a_ramp_input_keeps_its_t0_terms() -> None:
    # t e^{-t/2} at t = tau + t0 has a t0 in its forced coefficients: written back by the addition route
    f = [0, t * sp.exp(-t / 2)]
    sol = solve([[0, 1], [-2, -3]], f, t=t, x0=[0, 1], t0=2)
    ref = solve([[0, 1], [-2, -3]], f, t=t, x0=[0, 1], t0=0)
    ex = sp.expand(sol.x[0])
    ex0 = sp.expand(ref.x[0])
    for g in (t * sp.exp(-t / 2), sp.exp(-t / 2)):
        assert sp.simplify(ex.coeff(g) - ex0.coeff(g)) == 0
    assert sol.verification.ok
