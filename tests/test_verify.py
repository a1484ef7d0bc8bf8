"""The one verifier (derive.verify) and the one zero test (derive.verify.zero).

Every acceptance here is backed by a reference outside the program: mpmath's
own ODE solver and matrix exponential, sympy's ``Matrix.exp``, or a handbook
identity, named beside the check.
"""

from __future__ import annotations

import os
import random
from dataclasses import replace

import mpmath
import numpy as np
import pytest
import sympy as sp
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

import derive
from derive.exact import decide_zero
from derive.model import System
from derive.pipeline import build_system, solve_system
from derive.settings import DEFAULT_SETTINGS, ZeroPolicy
from derive.verify import PieceRecord, numeric_check, verify, verify_solution
from derive.verify.pieces import verify_pieces
from derive.verify.zero import decide, mp_value

t = sp.Symbol("t", real=True)


def _value_at(expr: sp.Expr, tt: str, extra: dict | None = None):
    """expr at t = tt with mpmath at 30 digits (integrals by quadrature)."""
    with mpmath.workdps(30):
        return mp_value(expr, {t: sp.Rational(tt), **(extra or {})})[0]


# ---------------------------------------------------------------------------
# The zero test


def test_an_integral_without_closed_form_is_decided_by_quadrature():
    """int_0^t e^{-s^2} ds = sqrt(pi)/2 erf(t) (Abramowitz and Stegun, Handbook of
    Mathematical Functions, 7.1.1, from memory): the exact route cannot see it, the
    numeric identity test with quadrature does, and says so."""
    s = sp.Symbol("s")
    lhs = sp.Integral(sp.exp(-s**2), (s, 0, t))
    v = decide(lhs - sp.sqrt(sp.pi) / 2 * sp.erf(t), t=t)
    assert v.zero and v.kind == "numeric" and "quadrature" in v.method
    wrong = decide(lhs - sp.sqrt(sp.pi) / 2 * sp.erf(t) * (1 + sp.Rational(1, 10**12)), t=t)
    assert not wrong.zero and wrong.kind == "numeric"


def test_an_unspecified_function_is_replaced_by_a_sample_function():
    """d/dt int_0^t e^{-(t-s)} u(s) ds = u(t) - int_0^t e^{-(t-s)} u(s) ds for any u
    (Leibniz's rule, common practice); a wrong sign is refused."""
    s = sp.Symbol("s")
    u = sp.Function("u")
    conv = sp.Integral(sp.exp(-(t - s)) * u(s), (s, 0, t))
    right = sp.exp(-t) * sp.Integral(sp.exp(s) * u(s), (s, 0, t))
    assert decide(conv - right, t=t).zero
    derivative = -right + u(t)  # what d/dt of right is, written out
    assert decide(derivative - (u(t) - conv), t=t).zero
    assert not decide(derivative - (u(t) + conv), t=t).zero


def test_points_on_both_sides_of_a_switch_catch_a_piecewise_error():
    """(t-1) H(t-1) - max(t-1, 0) is zero; with a slope of 1 + 1e-20 after the switch it
    is not, and a random point before the switch alone would miss that (common practice)."""
    ramp = (t - 1) * sp.Heaviside(t - 1)
    assert decide(ramp - sp.Piecewise((0, t < 1), (t - 1, True)), t=t).zero
    assert not decide(ramp * (1 + sp.Rational(1, 10**20)) - sp.Piecewise((0, t < 1), (t - 1, True)), t=t).zero


def test_the_policy_is_passed_in():
    """A record, not a module global: points and digits show in the method."""
    k = sp.Symbol("k", positive=True)
    z = sp.Symbol("z")
    root = sp.CRootOf(z**5 - z - 1, 0)  # an indexed root: no exact shortcut, the numeric test decides
    expr = k * (root**5 - root - 1)
    few = decide(expr, policy=ZeroPolicy(digits=40, points=2))
    assert few.zero and "40 digits" in few.method and "2 points" in few.method
    assert decide_zero(expr).zero  # the thin name over the same engine, default policy


def test_sympify_strict_never_receives_a_string():
    """The zero test and the ring check take sympy objects only (strict sympify refuses text)."""
    with pytest.raises(sp.SympifyError):
        decide_zero("x - x")  # type: ignore[arg-type]


# ---------------------------------------------------------------------------
# Two right answers that were refused


