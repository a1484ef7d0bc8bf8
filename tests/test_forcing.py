"""Forcing beyond exponential polynomials: steps, pulses, ramps, piecewise, impulses, convolution.

Evidence independent of the solver:
- scipy's solve_ivp, integrated here piecewise (restarted at each switch, an
  impulse applied as a jump of the state), never the solver's own check;
- textbook step and impulse responses of a second-order system (source named
  at the test);
- sympy's integrate and mpmath's quad for the closed-form integrator;
- numpy's linear solve for the steady-state phasor.
The scenarios are invented for this file.
"""

from __future__ import annotations

from dataclasses import replace
import signal

import mpmath
import numpy as np
import pytest
import sympy as sp
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from scipy.integrate import solve_ivp

import derive
from derive import forcing
from derive.errors import CaseFileError, InputError, LimitError, UnsupportedError
from derive.exact import is_zero_number
from derive.expoly import ExpPoly, integrate_against
from derive.limits import time_limit
from derive.render import render
from derive.settings import DEFAULT_SETTINGS
from derive.steps import ConvolutionStep, IntervalStep, JumpStep, SteadyStateStep
from derive.verify.pieces import numeric_solution

t = sp.Symbol("t", real=True)


def scipy_piecewise(A, f, x0, *, t0, switches, jumps=None, t_end, points=40):
    """Reference: solve_ivp on each interval between switches, jumps added at their times."""
    A = np.array(A, dtype=float)
    # impulses act through ``jumps``; between switches they are zero
    smooth = [sp.sympify(e).replace(sp.DiracDelta, lambda *a: sp.Integer(0)) for e in f]
    f_fn = sp.lambdify(t, smooth, modules="numpy")
    jumps = jumps or {}
    edges = [t0] + [s for s in switches if t0 < s < t_end] + [t_end]
    state = np.array(x0, dtype=float) + np.array(jumps.get(t0, [0] * len(x0)), dtype=float)
    ts, ys = [], []
    for a, b in zip(edges[:-1], edges[1:]):
        if a != t0:
            state = state + np.array(jumps.get(a, [0] * len(x0)), dtype=float)
        mid = 0.5 * (a + b)
        # the forcing on the open interval, so the integrator never steps across a switch
        const_f = lambda tt, mid=mid: np.array(f_fn(tt if a < tt < b else mid), dtype=float).reshape(-1)  # noqa: E731
        grid = np.linspace(a, b, points)
        sol = solve_ivp(lambda tt, y: A @ y + const_f(tt), (a, b), state, method="DOP853",
                        rtol=1e-12, atol=1e-14, t_eval=grid)
        assert sol.success
        ts.append(grid[1:-1])
        ys.append(sol.y[:, 1:-1])
        state = sol.y[:, -1]
    return np.concatenate(ts), np.concatenate(ys, axis=1)


def evaluate(x, times):
    fn = sp.lambdify(t, list(x), modules="numpy")
    return np.array([np.array(fn(tt), dtype=float).reshape(-1) for tt in times]).T


def residual_zero_per_interval(sol):
    for step in sol.steps:
        if isinstance(step, IntervalStep):
            r = step.x.diff(t) - sol.system.A * step.x - step.f
            for e in r:
                e = sp.expand(e.rewrite(sp.exp))
                # exact when expansion settles it, else at sample points to 30 digits
                assert e == 0 or all(abs(sp.N(e.subs(t, p), 30)) < 1e-25 for p in (sp.Rational(1, 3), sp.Rational(17, 5))), step.index


# ---------------------------------------------------------------------------
# switched inputs against scipy


