"""The solving package: one stage list, forcing methods behind one contract, one assembly.

Regression tests for the crash classes of the old two-route layout (indexed
eigenvalues on the switched and convolution routes, a complex state handed
across a switch, an integral limit without its repeat), and for what the
assembly now does once for every method: errors built with what they carry,
relations as an enum, the decomposition's own check reported, settings
passed in.  Independent references are named beside each check.
"""

from __future__ import annotations

import signal
import time
from dataclasses import replace

import numpy as np
import pytest
import sympy as sp
from scipy.integrate import solve_ivp

import derive
from derive.errors import LimitError, VerificationError
from derive.limits import REPEAT, LimitExpired, inner_limit, time_limit
from derive.model import Relation
from derive.settings import DEFAULT_SETTINGS
from derive.solving.methods import METHODS, ForcingMethod, Problem, choose_method
from derive.solving.system import build_system
from derive.spectral import decompose
from derive.verify.pieces import numeric_solution

t = sp.Symbol("t")

def _scipy_reference(A, f_num, x0, t0, t1, *, max_step=np.inf):
    """x(t) on [t0, t1] by scipy's solve_ivp (DOP853), the independent reference."""
    M = np.array(A, dtype=float)
    return solve_ivp(lambda tt, y: M @ y + f_num(tt), (t0, t1), np.array(x0, dtype=float), method="DOP853",
                     rtol=1e-11, atol=1e-13, dense_output=True, max_step=max_step)


# ---------------------------------------------------------------------------
# registry and stage list


def test_methods_are_asked_in_registry_order():
    names = [m.name for m in METHODS]
    assert names == ["closed form", "switched", "convolution"]
    for f, expected in (([sp.exp(-t)], "closed form"), ([sp.Heaviside(t - 1)], "switched"),
                        ([1 / (1 + t**2)], "convolution")):
        system, _ = build_system([[-1]], f, t=t, x0=[0])
        assert choose_method(Problem.of(system, decompose(system.A))).name == expected


def test_a_new_method_is_one_class_in_the_registry():
    class Refuses(ForcingMethod):
        name = "never"

        def accepts(self, problem):
            return False

    system, _ = build_system([[-1]], [sp.exp(-t)], t=t, x0=[0])
    problem = Problem.of(system, decompose(system.A))
    assert choose_method(problem, (Refuses(), *METHODS)).name == "closed form"


# ---------------------------------------------------------------------------
# indexed eigenvalues on every route (they crashed with a NameError off the closed form)


@pytest.mark.slow
def test_complex_indexed_roots_on_the_switched_route():
    """lam^4 + lam + 1 has two complex pairs whose radical form exceeds the size limit, so
    they stay indexed roots; a step at t0 = 1 sends them down the switched route, whose
    numeric run crashed (a NameError on CRootOf, then a complex state made a float)."""
    A = [[0, 1, 0, 0], [0, 0, 1, 0], [0, 0, 0, 1], [-1, -1, 0, 0]]
    sol = derive.solve(A, [0, 0, 0, sp.Heaviside(t - 1)], t=t, t0=1)
    assert any(e.has(sp.CRootOf) and e.is_real is False for e in sol.eigenvalues)
    ver = sol.verification
    assert ver.ok and ver.numeric is not None and ver.numeric.ok
    # scipy's solve_ivp from the solution's own value at t0 (constants at the sample values
    # the check uses) must follow it: the decimals of the roots went in, and a real result came out
    from derive.verify import sample_constants

    consts = sample_constants(sol.constants)
    x_num = [sp.re(e.xreplace(consts).xreplace({r: r.evalf(40) for r in e.atoms(sp.CRootOf)})) for e in sol.x]
    fn = numeric_solution(x_num, t)
    ref = _scipy_reference(A, lambda tt: np.array([0, 0, 0, 1.0]), np.real(fn(1.0)), 1, 3)
    for tt in (1.5, 2.0, 3.0):
        assert np.allclose(np.real(fn(tt)), ref.sol(tt), rtol=1e-7, atol=1e-9)


