"""The engineering reading (derive.reading) against values from outside the project.

Each check names its source beside it.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
import sympy as sp
from scipy.integrate import solve_ivp

import derive
from derive.errors import InputError
from derive.reading import Stability, envelope, hurwitz_determinants, response, samples, sensitivity

t = sp.Symbol("t")
k, m, c = sp.symbols("k m c", positive=True)
tau = sp.Symbol("tau", positive=True)


def _spring(values: dict | None = None, **kw):
    return derive.solve([[0, 1], [-k / m, -c / m]], t=t, params=values, **kw)


# ---------------------------------------------------------------------------
# modes


def test_spring_mass_damper_modes_at_values():
    # zeta = c/(2 sqrt(k m)), omega_n = sqrt(k/m): K. Ogata, Modern Control Engineering, 5th ed., section 5-3 (from memory)
    vals = {k: 18, m: 2, c: 4}
    r = response(_spring(vals, x0=[1, 0]))
    (mode,) = r.modes
    assert mode.is_pair and mode.dominant
    assert mode.damping_ratio == sp.Rational(1, 3)  # 4/(2*sqrt(36))
    assert mode.natural_frequency == 3  # sqrt(18/2)
    assert sp.simplify(mode.damped_frequency - 3 * sp.sqrt(1 - sp.Rational(1, 9))) == 0
    assert mode.time_constant == 1  # 1/(zeta*omega_n)


def test_spring_mass_damper_modes_symbolic():
    # the same formulas with the parameters left as symbols (Ogata, section 5-3, from memory)
    r = response(_spring(x0=[1, 0]))
    (mode,) = r.modes
    assert sp.simplify(mode.damping_ratio - c / (2 * sp.sqrt(k * m))) == 0
    assert sp.simplify(mode.natural_frequency - sp.sqrt(k / m)) == 0
    assert r.stability == "asymptotically stable"  # positive k, m, c
    assert r.states == {} and r.span is None


def test_overdamped_modes_are_two_real_modes_with_the_slowest_marked():
    r = response(derive.solve([[0, 1], [-2, -3]], t=t, x0=[1, 0]))
    assert sorted(m.eigenvalue for m in r.modes) == [-2, -1]
    slow = r.dominant
    assert slow is not None and slow.eigenvalue == -1 and slow.time_constant == 1
    assert slow.damping_ratio == 1 and slow.damped_frequency == 0
    # eigenvector of -1 for [[0,1],[-2,-3]] is (1, -1): direct substitution
    assert slow.shape == (1, -1)


# ---------------------------------------------------------------------------
# step-response figures


def _lag(step_tau):
    return derive.solve([[-1 / tau]], [1 / tau], t=t, x0=[0], params={tau: step_tau})


def test_first_order_lag_settling_and_rise():
    # 2 % settling time tau ln 50 and 10-90 % rise time tau ln 9 of 1 - exp(-t/tau):
    # solve 1 - exp(-t/tau) = level (Ogata, section 5-2, from memory)
    r = response(_lag(sp.Rational(3, 2)))
    s = r.states["x_1"]
    assert s.final_value == pytest.approx(1.0) and s.exact_final_value == 1
    assert s.settling_time == pytest.approx(1.5 * math.log(50), rel=1e-10)
    assert s.rise_time == pytest.approx(1.5 * math.log(9), rel=1e-10)
    assert s.peak is None and s.overshoot is None  # approaches 1 without passing it


def test_underdamped_step_overshoot_and_peak_time():
    # overshoot exp(-zeta pi/sqrt(1 - zeta^2)), peak time pi/omega_d of the unit step response of
    # x'' + 2 zeta w x' + w^2 x = w^2 u (Ogata, section 5-3, from memory)
    zeta, w = sp.Rational(1, 5), sp.Integer(2)
    sol = derive.solve([[0, 1], [-(w**2), -2 * zeta * w]], [0, w**2], t=t, x0=[0, 0])
    s = response(sol).states["x_1"]
    z, wd = float(zeta), float(w) * math.sqrt(1 - float(zeta) ** 2)
    assert s.final_value == pytest.approx(1.0)
    assert s.overshoot == pytest.approx(math.exp(-z * math.pi / math.sqrt(1 - z * z)), rel=1e-9)
    assert s.peak[0] == pytest.approx(math.pi / wd, rel=1e-9)
    assert s.peak[1] == pytest.approx(1 + s.overshoot, rel=1e-12)
    # the 2 % band is left for the last time before the envelope bound 4/(zeta w) (Ogata's rule of thumb)
    assert 0 < s.settling_time < 4 / (z * float(w))


def test_undamped_and_unstable_states_have_no_final_value():
    free = response(derive.solve([[0, 1], [-4, 0]], t=t, x0=[1, 0])).states["x_1"]
    assert free.final_value is None and free.settling_time is None and free.rise_time is None
    # cos(2t) from 1 swings to -1 at t = pi/2 (direct)
    assert free.peak[0] == pytest.approx(math.pi / 2, rel=1e-9) and free.peak[1] == pytest.approx(-1.0)
    grow = response(derive.solve([[1]], t=t, x0=[1])).states["x_1"]
    assert grow.final_value is None and grow.peak is None
    ramp = response(derive.solve([[0]], [1], t=t, x0=[0])).states["x_1"]
    assert ramp.final_value is None  # a ramp does not settle


def test_switched_input_final_value_after_the_last_switch():
    # a pulse of height 1 on [1, 2) into x' = -x: back to 0, peak at the end of the pulse (direct)
    sol = derive.solve([[-1]], [sp.Heaviside(t - 1) - sp.Heaviside(t - 2)], t=t, x0=[0])
    s = response(sol).states["x_1"]
    assert s.final_value == 0.0
    assert s.peak[0] == pytest.approx(2.0) and s.peak[1] == pytest.approx(1 - math.exp(-1), rel=1e-9)


# ---------------------------------------------------------------------------
# stability on spectra built by construction: A = S J S^-1 with an integer S of determinant 1


S3 = sp.Matrix([[1, 2, 0], [0, 1, 1], [1, 2, 1]])
S4 = sp.Matrix([[1, 1, 0, 0], [0, 1, 1, 0], [0, 0, 1, 1], [1, 0, 0, 2]])


def _built(S, J):
    assert abs(S.det()) == 1
    return derive.solve(S * J * S.inv(), t=t)


@pytest.mark.parametrize(
    "J, expected",
    [
        (sp.diag(-1, -2, -3), Stability.ASYMPTOTIC),
        (sp.diag(sp.Matrix([[-1, 3], [-3, -1]]), -2), Stability.ASYMPTOTIC),
        (sp.diag(sp.Matrix([[0, 2], [-2, 0]]), -1), Stability.MARGINAL),  # simple pair +-2i
        (sp.diag(0, -1, -2), Stability.MARGINAL),  # simple zero
        (sp.diag(0, 0, -2), Stability.MARGINAL),  # zero twice, semisimple
        (sp.diag(sp.Matrix([[0, 1], [0, 0]]), -1), Stability.UNSTABLE),  # defective zero
        (sp.diag(1, -1, -2), Stability.UNSTABLE),
    ],
)
def test_stability_classes_by_construction(J, expected):
    # the classes from the eigenvalues and the Jordan structure (common practice; e.g. C.-T. Chen,
    # Linear System Theory and Design, 3rd ed., section 5.3, from memory)
    r = response(_built(S3, J))
    assert r.stability == expected and r.stability is expected
    assert r.reason


def test_defective_pair_on_the_imaginary_axis_is_unstable_and_a_simple_one_is_not():
    # real Jordan form of +-2i with a block of size 2 (t*cos(2t) grows) against two separate pairs
    defective = sp.Matrix([[0, 2, 1, 0], [-2, 0, 0, 1], [0, 0, 0, 2], [0, 0, -2, 0]])
    simple = sp.diag(sp.Matrix([[0, 2], [-2, 0]]), sp.Matrix([[0, 1], [-1, 0]]))
    r_def = response(_built(S4, defective))
    r_simple = response(_built(S4, simple))
    assert r_def.stability is Stability.UNSTABLE and "defective" in r_def.reason
    assert r_simple.stability is Stability.MARGINAL


def test_symbolic_stability_gives_hurwitz_conditions():
    # Hurwitz determinants of s^2 + c s + k are c and c*k (A. Hurwitz's criterion; common practice)
    a, b = sp.symbols("a b", real=True)
    assert hurwitz_determinants(sp.Matrix([[0, 1], [-b, -a]])) == (a, a * b)
    r = response(derive.solve([[0, 1], [-b, -a]], t=t))
    assert r.stability is Stability.UNDECIDED
    conds = dict(r.conditions)
    assert set(conds[Stability.ASYMPTOTIC]) == {a > 0, a * b > 0}


def test_values_decide_a_symbolic_spectrum():
    sol = derive.solve([[0, 1], [-k / m, -c / m]], t=t)
    assert response(sol, values={k: 1, m: 1, c: 1}).stability is Stability.ASYMPTOTIC
    sol2 = derive.solve([[sp.Symbol("g", real=True)]], t=t)
    assert response(sol2, values={"g": 0}).stability is Stability.MARGINAL
    assert response(sol2, values={"g": 2}).stability is Stability.UNSTABLE


# ---------------------------------------------------------------------------
# sinusoidal input


def test_first_order_lag_sinusoidal_amplitude_and_phase():
    # tau x' = -x + sin(w t): amplitude 1/sqrt(1 + (w tau)^2), phase -atan(w tau)
    # (Ogata, section 8-2, frequency response of a first-order system, from memory)
    w = 3
    symbolic = response(derive.solve([[-1 / tau]], [sp.sin(w * t) / tau], t=t, x0=[0])).sinusoidal["x_1"]
    assert symbolic.frequency == 3 and symbolic.offset == 0
    assert sp.simplify(symbolic.amplitude - 1 / sp.sqrt(1 + (w * tau) ** 2)) == 0
    for value in (sp.Rational(1, 2), sp.Integer(4)):
        assert float(symbolic.phase.subs(tau, value)) == pytest.approx(-math.atan(w * value), abs=1e-14)
    sol = derive.solve([[-1 / tau]], [sp.sin(w * t) / tau], t=t, x0=[0], params={tau: sp.Rational(1, 2)})
    at_value = response(sol).sinusoidal["x_1"]
    assert at_value.amplitude == 1 / sp.sqrt(1 + sp.Rational(3, 2) ** 2)
    assert abs(sp.N(at_value.phase + sp.atan(sp.Rational(3, 2)), 50)) < 1e-45  # atan(2/3) - pi/2 = -atan(3/2)
    assert response(derive.solve([[-1]], [sp.exp(-t)], t=t)).sinusoidal is None


# ---------------------------------------------------------------------------
# sampled data


def test_samples_equal_the_exact_solution_and_an_independent_integration():
    A = [[0, 1], [-5, -2]]
    f = [0, sp.Heaviside(t - 1)]
    sol = derive.solve(A, f, t=t, x0=[1, 0])
    got = samples(sol, points=60, span=6.0)
    times, values = got
    assert got.switches == (1.0,) and got.impulses == ()
    assert 1.0 in times
    for i in range(0, len(times), 7):  # exact solution at the sampled times (sympy, 30 digits)
        exact = [float(e.subs(t, sp.Float(times[i], 30)).evalf(30)) for e in sol.x]
        assert values["x_1"][i] == pytest.approx(exact[0], abs=1e-12)
        assert values["x_2"][i] == pytest.approx(exact[1], abs=1e-12)
    # scipy.integrate.solve_ivp (LSODA), integrated independently across the switch
    rhs = lambda s, y: [y[1], -5 * y[0] - 2 * y[1] + (1.0 if s >= 1 else 0.0)]  # noqa: E731
    first = solve_ivp(rhs, (0, 1), [1, 0], rtol=1e-11, atol=1e-13, dense_output=True, method="LSODA")
    second = solve_ivp(rhs, (1, 6), first.y[:, -1], rtol=1e-11, atol=1e-13, dense_output=True, method="LSODA")
    for s, v1 in zip(times, values["x_1"]):
        ref = (first if s <= 1 else second).sol(s)[0]
        assert v1 == pytest.approx(ref, abs=1e-8)


def test_samples_mark_an_impulse_with_the_jump():
    sol = derive.solve([[-1]], [2 * sp.DiracDelta(t - 1)], t=t, x0=[0])
    got = samples(sol, points=11, span=2.0)
    assert got.impulses == (1.0,)
    at = np.nonzero(got.times == 1.0)[0]
    assert len(at) == 2
    before, after = got.values["x_1"][at]
    assert before == pytest.approx(0.0, abs=1e-9) and after == pytest.approx(2.0)  # jump by the weight 2


def test_samples_refuse_what_cannot_be_sampled():
    with pytest.raises(InputError, match="need values"):
        samples(derive.solve([[-k]], t=t, x0=[1]))
    with pytest.raises(InputError, match="not a state"):
        samples(derive.solve([[-1]], t=t, x0=[1]), ["y"])


# ---------------------------------------------------------------------------
# sensitivities and the tolerance band


def test_sensitivity_against_a_central_difference_of_two_solves():
    # central difference (x(k + h) - x(k - h))/(2h), error O(h^2) (common practice)
    vals = {k: 4, m: 1, c: 1}
    sol = _spring(vals, x0=[1, 0])
    dk = sensitivity(sol, "k")
    h = sp.Rational(1, 10**5)
    up = derive.solve([[0, 1], [-(4 + h), -1]], t=t, x0=[1, 0]).x
    down = derive.solve([[0, 1], [-(4 - h), -1]], t=t, x0=[1, 0]).x
    for when in (sp.Rational(1, 2), sp.Integer(2), sp.Integer(5)):
        exact = dk.subs(vals).subs(t, when)
        diff = (up - down).subs(t, when) / (2 * h)
        for e, d in zip(exact, diff):
            assert complex(sp.N(e, 20)).real == pytest.approx(complex(sp.N(d, 20)).real, rel=1e-8, abs=1e-10)


def test_sensitivity_refuses_an_unknown_parameter():
    with pytest.raises(InputError, match="not a parameter"):
        sensitivity(_spring({k: 4, m: 1, c: 1}, x0=[1, 0]), "q")


def test_envelope_holds_every_corner_solved_again():
    vals = {k: 4, m: 1, c: 1}
    sol = _spring(vals, x0=[1, 0])
    band = envelope(sol, {k: sp.Rational(5, 100), "c": sp.Rational(1, 10)}, span=6.0, points=25)
    assert band.corners == 4
    assert np.all(band.lower["x_1"] <= band.nominal["x_1"]) and np.all(band.nominal["x_1"] <= band.upper["x_1"])
    corners = [(kk, cc) for kk in (sp.Rational(19, 5), sp.Rational(21, 5)) for cc in (sp.Rational(9, 10), sp.Rational(11, 10))]
    lines = [derive.solve([[0, 1], [-kk, -cc]], t=t, x0=[1, 0]).x[0] for kk, cc in corners]
    for i in (3, 10, 17):
        at = [float(sp.N(line.subs(t, sp.Float(band.times[i], 30)))) for line in lines]
        assert band.lower["x_1"][i] == pytest.approx(min(at), abs=1e-12)
        assert band.upper["x_1"][i] == pytest.approx(max(at), abs=1e-12)


# ---------------------------------------------------------------------------
# values where the symbolic closed form is singular, a late start, a general solution


def test_critical_damping_values_read_the_system_as_it_is():
    # at c^2 = 4 k m the symbolic route divides by sqrt(c^2 - 4 k m); the reading solves again at the values.
    # Unit step of x'' + 2x' + x = 1 from rest: x = 1 - (1 + t) e^-t (direct substitution)
    sol = derive.solve([[0, 1], [-k / m, -c / m]], [0, 1 / m], t=t, x0=[0, 0])
    r = response(sol, values={k: 1, m: 1, c: 2})
    (mode,) = r.modes
    assert mode.eigenvalue == -1 and mode.multiplicity == 2 and mode.damping_ratio == 1
    s = r.states["x_1"]
    ts = s.settling_time
    assert (1 + ts) * math.exp(-ts) == pytest.approx(0.02, rel=1e-10)
    assert s.peak is None  # critically damped: no overshoot


def test_late_start_measures_durations_from_t0():
    # x' = -(x - 1) from x(2) = 3: |x - 1| = 2 e^-(t-2) reaches 2 % of 2 after ln 50 (direct)
    r = response(derive.solve([[-1]], [1], t=t, x0=[3], t0=2))
    assert r.states["x_1"].initial_value == 3.0
    assert r.states["x_1"].settling_time == pytest.approx(math.log(50), rel=1e-10)
    assert samples(derive.solve([[-1]], [1], t=t, x0=[3], t0=2), points=3, span=1.0).times.tolist() == [2.0, 2.5, 3.0]


def test_a_general_solution_has_modes_but_no_state_figures():
    r = response(derive.solve([[-1, 0], [0, -2]], t=t))
    assert r.states == {} and len(r.modes) == 2 and r.span == 5.0  # five of the slowest time constant, 1


@pytest.mark.parametrize("name", ["evaluation", "modes", "reading", "sensitivity", "sinusoid", "stability", "timeline", "records"])
def test_docstring_examples(name):
    import doctest
    import importlib

    module = importlib.import_module(f"derive.reading.{name}")
    result = doctest.testmod(module)
    assert result.attempted > 0 and result.failed == 0


def test_values_must_be_numbers_never_text():
    sol = derive.solve([[-k]], [1], t=t, x0=[0], params={k: 2})
    with pytest.raises(InputError, match="must be a number"):
        response(sol, values={k: "2"})
    with pytest.raises(InputError, match="not a parameter"):
        response(sol, values={"q": 1})


def test_complex_mode_shape_is_magnitudes_and_phases():
    # x1' = x2: the eigenvector of lambda is (1, lambda), so x2 moves |lambda| times as far as x1 and leads
    # it by arg(lambda) (direct substitution); here lambda = -1/2 + i sqrt(15)/2, |lambda| = 2
    r = response(derive.solve([[0, 1], [-4, -1]], t=t, x0=[1, 0]))
    (mode,) = r.modes
    lam = sp.Rational(-1, 2) + sp.I * sp.sqrt(15) / 2
    assert mode.eigenvalue == lam
    assert mode.shape == (sp.Rational(1, 2), 1)
    assert abs(sp.N(mode.phase[0] + sp.arg(lam), 40)) < 1e-35 and mode.phase[1] == 0
    assert samples(derive.solve([[0, 1], [-4, -1]], t=t, x0=[1, 0]), ["x_2"], points=5).values.keys() == {"x_2"}


def test_a_growing_mode_limits_the_figure_span_to_a_few_e_foldings():
    # eigenvalues 2 and -1/10 under an input of period 24: five slow time constants (50) or three
    # periods (72) would draw only e^{2t} near 1e60; three e-foldings of the growing mode, 1.5, show it
    from derive.reading import plot_span

    t = sp.Symbol("t")
    sol = derive.solve([[2, 0], [1, sp.Rational(-1, 10)]], [0, sp.sin(sp.pi * t / 12)], t=t, x0=[1, 0])
    assert plot_span(sol) == pytest.approx(1.5)
    # the numeric check runs longer (up to 30 e-foldings, repeating at high precision where growth amplifies round-off)
    assert sol.verification.numeric is not None and sol.verification.numeric.t_end == pytest.approx(15.0)