def test_symbolic_parameter_with_a_rational_input_is_accepted():
    """A = [[-k, 1], [0, -2]], f = (0, 1/(1+t^2)): the convolution integrals have no
    closed form.  The answer verifies with k symbolic and with k = 3, and at k = 3 it
    matches mpmath's Taylor-series ODE solver (mpmath.odefun) at t = 13/10."""
    k = sp.Symbol("k", positive=True)
    f = [0, 1 / (1 + t**2)]
    system, _ = build_system([[-k, 1], [0, -2]], f, t=t, x0=[1, 0], params=[k])
    sol = solve_system(system)
    assert sol.ok and sol.verification.residual_zero
    valued, _ = build_system([[-k, 1], [0, -2]], f, t=t, x0=[1, 0], params={k: 3})
    sol3 = solve_system(valued)
    assert sol3.ok and sol3.verification.numeric is not None and sol3.verification.numeric.ok
    with mpmath.workdps(30):
        ode = mpmath.odefun(lambda tt, y: [-3 * y[0] + y[1], -2 * y[1] + 1 / (1 + tt**2)], 0, [1, 0])
        ref = ode(mpmath.mpf(13) / 10)
        got = [mp_value(e.subs(k, 3), {t: sp.Rational(13, 10)})[0] for e in sol3.x]
        assert all(abs(g - r) < mpmath.mpf(10) ** -20 for g, r in zip(got, ref))


def test_an_undecided_residual_is_decided_numerically_and_says_so():
    """x' = -x + e^{-t^2}, x(0) = 0, answered as int_0^t e^{-(t-s)} e^{-s^2} ds: the residual
    holds two integrals that no exact step merges; the numeric identity test with
    quadrature decides, the verification says so in a note, and the value at t = 1
    matches mpmath's Taylor-series ODE solver (mpmath.odefun).  A wrong kernel is refused."""
    s = sp.Symbol("s", real=True)
    system, _ = build_system([[-1]], [sp.exp(-t**2)], t=t, x0=[0])
    x = sp.Matrix([sp.Integral(sp.exp(-(t - s)) * sp.exp(-s**2), (s, 0, t))])
    v = verify(system, x)
    assert v.ok and "quadrature" in v.residual_method
    assert any("decided zero by the numeric identity test" in note for note in v.notes)
    assert v.numeric is not None and v.numeric.ok
    with mpmath.workdps(30):
        ref = mpmath.odefun(lambda tt, y: -y + mpmath.exp(-tt**2), 0, 0)(1)
        assert abs(_value_at(x[0], "1") - ref) < mpmath.mpf(10) ** -20
    wrong = sp.Matrix([sp.Integral(sp.exp(-2 * (t - s)) * sp.exp(-s**2), (s, 0, t))])
    refused = verify(system, wrong)
    assert not refused.ok and not refused.residual_zero


def _eight_state():
    """8 states, eigenvalues -3, 2, 1 +- i, -1, -2 +- 3i, 1/4 (distinct, growing modes up to 2),
    behind a unimodular similarity that makes the eigenvectors ill-conditioned."""
    rng = random.Random(1)
    B = sp.diag(-3, 2, sp.Matrix([[1, 1], [-1, 1]]), -1, sp.Matrix([[-2, 3], [-3, -2]]), sp.Rational(1, 4))
    U = sp.eye(8)
    for i in range(8):
        for j in range(i + 1, 8):
            U[i, j] = rng.randint(-4, 4)
    L = sp.eye(8)
    for i in range(8):
        for j in range(i):
            L[i, j] = rng.randint(-2, 2)
    S = L * U
    return S * B * S.inv()


def test_general_solution_of_eight_states_with_growing_modes_is_accepted():
    """In double precision the numeric comparison of this right answer differs by more
    than the accepted gap (round-off amplified by e^{2 T} and the eigenvector
    condition); the check is repeated at 30 digits and passes.  Reference: x(T) =
    e^{A T} x(0) by mpmath's expm at 40 digits (mpmath.expm, Pade/Taylor), T = 2."""
    A = _eight_state()
    sol = derive.solve(A, t=t)
    num = sol.verification.numeric
    assert sol.ok and num is not None and num.ok
    assert "repeated at 30 digits" in num.method and num.max_rel_gap < 1e-15
    c = {s: sp.Rational(k + 1, 3) * (-1) ** k for k, s in enumerate(sol.constants)}
    with mpmath.workdps(40):
        M = mpmath.matrix([[mpmath.mpf(sp.Rational(e).p) / sp.Rational(e).q for e in row] for row in A.tolist()])
        x0 = mpmath.matrix([mp_value(e.xreplace(c), {t: sp.Integer(0)})[0] for e in sol.x])
        ref = mpmath.expm(M * 2) * x0
        got = [mp_value(e.xreplace(c), {t: sp.Integer(2)})[0] for e in sol.x]
        assert max(abs(g - r) for g, r in zip(got, ref)) < mpmath.mpf(10) ** -25 * max(1, mpmath.norm(ref))


