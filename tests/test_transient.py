"""transient(x, x_ss, t): the regrouping of x - x_ss that recombine.tidy gives, touching only the modes free of e^{u}."""

from __future__ import annotations

import sympy as sp

import derive
from derive.recombine import tidy
from derive.transient import transient

t = sp.Symbol("t", real=True)


def test_a_forced_oscillator_gives_tidy_s_transient() -> None:
    # a scenario of our own: x'' + 3 x' + 2 x = 1 + cos(2 t), from rest; stable, so it has a steady state
    sol = derive.solve([[0, 1], [-2, -3]], [0, 1 + sp.cos(2 * t)], t=t, x0=[0, 0])
    (step,) = [s for s in sol.steps if s.kind == "steady_state"]
    for x, x_ss in zip(sol.x, step.x_ss):
        out = transient(x, x_ss, t)
        assert out == tidy(x - x_ss, (), t)
        # the steady state is gone: only decaying modes are left
        assert not out.has(sp.cos(2 * t)) and not out.has(sp.sin(2 * t))
        assert all(f.has(sp.exp) for f in sp.Add.make_args(out)), out
        assert sp.simplify(out - (x - x_ss)) == 0


def test_a_mode_met_by_two_terms_is_regrouped_as_tidy_does() -> None:
    # e^{-t} in two terms: not grouped yet, so the whole difference goes through tidy
    x = 2 * sp.exp(-t) + t * sp.exp(-t) * 3 + sp.sin(t) + 1
    x_ss = sp.sin(t) + 1
    out = transient(x, x_ss, t)
    assert out == tidy(x - x_ss, (), t)
    assert sp.simplify(out - (3 * t + 2) * sp.exp(-t)) == 0


def test_a_steady_state_left_in_the_rest_stays_visible() -> None:
    # the rest of x that the steady state does not cancel is kept, grouped
    x = sp.exp(-2 * t) * (1 + t) + sp.Rational(3, 2) * sp.cos(t) + 5
    out = transient(x, sp.cos(t) + 5, t)
    assert sp.expand(out - (sp.exp(-2 * t) * (1 + t) + sp.cos(t) / 2)) == 0