# ---------------------------------------------------------------------------
# the time limit of the convolution integrals


def test_an_inner_limit_fires_again_after_it_is_swallowed():
    swallowed = 0
    with pytest.raises(LimitExpired):
        with inner_limit(0.05):
            deadline = time.monotonic() + 10
            while time.monotonic() < deadline:
                try:
                    sum(range(1000))
                except LimitExpired:
                    if swallowed:
                        raise
                    swallowed += 1  # a broad handler inside sympy would do this
    assert swallowed == 1


def test_an_inner_limit_restores_the_case_limit_with_its_repeat():
    with time_limit(50):
        with inner_limit(0.5) as armed:
            assert armed
        remaining, interval = signal.getitimer(signal.ITIMER_REAL)
        assert 0 < remaining <= 50
        assert interval == pytest.approx(REPEAT)


# ---------------------------------------------------------------------------
# settings passed in


def test_no_integration_budget_keeps_the_integral_and_checks_it_by_quadrature():
    none = replace(DEFAULT_SETTINGS, integrate_budget=0.0)
    sol = derive.solve([[-1]], [1 / (1 + t)], t=t, x0=[0], settings=none)
    assert sol.x[0].has(sp.Integral)
    assert any("kept as definite integrals" in n for n in sol.notices)
    assert sol.verification.ok and sol.verification.numeric is not None


def test_the_interval_limit_comes_from_the_settings():
    f = [sp.Heaviside(t - 1) - sp.Heaviside(t - 2) + sp.Heaviside(t - 3)]
    assert derive.solve([[-1]], f, t=t, x0=[0]).ok
    with pytest.raises(LimitError, match="the limit is 3"):
        derive.solve([[-1]], f, t=t, x0=[0], settings=replace(DEFAULT_SETTINGS, max_intervals=3))


def test_the_radical_size_rule_comes_from_the_settings():
    A = sp.Matrix([[0, 1, 0], [0, 0, 1], [2, 0, 0]])  # lam^3 = 2: the real cube root has a short radical form
    assert not any(e.has(sp.CRootOf) for e in decompose(A).column_eigenvalues)
    strict = replace(DEFAULT_SETTINGS, radical_ops_limit=0)
    assert all(e.has(sp.CRootOf) for e in decompose(A, settings=strict).column_eigenvalues)


# ---------------------------------------------------------------------------
# what the assembly does once for every method


def test_the_free_response_of_a_switched_input_is_the_matrix_exponential():
    A = sp.Matrix([[0, 1], [-2, -3]])
    sol = derive.solve(A, [0, sp.Heaviside(t - 1)], t=t, x0=[1, 2])
    # sympy's Matrix.exp as the reference for e^{A t} x0
    free = (A * t).exp() * sp.Matrix([1, 2])
    assert all(sp.simplify(a - b) == 0 for a, b in zip(sol.homogeneous, free))


def test_conditions_carry_relations_as_an_enum():
    k1, k2 = sp.symbols("k1 k2", positive=True)
    sol = derive.solve([[-k1, 0], [k1, -k2]], [sp.Heaviside(t - 1), 0], t=t, x0=[0, 0])
    assert sol.conditions
    assert all(isinstance(c.relation, Relation) for c in sol.conditions)
    assert any(c.relation == "!= 0" and f"{c.relation}" == "!= 0" for c in sol.conditions)


