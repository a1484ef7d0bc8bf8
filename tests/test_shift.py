"""Initial values at t0 != 0: solved in tau = t - t0, written back in t, verified on the user's system."""

from __future__ import annotations

import re

import numpy as np
import pytest
import sympy as sp
from scipy.integrate import solve_ivp

from derive import render, solve
from derive.pipeline import build_system
from derive.render.printing import plain_text
from derive.solving.shift import time_shift
from derive.steps import ShiftStep
from reference import assert_close, ivp_values, solution_values

t = sp.Symbol("t", real=True)
A3 = [[0, 1, 0], [0, 0, 1], [-6, -11, -6]]  # a third-order lag chain of our own, eigenvalues -1, -2, -3


def _timed_arguments(x: sp.MatrixBase) -> list[sp.Expr]:
    """Arguments of every exp, sin and cos in x that hold t."""
    out = []
    for e in x:
        for a in e.atoms(sp.exp, sp.sin, sp.cos):
            if a.args[0].has(t):
                out.append(a)
    return out


def test_shift_applies_only_to_an_ivp_away_from_zero() -> None:
    at_zero, _ = build_system(A3, [0, 0, sp.sin(t)], t=t, x0=[1, 0, 0], t0=0)
    general, _ = build_system(A3, [0, 0, sp.sin(t)], t=t, t0=1)
    shifted, _ = build_system(A3, [0, 0, sp.sin(2 * t)], t=t, x0=[1, 0, 0], t0=1)
    assert time_shift(at_zero) is None
    assert time_shift(general) is None
    shift = time_shift(shifted)
    assert shift is not None and shift.shifted.t0 == 0
    # f(tau + 1) = sin(2 tau + 2), written by the addition formula with cos 2, sin 2 as stand-ins
    f = shift.step().f_shifted[2]
    tau = shift.tau
    assert sp.simplify(f - sp.sin(2 * tau + 2)) == 0


def test_same_function_shifted() -> None:
    """x from t0 = 1 with f(t) is x from t0 = 0 with f(t + 1), read at t - 1 (time invariance)."""
    f = [sp.Integer(0), sp.Integer(0), sp.sin(2 * t) + sp.exp(-t / 2)]
    f_ahead = [e.subs(t, t + 1) for e in f]
    one = solve(A3, f, t=t, x0=[1, -1, 2], t0=1)
    zero = solve(A3, f_ahead, t=t, x0=[1, -1, 2], t0=0)
    times = [1.0, 1.3, 2.0, 3.7, 6.0]
    assert_close(solution_values(one.x, times, t=t), solution_values(zero.x, [tv - 1 for tv in times], t=t), rtol=1e-20)


def test_numeric_ivp_at_one_against_solve_ivp() -> None:
    f = [0, 0, sp.sin(2 * t)]
    sol = solve(A3, f, t=t, x0=[1, 0, 0], t0=1)
    assert sol.verification.ok
    times = [1.0, 1.5, 2.5, 4.0, 8.0]
    # scipy.integrate.solve_ivp, reference library (DOP853 started at t0 = 1)
    assert_close(solution_values(sol.x, times, t=t), ivp_values(A3, f, [1, 0, 0], times, t0=1.0, t=t), rtol=1e-9)


def test_result_reads_in_t_minus_t0() -> None:
    sol = solve(A3, [0, 0, sp.sin(2 * t)], t=t, x0=[1, 0, 0], t0=1)
    text = plain_text(sol.x[0])
    assert "(t - 1)" in text
    # the input's own mode comes back in t: sin(2t), not cos 2 sin(2(t - 1)) + ...
    assert sp.sin(2 * t) in sol.x[0].atoms(sp.sin)
    for a in _timed_arguments(sol.x):
        arg = a.args[0]
        const = sp.expand(arg).as_independent(t, as_Add=True)[0]
        printed = plain_text(a)
        # no e^{2 - 2t}: an argument with a constant part is printed as m (t - 1)
        assert const == 0 or "(t - 1)" in printed, printed
    assert not re.search(r"exp\(\d+ - \d* ?t\)", text)


def test_sheet_shows_the_shift_and_the_derivation_in_tau() -> None:
    sol = solve(A3, [0, 0, sp.sin(2 * t)], t=t, x0=[1, 0, 0], t0=1)
    assert isinstance(sol.steps[1 + [s.kind for s in sol.steps[1:]].index("shift")], ShiftStep)
    for fmt in ("text", "markdown"):
        doc = render(sol, fmt)
        assert "Time measured from" in doc
        assert "τ = t - 1" in doc or "tau = t - 1" in doc
        assert "(t - 1)" in doc.split("Result")[-1]


