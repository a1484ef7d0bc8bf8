"""recombine.tidy keeps sin/cos arguments in t factored: sin(w (t - 1)), not sin(w t - w)."""

from __future__ import annotations

import sympy as sp

import derive
from derive.recombine import tidy

t = sp.Symbol("t")


def _trig_arguments(e: sp.Expr) -> list[sp.Expr]:
    return [a.args[0] for a in e.atoms(sp.sin, sp.cos)]


def test_regime_at_t0_one_keeps_the_shifted_time_inside_sines():
    # common practice: with c^2 < 4 k m the free response of a spring-mass-damper started
    # at t0 is e^{-c (t - t0)/(2m)} (cos w (t - t0) + c/(2 m w) sin w (t - t0)), w = sqrt(4 k m - c^2)/(2 m)
    k, m, c = sp.symbols("k m c", positive=True)
    A = sp.Matrix([[0, 1], [-k / m, -c / m]])
    sol = derive.solve(A, x0=[1, 0], t0=1, assume=["c^2 < 4*k*m"])
    assert sol.verification.ok
    args = [u for e in sol.x for u in _trig_arguments(e)]
    assert args, "the regime gives sines and cosines"
    for u in args:
        # one product holding the factor (t - 1), never the expanded sum w t - w
        assert not u.is_Add, u
        assert (t - 1) in sp.Mul.make_args(u), u
    w = sp.sqrt(4 * k * m - c**2) / (2 * m)
    s = t - 1
    expected = sp.exp(-c * s / (2 * m)) * (sp.cos(w * s) + c / (2 * m * w) * sp.sin(w * s))
    assert sp.simplify(sol.x[0] - expected) == 0


def test_tidy_factors_numeric_trig_arguments_and_leaves_plain_ones():
    e = sp.exp(-t) * (sp.sin(2 * t - 2) + 3 * sp.cos(2 * t - 2)) + sp.sin(5 * t)
    out = tidy(e, (), t)
    # 2 (t - 1) as factor_terms writes it (2*(t - 1) typed in would distribute to 2 t - 2)
    shifted = sp.Mul(2, t - 1, evaluate=False)
    assert out.atoms(sp.sin, sp.cos) == {sp.sin(shifted), sp.cos(shifted), sp.sin(5 * t)}
    assert sp.expand(out - e) == 0  # the same sum once the arguments are expanded again


def test_tidy_factors_an_indexed_root_frequency_without_factor_terms():
    x = sp.Symbol("x")
    r = sp.CRootOf(x**5 + 4 * x**4 + 10 * x**3 + 14 * x**2 + 13 * x + 7, 1)
    w = sp.im(r)
    out = tidy(sp.exp(-t) * sp.sin(w * t - w), (), t)
    assert out.atoms(sp.sin) == {sp.sin(w * (t - 1))}