def test_a_failed_decomposition_check_reaches_the_verification(monkeypatch):
    import derive.spectral as spectral

    real_to_matrix = spectral._to_matrix

    def slipped(M, fld, lam=None):
        out = real_to_matrix(M, fld, lam)
        if M.shape[0] < 2 and M.shape[1] == 2:  # a left row of P^-1
            out = out + sp.ImmutableMatrix(M.shape[0], M.shape[1], lambda i, j: 1 if (i, j) == (0, 0) else 0)
        return out

    monkeypatch.setattr(spectral, "_to_matrix", slipped)
    with pytest.raises(VerificationError, match="P D P\\^-1 differs from A") as info:
        derive.solve([[0, 1], [-2, -3]], [sp.Heaviside(t - 1), 0], t=t, x0=[1, 0])
    bad = info.value.solution
    assert bad is not None and bad.verification.similarity_ok is False and not bad.ok


def test_the_verification_error_carries_the_relations_of_the_case(monkeypatch):
    import derive.spectral as spectral

    real_to_matrix = spectral._to_matrix

    def slipped(M, fld, lam=None):
        out = real_to_matrix(M, fld, lam)
        if M.shape[0] < 2 and M.shape[1] == 2:
            out = out + sp.ImmutableMatrix(M.shape[0], M.shape[1], lambda i, j: 1 if (i, j) == (0, 0) else 0)
        return out

    k, m = sp.symbols("k m", positive=True)
    monkeypatch.setattr(spectral, "_to_matrix", slipped)
    with pytest.raises(VerificationError) as info:
        derive.solve([[0, 1], [-k / m, -3]], [0, 1], t=t, x0=[0, 0], assume=["k = 2*m"])
    assert any(c.relation == Relation.ZERO for c in info.value.solution.conditions)


@pytest.mark.parametrize(
    "f, name",
    [
        ([0, sp.exp(-3 * t)], "closed form"),
        ([0, sp.Heaviside(t - 1) - sp.Heaviside(t - 2)], "switched"),
        ([0, 1 / (1 + t)], "convolution"),
    ],
)
def test_every_method_keeps_the_contract(f, name):
    """x = homogeneous + particular, the first step is the decoupling, x(t0) = x0."""
    from derive.solving.methods import Pieces
    from derive.steps import DecoupleStep

    system, _ = build_system([[0, 1], [-2, -3]], f, t=t, x0=[1, 0])
    problem = Problem.of(system, decompose(system.A), settings=replace(DEFAULT_SETTINGS, integrate_budget=0.0))
    method = choose_method(problem)
    assert method.name == name
    pieces = method.solve(problem)
    assert isinstance(pieces, Pieces) and isinstance(pieces.steps[0], DecoupleStep)
    assert pieces.constants == ()
    for tt in (sp.Rational(1, 2), sp.Rational(3, 2), sp.Rational(5, 2)):
        for a, h, p in zip(pieces.x, pieces.homogeneous, pieces.particular):
            gap = (a - h - p).subs(t, tt).evalf(30)
            assert abs(complex(gap)) < 1e-20
    assert [complex(e.subs(t, 0).evalf(30)) for e in pieces.x] == pytest.approx([1, 0], abs=1e-20)


def test_indexed_real_roots_on_the_switched_route():
    """lam^3 + 6 lam^2 + 9 lam + 1: irreducible over Q (no root among +-1) with discriminant
    81 > 0, three real roots that radicals could only write with complex cube roots
    (casus irreducibilis, common practice): they stay indexed roots."""
    A = [[0, 1, 0], [0, 0, 1], [-1, -9, -6]]
    sol = derive.solve(A, [0, 0, sp.Heaviside(t - 1)], t=t, t0=1)
    assert all(e.has(sp.CRootOf) for e in sol.eigenvalues)
    assert sol.verification.ok and sol.verification.numeric is not None and sol.verification.numeric.ok


@pytest.mark.slow
def test_convolution_with_complex_indexed_roots_stays_in_exponential_form():
    """The real part of a term with a complex indexed root has no closed form to write; taken
    anyway it was wrong (the numeric run differed by 160 %).  Integrals kept (no budget), the
    exact residual stays open with them, the numeric run by quadrature decides."""
    from derive.pipeline import solve_system

    A = [[0, 1, 0, 0], [0, 0, 1, 0], [0, 0, 0, 1], [-1, -1, 0, 0]]
    system, _ = build_system(A, [0, 0, 0, 1 / (1 + t)], t=t, t0=1)
    sol = solve_system(system, check=False, settings=replace(DEFAULT_SETTINGS, integrate_budget=0.0))
    assert not any(e.has(sp.re, sp.im) for e in sol.x)
    assert sol.verification.numeric is not None and sol.verification.numeric.ok