def test_symbolic_spring_mass_damper_at_one() -> None:
    """The case of the issue: c, k, m positive, forced by sin 2t, from t0 = 1."""
    c, k, m = sp.symbols("c k m", positive=True)
    sol = solve([[0, 1], [-k / m, -c / m]], [0, sp.sin(2 * t) / m], t=t, x0=[1, 0], t0=1)
    assert sol.verification.ok and sol.verification.residual_zero
    text = plain_text(sol.x[0])
    assert "(t - 1)" in text
    # the forced response is in t; the free response in t - 1
    rates = {sp.expand(a.args[0]).coeff(t) for a in sol.x[0].atoms(sp.exp) if a.args[0].has(t)}
    assert {2 * sp.I, -2 * sp.I} <= rates
    values = {c: sp.Rational(1, 2), k: 3, m: 2}
    times = [1.0, 2.0, 5.0]
    x_num = sol.x.subs(values)
    # scipy.integrate.solve_ivp, reference library
    ref = ivp_values([[0, 1], [-sp.Rational(3, 2), -sp.Rational(1, 4)]], [0, sp.sin(2 * t) / 2], [1, 0], times, t0=1.0, t=t)
    assert_close(solution_values(x_num, times, t=t), ref, rtol=1e-9)


def test_symbolic_t0() -> None:
    t_0 = sp.Symbol("t_0", real=True)
    sol = solve([[0, 1], [-2, -3]], [0, sp.sin(t)], t=t, x0=[1, 0], t0=t_0)
    assert sol.verification.ok
    assert sol.x[0].has(t_0)
    # the forced response does not depend on t0: sin t and cos t appear as they are
    assert {sp.sin(t), sp.cos(t)} <= sol.x[0].atoms(sp.sin, sp.cos)
    # at t0 = 1/2 it is the solution from t0 = 1/2
    at = solve([[0, 1], [-2, -3]], [0, sp.sin(t)], t=t, x0=[1, 0], t0=sp.Rational(1, 2))
    times = [0.5, 1.0, 3.0]
    assert_close(solution_values(sol.x.subs(t_0, sp.Rational(1, 2)), times, t=t), solution_values(at.x, times, t=t), rtol=1e-20)


def test_step_and_impulse_after_t0() -> None:
    f = [0, 0, sp.Heaviside(t - 2) + 2 * sp.DiracDelta(t - 3)]
    sol = solve(A3, f, t=t, x0=[1, 0, 0], t0=1)
    assert sol.verification.ok
    assert isinstance(sol.x[0], sp.Piecewise)
    An = np.array(A3, dtype=float)

    def rhs(tt: float, y: np.ndarray, u: float) -> np.ndarray:
        return An @ y + np.array([0.0, 0.0, u])

    # scipy.integrate.solve_ivp, reference library: DOP853 interval by interval from t0 = 1,
    # the impulse as the jump x(3+) = x(3-) + (0, 0, 2)
    y = np.array([1.0, 0.0, 0.0])
    got = {}
    for (a, b, u) in ((1.0, 2.0, 0.0), (2.0, 3.0, 1.0), (3.0, 5.0, 1.0)):
        if a == 3.0:
            y = y + np.array([0.0, 0.0, 2.0])
        out = solve_ivp(rhs, (a, b), y, args=(u,), method="DOP853", rtol=1e-12, atol=1e-12, t_eval=[(a + b) / 2, b])
        got[(a + b) / 2], got[b] = out.y[:, 0], out.y[:, 1]
        y = out.y[:, 1]
    times = [1.5, 2.5, 4.0, 5.0]
    ref = np.array([got[tv] for tv in times]).T
    assert_close(solution_values(sol.x, times, t=t), ref, rtol=1e-9)
    # the switching times are those of the user's system
    assert [r.start for r in sol.steps if r.kind == "interval"] == [0, 1, 2]  # in tau
    text = plain_text(sol.x[0])
    assert "t < 2" in text and "t < 3" in text


def test_states_handed_over_also_in_decimals() -> None:
    sol = solve([[0, 1], [-2, -3]], [0, sp.Heaviside(t - 2) + sp.DiracDelta(t - 3)], t=t, x0=[1, 0], t0=1)
    text = render(sol, "text")
    # x at tau = 1 (t = 2) is (2 e^-1 - e^-2, -2 e^-1 + 2 e^-2), handed to the second interval
    x_end = [2 * sp.exp(-1) - sp.exp(-2), -2 * sp.exp(-1) + 2 * sp.exp(-2)]
    step = [s for s in sol.steps if s.kind == "interval"][0]
    assert [sp.simplify(a - b) for a, b in zip(step.x_end, x_end)] == [0, 0]
    assert "x(1) ~ (0.60042, -0.46509)" in text
    # after the impulse (0, 1) at t = 3 (tau = 2)
    assert "x(2+) ~ (" in text