CASES = [
    # name, A, f, x0, switches, jumps
    ("step", [[0, 1], [-2, -3]], [0, 3 * sp.Heaviside(t - 1)], [1, 0], [1], {}),
    ("pulse", [[-1, 0], [1, -2]], [4 * (sp.Heaviside(t - 1) - sp.Heaviside(t - 3)), 0], [0, 0], [1, 3], {}),
    ("pulse train", [[0, 1], [-5, -2]],
     [0, 2 * (sp.Heaviside(t - 1) - sp.Heaviside(t - 2) + sp.Heaviside(t - 4) - sp.Heaviside(t - 5))], [0, 1], [1, 2, 4, 5], {}),
    ("delayed ramp", [[0, 1], [-4, -2]], [0, (t - 1) * sp.Heaviside(t - 1)], [0, 0], [1], {}),
    ("step times sinusoid", [[-1, 2], [-2, -1]], [sp.sin(3 * t) * sp.Heaviside(t - 2), 0], [1, 1], [2], {}),
    ("piecewise", [[0, 1], [-4, -2]], [0, sp.Piecewise((0, t < 2), (5, t < 8), (0, True))], [0, 0], [2, 8], {}),
    ("impulse", [[0, 1], [-2, -3]], [0, 3 * sp.DiracDelta(t - 1)], [1, 0], [1], {1: [0, 3]}),
    ("impulse and step", [[-1, 0], [0, -3]], [sp.DiracDelta(t - 2) + sp.Heaviside(t - 1), 2 * sp.DiracDelta(t - 2)],
     [0, 1], [1, 2], {2: [1, 2]}),
]


@pytest.mark.parametrize("name,A,f,x0,switches,jumps", CASES, ids=[c[0] for c in CASES])
def test_switched_inputs_match_scipy_and_substitution(name, A, f, x0, switches, jumps):
    sol = derive.solve(A, f, t=t, x0=x0)
    assert sol.verification.ok
    intervals = [s for s in sol.steps if isinstance(s, IntervalStep)]
    assert [s.start for s in intervals] == [0] + switches
    assert len([s for s in sol.steps if isinstance(s, JumpStep)]) == len(jumps)
    residual_zero_per_interval(sol)
    times, ref = scipy_piecewise(A, f, x0, t0=0, switches=switches, jumps=jumps, t_end=switches[-1] + 4)
    got = evaluate(sol.x, times)
    assert np.max(np.abs(got - ref)) < 1e-8 * max(1.0, np.max(np.abs(ref)))


def test_solution_is_continuous_at_steps_and_jumps_by_the_impulse():
    sol = derive.solve([[0, 1], [-2, -3]], [0, 3 * sp.DiracDelta(t - 1) + sp.Heaviside(t - 2)], t=t, x0=[1, 0])
    (jump,) = [s for s in sol.steps if isinstance(s, JumpStep)]
    assert jump.at == 1 and list(jump.weight) == [0, 3]
    def gap(at):
        eps = sp.Rational(1, 10**12)
        return [float(sp.N(e.subs(t, at + eps) - e.subs(t, at - eps), 30)) for e in sol.x]

    assert gap(1) == pytest.approx([0, 3], abs=1e-9)
    assert gap(2) == pytest.approx([0, 0], abs=1e-9)


def test_impulse_at_t0_acts_on_x0():
    sol = derive.solve([[-2]], [5 * sp.DiracDelta(t)], t=t, x0=[1])
    assert sp.simplify(sol.x[0] - 6 * sp.exp(-2 * t)) == 0
    assert sol.verification.initial_ok


def test_t0_is_honoured_and_switches_before_t0_are_settled():
    # the step at t = 1 lies before t0 = 2: it is on throughout the solution's range
    sol = derive.solve([[0, 1], [-2, -3]], [0, sp.Heaviside(t - 1) + sp.Heaviside(t - 3)], t=t, x0=[1, -1], t0=2)
    # the intervals are derived in tau = t - 2 (time measured from t0)
    assert [s.start + 2 for s in sol.steps if isinstance(s, IntervalStep)] == [2, 3]
    assert [sp.simplify(s.x.subs(s.t, 0)) for s in sol.steps if isinstance(s, IntervalStep)][0] == sp.Matrix([1, -1])
    times, ref = scipy_piecewise([[0, 1], [-2, -3]], [0, sp.Heaviside(t - 1) + sp.Heaviside(t - 3)], [1, -1],
                                 t0=2, switches=[3], t_end=7)
    assert np.max(np.abs(evaluate(sol.x, times) - ref)) < 1e-8


def test_general_solution_of_a_switched_input_has_the_state_at_t0_as_constants():
    sol = derive.solve([[-1, 0], [1, -2]], [sp.Heaviside(t - 1), 0], t=t)
    c = sol.constants
    assert len(c) == 2
    first = next(s for s in sol.steps if isinstance(s, IntervalStep))
    assert [sp.simplify(e.subs(t, 0)) for e in first.x] == list(c)
    assert any("state at t0" in n for n in sol.notices)
    residual_zero_per_interval(sol)