# ---------------------------------------------------------------------------
# No false rejection on generated systems, and wrong answers still refused


def _unimodular(n: int, rng: random.Random) -> sp.Matrix:
    L, U = sp.eye(n), sp.eye(n)
    for i in range(n):
        for j in range(n):
            if j > i:
                U[i, j] = rng.randint(-2, 2)
            elif j < i:
                L[i, j] = rng.randint(-1, 1)
    return L * U


@st.composite
def generated(draw):
    """A = S B S^-1: B block-diagonal with distinct eigenvalues in -3..2 (real, or a +- bi
    as [[a, b], [-b, a]]), S a unimodular integer matrix; n = 2..6."""
    n = draw(st.integers(2, 6))
    rng = random.Random(draw(st.integers(0, 10**6)))
    blocks, used = [], set()
    while sum(b.rows for b in blocks) < n:
        room = n - sum(b.rows for b in blocks)
        a = rng.randint(-3, 2)
        if room >= 2 and rng.random() < 0.4:
            b = rng.randint(1, 3)
            if (a, b) in used:
                continue
            used.add((a, b))
            blocks.append(sp.Matrix([[a, b], [-b, a]]))
        elif (a, 0) not in used:
            used.add((a, 0))
            blocks.append(sp.Matrix([[a]]))
    S = _unimodular(n, rng)
    x0 = [rng.randint(-3, 3) for _ in range(n)]
    x0[0] = x0[0] or 1  # a nonzero answer
    return blocks, S, x0


def _reference(blocks, S, x0):
    """x(t) = S e^{B t} S^-1 x0 with e^{B t} by sympy's Matrix.exp, block by block (the reference)."""
    eBt = sp.diag(*[(b * t).exp() for b in blocks])
    return (S * eBt * S.inv() * sp.Matrix(x0)).applyfunc(lambda e: sp.expand(sp.expand_complex(e)))