def test_values_on_a_condition_of_the_derivation_are_reported_not_crashed_on():
    # a spring-mass-damper whose given values are critically damped (c^2 = 4 k m): the
    # symbolic P^-1 has no value there; the solve must say so, not fail inside the check
    k, m, c = sp.symbols("k m c", positive=True)
    sol = derive.solve([[0, 1], [-k / m, -c / m]], x0=[1, 0], params={k: 1, m: 1, c: 2})
    assert sol.verification.ok
    assert any("discriminant" in n and "is 0" in n for n in sol.notices)
    # the symbolic result is the general one; its limit at the given values is the
    # critically damped response (1 + t) e^{-t} (common practice: repeated root, x(0) = 1, x'(0) = 0)
    at_values = sp.limit(sol.x[0].subs({k: 1, m: 1}), c, 2)
    t = sol.t
    assert sp.simplify(at_values - (1 + t) * sp.exp(-t)) == 0


def test_the_forced_part_of_an_interval_is_the_grouped_difference():
    from derive.solving.methods.intervals import difference, group_terms, grouping

    e1 = sp.exp(-1)
    a = (2 * e1 - 1) * sp.exp(1 - t) + (sp.Rational(1, 2) - sp.exp(-2)) * sp.exp(2 - 2 * t) + sp.Rational(1, 2)
    cases = [
        (a, 2 * sp.exp(-t) - sp.exp(-2 * t)),  # no factor in common
        (a, 3 * sp.exp(1 - t) - sp.Rational(1, 2)),  # factors in common, one cancelling
        (a, a - sp.exp(1 - t)),  # all but one group cancel
        (t * sp.exp(-t) + sp.exp(-t), 2 * t * sp.exp(-t)),  # powers of t
    ]
    for x, free in cases:
        grouped_x, grouped_free = grouping(x, t), grouping(free, t)
        assert difference(grouped_x, grouped_free, t) == group_terms(grouped_x.expr - grouped_free.expr, t)
        # and it is x - free
        assert sp.expand(difference(grouped_x, grouped_free, t) - (x - free)) == 0


def test_a_switched_solve_on_numbers_matches_scipy_across_the_switches():
    A = [[0, 1], [-2, -3]]
    sol = derive.solve(A, [0, sp.Heaviside(t - 1) - sp.Heaviside(t - 2)], t=t, x0=[1, 0])
    assert sol.ok
    # the pulse integrated by scipy's solve_ivp (DOP853), restarted at each switch (common practice)
    xs = [0.5, 1.5, 3.0]
    state, t_prev, ref = np.array([1.0, 0.0]), 0.0, []
    for lo, hi, u in ((0.0, 1.0, 0.0), (1.0, 2.0, 1.0), (2.0, 3.0, 0.0)):
        run = solve_ivp(lambda _s, y, u=u: [y[1], -2 * y[0] - 3 * y[1] + u], (lo, hi), state,
                        method="DOP853", rtol=1e-12, atol=1e-14, dense_output=True)
        ref += [run.sol(x) for x in xs if lo <= x <= hi]
        state = run.y[:, -1]
    for x, r in zip(xs, ref):
        got = [float(c.subs(t, x)) for c in sol.x]
        assert np.allclose(got, r, rtol=1e-9, atol=1e-12)
    # x = homogeneous + particular on every interval
    for x in xs:
        assert all(abs(float((a - h - p).subs(t, x))) < 1e-12 for a, h, p in zip(sol.x, sol.homogeneous, sol.particular))