def test_jordan_block_with_a_step():
    sol = derive.solve([[-1, 1], [0, -1]], [0, sp.Heaviside(t - 1)], t=t, x0=[1, 0])
    assert not sol.is_diagonalizable and sol.verification.ok
    times, ref = scipy_piecewise([[-1, 1], [0, -1]], [0, sp.Heaviside(t - 1)], [1, 0], t0=0, switches=[1], t_end=6)
    assert np.max(np.abs(evaluate(sol.x, times) - ref)) < 1e-8


# ---------------------------------------------------------------------------
# resonance, real and complex


def test_resonance_real_eigenvalue_with_switched_exponential():
    # e^{-t} switched on at t = 1 drives the mode with eigenvalue -1: a t e^{-t} term appears
    sol = derive.solve([[-1, 0], [0, -3]], [sp.exp(-t) * sp.Heaviside(t - 1), 0], t=t, x0=[0, 0])
    last = sol.x[0].args[-1][0]
    assert sp.simplify(last - (t - 1) * sp.exp(-t)) == 0


def test_resonance_complex_eigenvalues_undamped_oscillator():
    # x'' + x = sin(t) u(t - pi): the response grows like t cos(t) after the switch
    f = [0, sp.sin(t) * sp.Heaviside(t - sp.pi)]
    sol = derive.solve([[0, 1], [-1, 0]], f, t=t, x0=[0, 0])
    last = sol.x[0].args[-1][0]
    expected = sp.integrate(sp.sin(t - sp.Symbol("s")) * sp.sin(sp.Symbol("s")), (sp.Symbol("s"), sp.pi, t))
    assert sp.simplify(last - expected) == 0  # variation of parameters, done here by sympy
    times, ref = scipy_piecewise([[0, 1], [-1, 0]], f, [0, 0], t0=0, switches=[float(sp.pi)], t_end=12)
    assert np.max(np.abs(evaluate(sol.x, times) - ref)) < 1e-8


# ---------------------------------------------------------------------------
# published worked example


def test_second_order_unit_step_and_impulse_responses_from_the_textbook():
    # K. Ogata, "Modern Control Engineering", 5th ed., Sec. 5-3 (from memory): for
    # C/R = wn^2/(s^2 + 2 zeta wn s + wn^2), 0 < zeta < 1, the unit-step response is
    # c(t) = 1 - e^{-zeta wn t}/sqrt(1 - zeta^2) sin(wd t + atan(sqrt(1 - zeta^2)/zeta)),
    # wd = wn sqrt(1 - zeta^2), and the unit-impulse response wn/sqrt(1 - zeta^2) e^{-zeta wn t} sin(wd t).
    zeta, wn = sp.Rational(1, 2), sp.Integer(2)
    wd = wn * sp.sqrt(1 - zeta**2)
    A = [[0, 1], [-wn**2, -2 * zeta * wn]]
    tau = t - 1  # the input arrives at t = 1
    step = derive.solve(A, [0, wn**2 * sp.Heaviside(t - 1)], t=t, x0=[0, 0])
    book_step = 1 - sp.exp(-zeta * wn * tau) / sp.sqrt(1 - zeta**2) * sp.sin(wd * tau + sp.atan(sp.sqrt(1 - zeta**2) / zeta))
    got = step.x[0].args[-1][0]
    for tt in (1.3, 2.0, 3.7, 6.1):
        assert float(got.subs(t, tt)) == pytest.approx(float(book_step.subs(t, tt)), abs=1e-12)
    imp = derive.solve(A, [0, wn**2 * sp.DiracDelta(t - 1)], t=t, x0=[0, 0])
    book_imp = wn / sp.sqrt(1 - zeta**2) * sp.exp(-zeta * wn * tau) * sp.sin(wd * tau)
    assert sp.simplify((imp.x[0].args[-1][0] - book_imp).rewrite(sp.exp)) == 0


# ---------------------------------------------------------------------------
# the closed-form integrator against sympy's integrate and mpmath's quad


GAMMAS = [sp.Integer(0), sp.Integer(-1), sp.Integer(2), sp.Rational(-1, 2), -1 + 2 * sp.I, 3 * sp.I]