# 15 examples by default; DERIVE_VERIFY_EXAMPLES=200 for a slow run
@settings(max_examples=int(os.environ.get("DERIVE_VERIFY_EXAMPLES", "15")), deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(generated())
def test_verify_accepts_every_right_answer_and_refuses_perturbed_ones(data):
    blocks, S, x0 = data
    n = S.rows
    A = S * sp.diag(*blocks) * S.inv()
    x = _reference(blocks, S, x0)
    system, _ = build_system(A, t=t, x0=x0)
    # the eigenvalues set the span of the numeric check, as in a solve
    lams = [b[0, 0] + sgn * sp.I * b[0, b.cols - 1] for b in blocks for sgn in ((1, -1) if b.rows == 2 else (0,))]
    ok = verify(system, x, eigenvalues=lams)
    assert ok.ok, (A, ok)
    # the same answer as a general solution (x0 as the constants): accepted too
    cs = sp.symbols(f"c1:{n + 1}")
    general = _reference(blocks, S, cs)
    gen_system = replace(system, x0=None)
    assert verify(gen_system, general, constants=cs, eigenvalues=lams).ok
    # x + 1e-6 t is refused, and so is a wrong coefficient of one mode
    assert not verify(system, x + sp.Matrix([sp.Rational(1, 10**6) * t] * n)).ok
    # a wrong coefficient of one mode; when x0 excites only the zero mode, x is constant
    # and a wrong constant term is the slip to catch
    terms = [a for e in x for a in sp.Add.make_args(e) if a != 0]
    term = next((a for a in terms if a.has(t)), terms[0])
    wrong = x.applyfunc(lambda e: e.xreplace({term: term * sp.Rational(11, 10)}) if e.has(term) else e)
    assert wrong != x
    assert not verify(system, wrong).ok


# ---------------------------------------------------------------------------
# One verify for one piece or many


def test_one_piece_and_many_pieces_go_through_the_same_checks():
    """verify(system, x) is verify_solution with one record; verify_pieces too."""
    system, _ = build_system([[0, 1], [-2, -3]], [0, sp.exp(-t / 2)], t=t, x0=[1, 0])
    sol = derive.solve([[0, 1], [-2, -3]], [0, sp.exp(-t / 2)], t=t, x0=[1, 0])
    record = PieceRecord(system.t0, None, system.f, sol.x, sp.ImmutableMatrix([0, 0]))
    a = verify(system, sol.x)
    b = verify_pieces(system, [record])
    c = verify_solution(system, [record])
    assert a == b == c and a.ok


def test_a_step_is_checked_by_stepping_on_each_interval():
    """x' = -x + H(t-1), x(0) = 1: x = e^{-t} before 1 and e^{-t} + 1 - e^{1-t} after
    (the integrating factor by hand, common practice); both intervals are stepped by
    the matrix exponential and a wrong join is refused."""
    system, _ = build_system([[-1]], [sp.Heaviside(t - 1)], t=t, x0=[1])
    first = PieceRecord(sp.Integer(0), sp.Integer(1), sp.ImmutableMatrix([0]), sp.ImmutableMatrix([sp.exp(-t)]), sp.ImmutableMatrix([0]))
    after = sp.exp(-t) + 1 - sp.exp(1 - t)
    second = PieceRecord(sp.Integer(1), None, sp.ImmutableMatrix([1]), sp.ImmutableMatrix([after]), sp.ImmutableMatrix([0]))
    v = verify_pieces(system, [first, second])
    assert v.ok and "stepped, restarted at each switch" in v.numeric.method
    bad = replace(second, x=sp.ImmutableMatrix([after + sp.Rational(1, 100) * sp.exp(-t)]))
    refused = verify_pieces(system, [first, bad])
    assert not refused.ok and not refused.numeric.ok and any("do NOT join" in n for n in refused.notes)


def test_settings_are_passed_in_not_patched():
    """A stricter accepted gap than round-off allows refuses a right answer: the knob is read
    from the record passed in."""
    sol = derive.solve([[0, 1], [-2, -3]], [0, sp.sin(t)], t=t, x0=[0, 1])
    strict = replace(DEFAULT_SETTINGS, numeric_gap_limit=1e-40)
    v = verify(sol.system, sol.x, settings=strict)
    assert v.residual_zero and not v.numeric.ok
    assert verify(sol.system, sol.x).numeric.ok
    # the reference: scipy-free closed form by the integrating factor at t = 1 (sympy's dsolve)
    f = sp.Function("y")
    ode = sp.dsolve(f(t).diff(t, 2) + 3 * f(t).diff(t) + 2 * f(t) - sp.sin(t), f(t), ics={f(0): 0, f(t).diff(t).subs(t, 0): 1})
    assert abs(float((ode.rhs - sol.x[0]).subs(t, 1))) < 1e-12
    assert np.isfinite(v.numeric.max_rel_gap)


def test_the_simplifier_is_bounded_by_the_policy_and_the_numeric_test_decides():
    x = sp.Symbol("x", positive=True)
    # sqrt((x + 1)^2) = x + 1 for x > 0: expansion and cancel leave it, the simplifier is asked
    e = sp.sqrt(x**2 + 2 * x + 1) - x - 1
    ample = decide(e)
    assert ample.zero and "stopped" not in ample.method
    hurried = replace(DEFAULT_SETTINGS.zero, simplify_seconds=1e-4)
    # a fresh expression (sympy caches what simplify found for the first)
    e = sp.sqrt(x**2 + 4 * x + 4) - x - 2
    verdict = decide(e, policy=hurried)
    assert verdict.zero and verdict.kind == "numeric"
    assert "simplify stopped at its 0.0001 s budget" in verdict.method
    # a nonzero expression is refused by the numeric test before the simplifier is asked
    assert not decide(e + sp.Rational(1, 10**6), policy=hurried).zero


def test_the_reading_numbers_never_read_text():
    """decided_sign and approx take sympy objects only: a string is refused, never parsed or evaluated."""
    from derive.reading.evaluation import approx, decided_sign

    for call in (decided_sign, approx):
        with pytest.raises(sp.SympifyError):
            call("__import__('os').getcwd()")  # type: ignore[arg-type]