@st.composite
def expolys(draw):
    terms = {}
    for _ in range(draw(st.integers(1, 3))):
        k = draw(st.integers(0, 2))
        g = draw(st.sampled_from(GAMMAS))
        terms[(k, g)] = sp.Integer(draw(st.integers(-3, 3).filter(bool)))
    return ExpPoly.from_dict(terms)


@settings(max_examples=12, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(h=expolys(), lam=st.sampled_from([sp.Integer(-1), sp.Integer(0), sp.Integer(2), -1 + 2 * sp.I]))
def test_integrate_against_agrees_with_sympy_and_mpmath(h, lam):
    s = sp.Symbol("s", real=True)
    res = integrate_against(h, lam, is_zero=is_zero_number)
    F = res.antiderivative
    definite = sp.expand(F.at(sp.Integer(1)) - F.at(sp.Integer(0)))
    integrand = sp.exp(-lam * s) * h.to_expr(s)
    # sympy's integrate, an independent general-purpose integrator
    by_sympy = sp.integrate(sp.expand(integrand), (s, 0, 1))
    assert abs(complex(sp.N(definite - by_sympy, 30))) < 1e-20
    # mpmath's adaptive quadrature, numerically
    fn = sp.lambdify(s, integrand, modules="mpmath")
    by_quad = mpmath.quad(fn, [0, 1])
    assert abs(complex(sp.N(definite, 20)) - complex(by_quad)) < 1e-10
    assert res.resonant == any(is_zero_number(g - lam) for g in h.exponents())


# ---------------------------------------------------------------------------
# convolution form


# The integral's alarm can land inside hypothesis's garbage-collection callback, where
# Python reports the exception as unraisable; the alarm fires again 50 ms later.
@pytest.mark.filterwarnings("ignore::pytest.PytestUnraisableExceptionWarning")
def test_convolution_for_a_rational_input_matches_scipy():
    quick = replace(DEFAULT_SETTINGS, integrate_seconds=1.0)
    f = [0, 1 / (1 + t**2)]
    sol = derive.solve([[0, 1], [-2, -3]], f, t=t, x0=[1, 0], settings=quick)
    assert sol.verification.ok and sol.verification.numeric is not None and sol.verification.numeric.ok
    conv = [s for s in sol.steps if isinstance(s, ConvolutionStep)]
    assert len(conv) == 2 and all(s.integrals for s in conv)
    ref = solve_ivp(lambda tt, y: np.array([[0, 1], [-2, -3]]) @ y + np.array([0, 1 / (1 + tt**2)]),
                    (0, 3), [1, 0], rtol=1e-12, atol=1e-14, dense_output=True)
    fn = numeric_solution(list(sol.x), t)
    for tt in (0.5, 1.5, 3.0):
        assert np.allclose(fn(tt), ref.sol(tt), atol=1e-8)


def test_convolution_keeps_a_closed_form_when_sympy_finds_one():
    sol = derive.solve([[0, 1], [0, 0]], [0, 1 / (1 + t)], t=t, x0=[0, 0])
    assert not sol.x.has(sp.Integral)
    assert sp.simplify(sol.x[1] - sp.log(1 + t)) == 0


def test_unspecified_input_u_of_t_through_the_python_interface():
    u = sp.Function("u")
    sol = derive.solve([[0, 1], [-2, -3]], [0, u(t)], t=t, x0=[1, 0])
    assert sol.verification.residual_zero and sol.verification.numeric is None
    assert any("unspecified function" in n for n in sol.verification.notes)
    # put u = e^{-3t} in and compare with the closed-form path for that input
    s = sp.Symbol("s", real=True)
    filled = sol.x.replace(u, sp.Lambda(s, sp.exp(-3 * s))).doit()
    direct = derive.solve([[0, 1], [-2, -3]], [0, sp.exp(-3 * t)], t=t, x0=[1, 0])
    assert all(sp.simplify(a - b) == 0 for a, b in zip(filled, direct.x))


def test_convolution_with_complex_eigenvalues_is_real_and_honours_t0():
    quick = replace(DEFAULT_SETTINGS, integrate_seconds=1.0)
    u = sp.Function("u")
    sol = derive.solve([[0, 1], [-5, -2]], [0, u(t)], t=t, x0=[1, 0], t0=1, settings=quick)
    assert not any(e.has(sp.I) for e in sol.x)
    assert sol.verification.ok and sol.verification.initial_ok


def test_hard_integral_is_kept_and_checked_by_quadrature():
    quick = replace(DEFAULT_SETTINGS, integrate_seconds=0.5)
    sol = derive.solve([[-1]], [sp.exp(-t**2) * sp.cos(t)], t=t, x0=[0], settings=quick)
    assert sol.verification.ok and sol.verification.numeric.ok


def test_integral_limit_leaves_the_case_limit_running():
    with time_limit(50):
        derive.solve([[-1]], [1 / (1 + t**2)], t=t, x0=[0])
        remaining, _ = signal.getitimer(signal.ITIMER_REAL)
        assert 0 < remaining <= 50


# ---------------------------------------------------------------------------
# steady state


def test_steady_state_for_constant_input_is_minus_A_inverse_f():
    A = sp.Matrix([[-1, 1], [0, -2]])
    sol = derive.solve(A, [3, 4], t=t, x0=[0, 0])
    (ss,) = [s for s in sol.steps if isinstance(s, SteadyStateStep)]
    assert ss.x_ss == -A.inv() * sp.Matrix([3, 4])
    assert ss.residual_zero and ss.stability == "exact"
    assert all(sp.limit(e, t, sp.oo) == 0 for e in ss.transient)


def test_steady_state_amplitude_and_phase_match_numpy_phasor():
    A = [[0, 1], [-4, -1]]
    sol = derive.solve(A, [0, 2 * sp.cos(3 * t) + sp.sin(3 * t)], t=t, x0=[0, 0])
    (ss,) = [s for s in sol.steps if isinstance(s, SteadyStateStep)]
    F = np.array([0, 2 - 1j])  # 2 cos + sin = Re((2 - i) e^{3 i t})
    X = np.linalg.solve(3j * np.eye(2) - np.array(A, dtype=float), F)
    assert [float(a) for a in ss.amplitude] == pytest.approx(list(np.abs(X)), rel=1e-12)
    assert [float(p) for p in ss.phase] == pytest.approx(list(np.angle(X)), rel=1e-12)


def test_steady_state_of_a_step_input_is_shown_for_the_last_interval():
    sol = derive.solve([[0, 1], [-2, -3]], [0, 6 * sp.Heaviside(t - 1)], t=t, x0=[0, 0])
    (ss,) = [s for s in sol.steps if isinstance(s, SteadyStateStep)]
    assert ss.since == 1 and list(ss.x_ss) == [3, 0]


def test_no_steady_state_for_an_unstable_or_marginal_system():
    for A in ([[1, 0], [0, -1]], [[0, 1], [-1, 0]]):
        sol = derive.solve(A, [1, 1], t=t, x0=[0, 0])
        assert not any(isinstance(s, SteadyStateStep) for s in sol.steps)


# ---------------------------------------------------------------------------
# case file, and what is refused


PULSE_CASE = """
[sheet]
title = "Two coupled tanks, pump run in two pulses"
[system]
states = ["h1", "h2"]
matrix = [[-1, 0], [1, -2]]
forcing = [{ piecewise = [[0, "1"], [4, "3"], [0, "5"], [4, 7], [0]] }, 0]
[initial]
values = [0, 0]
"""


def test_case_file_piecewise_forcing_solves_per_interval_and_renders():
    case = derive.loads_case(PULSE_CASE, name="pulses")
    assert case.system.f[0] == sp.Piecewise((0, case.system.t < 1), (4, case.system.t < 3), (0, case.system.t < 5),
                                            (4, case.system.t < 7), (0, True))
    sol = derive.solve_case(case)
    assert sol.verification.ok
    assert len([s for s in sol.steps if isinstance(s, IntervalStep)]) == 5
    text = render(sol, "text")
    tex = render(sol, "latex")
    for k in range(1, 6):
        assert f"Interval {k}" in text and f"Interval {k}" in tex
    assert "continuity" in text


@pytest.mark.parametrize(
    "entry,key,words",
    [
        ('{ piecewise = [[0, "2"], [5]] , other = 1 }', "system.forcing[0].other", "unknown key"),
        ('{ piecewise = [[0, "2"], [5, "1"], [0]] }', "system.forcing[0].piecewise[1]", "must increase"),
        ('{ piecewise = [[0], [5]] }', "system.forcing[0].piecewise[0]", "expected [value, end]"),
        ('{ piecewise = [[0, "t"], [5]] }', "system.forcing[0].piecewise[0]", "depends on t"),
        ('{ pieces = [[0]] }', "system.forcing[0].pieces", "unknown key"),
    ],
)
def test_case_file_piecewise_errors_name_the_key(entry, key, words):
    text = f"[system]\nmatrix = [[-1]]\nforcing = [{entry}]\n"
    with pytest.raises(CaseFileError) as err:
        derive.loads_case(text, name="bad", source="bad.toml")
    assert err.value.key == key and words in err.value.message and err.value.file == "bad.toml"


def test_piecewise_from_intervals_checks_its_shape():
    with pytest.raises(InputError, match="no end"):
        forcing.piecewise_from_intervals([(0, None), (1, None)], t)
    with pytest.raises(InputError, match="at least one"):
        forcing.piecewise_from_intervals([], t)


@pytest.mark.parametrize(
    "f,err,words",
    [
        ([sp.Heaviside(t**2 - 1)], UnsupportedError, "not linear"),
        ([sp.Heaviside(t - sp.Symbol("a", real=True)) - sp.Heaviside(t - sp.Symbol("b", real=True))], UnsupportedError, "cannot be decided"),
        ([sp.DiracDelta(t - 1, 1)], UnsupportedError, "derivative of an impulse"),
        ([sum(sp.Heaviside(t - k) for k in range(1, 80))], LimitError, "intervals"),
    ],
)
def test_refused_inputs_say_why(f, err, words):
    with pytest.raises(err, match=words):
        derive.solve([[-1]], f, t=t, x0=[0])


def test_switching_times_and_resolution():
    f = [sp.Heaviside(3 - t) + sp.DiracDelta(2 * t - 4), sp.Piecewise((1, t < 1), (t, True))]
    assert forcing.switching_times(f, t) == (1, 2, 3)
    assert forcing.resolve_on(f[0], t, sp.Rational(5, 2)) == 1
    assert forcing.resolve_on(f[0], t, sp.Integer(4)) == 0
    assert forcing.resolve_on(f[1], t, sp.Integer(2)) == t
    assert list(forcing.impulse_weight(f, t, sp.Integer(2))) == [sp.Rational(1, 2), 0]


# ---------------------------------------------------------------------------
# expoly.to_expoly: the direct reading against the rewrite-and-expand route

_x_args = st.sampled_from([sp.Symbol("t"), 2 * sp.Symbol("t"), -sp.Symbol("t") / 3, sp.Symbol("t") + 1, sp.sqrt(2) * sp.Symbol("t") - sp.Rational(1, 2), sp.Symbol("w", positive=True) * sp.Symbol("t")])
_x_funcs = st.sampled_from([sp.exp, sp.sin, sp.cos, sp.sinh, sp.cosh, lambda u: u, lambda u: u**2])
_x_coeffs = st.sampled_from([sp.Integer(1), sp.Integer(-4), sp.Rational(3, 7), sp.sqrt(3), sp.I, sp.Symbol("k")])


@st.composite
def _forcing_expr(draw):
    terms = []
    for _ in range(draw(st.integers(1, 3))):
        factors = [draw(_x_coeffs)] + [draw(_x_funcs)(draw(_x_args)) for _ in range(draw(st.integers(1, 2)))]
        terms.append(sp.Mul(*factors))
    e = sp.Add(*terms)
    return e**2 if draw(st.booleans()) and sp.count_ops(e) < 12 else e


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(_forcing_expr())
def test_direct_reading_of_a_forcing_matches_the_rewrite_route(e):
    """to_expoly reads sums and products of polynomials, exponentials, sinusoids and
    hyperbolic functions off the tree; the rewrite-and-expand route is the reference,
    and sympy's rewrite(exp) of the input the independent check of both."""
    from derive.expoly import _via_rewrite, to_expoly

    T = sp.Symbol("t")
    got = to_expoly(e, T)
    assert got.terms == _via_rewrite(e, T).terms
    assert sp.expand(sp.expand(got.to_expr(T) - e.rewrite(sp.exp), power_exp=True)) == 0
