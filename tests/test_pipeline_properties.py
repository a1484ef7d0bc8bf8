"""Property test of the whole solving route: generated valid systems, every spectrum
class crossed with every forcing class, from t0 = 0 and from t0 != 0.

What must hold for every generated system:
- ``derive.solve`` returns a verified ``Solution`` or raises a ``DeriveError``;
  any other exception is a bug;
- when a Solution comes out, it is checked independently of the program:
  x(t0) = x0 (exactly by sympy where sympy can decide it, otherwise at 50
  digits), and x(t) at three times (for a general solution, the member with
  every constant 1) against a numeric reference:
  scipy.linalg.expm (scaling and squaring, Al-Mohy and Higham 2009; common
  practice) for unforced systems, scipy.integrate.solve_ivp (DOP853, Hairer,
  Norsett and Wanner, Solving ODEs I, 2nd ed.; common practice) for forced
  ones, integrated interval by interval across switch times and with the jump
  of x by the impulse's weight at an impulse (common practice).

The example count is per class combination and comes from the hypothesis
profile (tests/conftest.py): 4 by default and in CI, 25 under
HYPOTHESIS_PROFILE=slow; a quarter of that (at least one) for the costly
indexed and symbolic classes (112 combinations: 352 examples, 2192 when slow).
"""

from __future__ import annotations

import itertools
from dataclasses import dataclass

import numpy as np
import pytest
import sympy as sp
from hypothesis import HealthCheck, event, given, note, settings
from hypothesis import strategies as st
from scipy.integrate import solve_ivp
from scipy.linalg import expm

import derive
from derive.errors import DeriveError, TimeLimitError, VerificationError
from derive.limits import time_limit

t = sp.Symbol("t")
k = sp.Symbol("k", positive=True)

SPECTRA = ("distinct", "complex", "repeated", "defective", "zero", "indexed", "symbolic")
FORCINGS = ("none", "expoly", "resonant", "step", "pulse", "ramp", "impulse", "convolution")
STARTS = ("t0zero", "t0nonzero")

#: seconds for one solve; past it the program raises TimeLimitError, a DeriveError
LIMIT = 60
#: value given to the symbolic parameter k for the numeric comparison (no coincidence
#: of eigenvalues in any template below at this value)
K_VALUE = sp.Rational(5, 2)


@dataclass(frozen=True)
class Case:
    A: sp.Matrix
    f: tuple | None
    x0: tuple | None
    t0: sp.Rational
    breaks: tuple = ()  # switch times (reference integration restarts there)
    impulses: tuple = ()  # (time, component, weight)

    def reproducer(self) -> str:
        f = None if self.f is None else list(self.f)
        x0 = None if self.x0 is None else list(self.x0)
        return f"derive.solve(sp.Matrix({self.A.tolist()}), {f}, x0={x0}, t0={self.t0})"


# ---------------------------------------------------------------------------
# systems


@st.composite
def unimodular(draw, n):
    """An integer matrix of determinant +-1: a short product of elementary ones."""
    M = sp.eye(n)
    for _ in range(draw(st.integers(0, n))):
        i, j = draw(st.integers(0, n - 1)), draw(st.integers(0, n - 1))
        if i != j:
            E = sp.eye(n)
            E[i, j] = draw(st.sampled_from([-1, 1]))
            M = M * E
    return M


def jordan(lam, size):
    return sp.Matrix(size, size, lambda i, j: lam if i == j else (1 if j == i + 1 else 0))


#: cubics with three real roots and no rational one (casus irreducibilis): their
#: roots stay indexed roots of the polynomial
CUBICS = ((-3, -1), (-4, 1))  # lambda^3 + p lambda + q


def companion(p, q):
    return sp.Matrix([[0, 1, 0], [0, 0, 1], [-q, -p, 0]])


#: symbolic templates in k > 0, with a forcing that resonates with one mode
SYMBOLIC = (
    (sp.Matrix([[0, 1], [-k, -1 - k]]), sp.exp(-t)),  # roots -1, -k
    (sp.Matrix([[-k, 0], [k, -2 * k]]), sp.exp(-k * t)),  # roots -k, -2k
    (sp.Matrix([[-k, 1], [0, -k]]), sp.exp(-k * t)),  # a Jordan block at -k
    (sp.Matrix([[0, 1], [-k, 0]]), sp.cos(sp.sqrt(k) * t)),  # +-i sqrt(k)
)


@st.composite
def spectrum(draw, kind, resonant):
    """(A, resonant input) for a spectrum class; A is similar to its normal form by a
    unimodular P, so the spectrum is known by construction."""
    small = st.integers(-3, 2)
    if kind == "symbolic":
        A, res = draw(st.sampled_from(SYMBOLIC))
        return A, res
    if kind == "indexed":
        p, q = draw(st.sampled_from(CUBICS))
        shift = draw(st.integers(-2, 0))
        C = companion(p, q) + shift * sp.eye(3)
        if not resonant:
            return C, None
        r = draw(small)  # one rational mode beside the indexed ones
        return sp.diag(C, sp.Matrix([[r]])), sp.exp(r * t)
    n = draw(st.integers(2, 3))
    if kind == "distinct":
        eigs = draw(st.lists(small, min_size=n, max_size=n, unique=True))
        N, res = sp.diag(*eigs), sp.exp(eigs[0] * t)
    elif kind == "complex":
        a, b = draw(small), draw(st.integers(1, 2))
        N = sp.Matrix([[a, b], [-b, a]])
        if n == 3:
            N = sp.diag(N, sp.Matrix([[draw(small)]]))
        res = sp.exp(a * t) * draw(st.sampled_from([sp.cos, sp.sin]))(b * t)
    elif kind == "repeated":
        a = draw(small)
        N = sp.diag(a, a, draw(small)) if n == 3 else sp.diag(a, a)
        res = sp.exp(a * t)
    elif kind == "defective":
        a = draw(small)
        N = sp.diag(jordan(a, 2), sp.Matrix([[draw(small)]])) if n == 3 else jordan(a, 2)
        res = sp.exp(a * t)
    elif kind == "zero":
        rest = draw(st.lists(st.integers(-3, 2).filter(bool), min_size=n - 1, max_size=n - 1))
        N = jordan(0, 2) if n == 2 and draw(st.booleans()) else sp.diag(0, *rest)
        res = sp.Integer(1)
    else:  # pragma: no cover - the parametrization names every class
        raise AssertionError(kind)
    P = draw(unimodular(N.rows))
    return P * N * P.inv(), res


@st.composite
def cases(draw, kind, forcing, start):
    A, res = draw(spectrum(kind, forcing == "resonant"))
    n = A.rows
    t0 = sp.Integer(0) if start == "t0zero" else draw(st.sampled_from([sp.Integer(1), sp.Rational(1, 2), sp.Integer(-1)]))
    later = st.sampled_from([sp.Rational(1, 2), sp.Integer(1), sp.Integer(2)])
    c = draw(st.sampled_from([1, -1, 2, sp.Rational(1, 2)]))
    breaks: tuple = ()
    impulses: tuple = ()
    if forcing == "none":
        g = None
    elif forcing == "expoly":
        m, r, w = draw(st.integers(0, 1)), draw(st.integers(-2, 1)), draw(st.integers(0, 2))
        trig = draw(st.sampled_from([sp.cos, sp.sin])) if w else (lambda _: 1)
        g = c * t**m * sp.exp(r * t) * trig(w * t)
    elif forcing == "resonant":
        g = c * res
    elif forcing == "step":
        a = t0 + draw(st.sampled_from([sp.Integer(-1), sp.Rational(1, 2), sp.Integer(1)]))
        g, breaks = c * sp.Heaviside(t - a), ((a,) if a > t0 else ())
    elif forcing == "pulse":
        a = t0 + draw(later)
        b = a + draw(later)
        g, breaks = c * (sp.Heaviside(t - a) - sp.Heaviside(t - b)), (a, b)
    elif forcing == "ramp":
        a = t0 + draw(later)
        g, breaks = c * (t - a) * sp.Heaviside(t - a), (a,)
    elif forcing == "impulse":
        a = t0 + draw(later)
        g = c * sp.DiracDelta(t - a)
    elif forcing == "convolution":
        g = c * draw(st.sampled_from([1 / (1 + t**2), 1 / (2 + t**2)]))
    else:  # pragma: no cover
        raise AssertionError(forcing)
    i = draw(st.integers(0, n - 1))
    f = None if g is None else tuple(g if j == i else sp.Integer(0) for j in range(n))
    if forcing == "impulse":
        impulses = ((a, i, c),)
    general = draw(st.integers(0, 4)) == 0  # one in five: the general solution
    x0 = None if general else tuple(draw(st.integers(-2, 2)) for _ in range(n))
    return Case(sp.Matrix(A), f, x0, t0, tuple(sorted(set(breaks))), impulses)


# ---------------------------------------------------------------------------
# the independent checks


def numeric(expr, subs):
    return complex(sp.N(expr.subs(subs), 30))


def reference(case: Case, x0, times):
    """x(t) at ``times`` from x(t0) = x0, by scipy alone (expm unforced, DOP853 forced)."""
    A = np.array(case.A.subs(k, K_VALUE).evalf(30).tolist(), dtype=float)
    x = np.array([float(v) for v in x0], dtype=float)
    t0 = float(case.t0)
    if case.f is None:
        return [expm(A * (tv - t0)) @ x for tv in times]
    # the impulses are the jumps below; the rest of f is integrated
    smooth = [sp.sympify(sp.sympify(g).replace(sp.DiracDelta, lambda *a: sp.Integer(0))) for g in case.f]
    fn = sp.lambdify(t, [g.subs(k, K_VALUE) for g in smooth], modules=[{"Heaviside": lambda z, h0=1.0: np.heaviside(z, 1.0)}, "numpy"])

    def rhs(tt, y):
        return A @ y + np.array(fn(tt), dtype=float)

    stops = sorted({float(b) for b in case.breaks} | {float(a) for a, _, _ in case.impulses} | set(times))
    out, here, now = {}, x, t0
    for stop in stops:
        if stop > now:
            sol = solve_ivp(rhs, (now, stop), here, method="DOP853", rtol=1e-11, atol=1e-12)
            assert sol.success, sol.message
            here, now = sol.y[:, -1], stop
        for a, i, w in case.impulses:
            if float(a) == stop:
                here = here.copy()
                here[i] += float(w)
        out[stop] = here
    return [out[tv] for tv in times]


def check_independently(case: Case, sol) -> None:
    x = sol.x.subs(k, K_VALUE)
    n = case.A.rows
    if case.x0 is None:
        # the general solution: n constants; one member of the family (every constant
        # 1) is compared below from its own value at t0
        assert len(sol.constants) == n
        x = x.subs({c: 1 for c in sol.constants})
        x0 = [numeric(e, {t: case.t0}).real for e in x]
    else:
        assert sol.constants == ()
        # x(t0) = x0: exactly by sympy's simplify where cheap; with indexed roots (where
        # simplify takes minutes) and where it leaves something, at 50 digits
        for d in sol.x.subs(t, case.t0) - sp.Matrix(case.x0):
            d = sp.expand(d)
            if d != 0 and not d.has(sp.CRootOf):
                d = sp.simplify(d)
            if d != 0:
                assert abs(complex(sp.N(d.subs(k, K_VALUE), 50))) < 1e-40, f"x(t0) - x0 = {d}"
        x0 = case.x0
    times = [float(case.t0) + s for s in (0.37, 1.23, 2.71)]
    ref = reference(case, x0, times)
    for tv, r in zip(times, ref):
        ours = np.array([numeric(e, {t: sp.Float(tv, 30)}) for e in x])
        assert np.all(np.abs(ours.imag) < 1e-12 * (1 + np.abs(ours.real))), ours
        gap = np.max(np.abs(ours.real - r)) / max(1.0, float(np.max(np.abs(r))))
        assert gap < 1e-7, f"t = {tv}: ours {ours.real}, reference {r}, gap {gap:.2e}"


# ---------------------------------------------------------------------------
# the property

#: class combinations that fail today, with a reproducer each (removed once fixed)
#: Class combinations that fail today, with their reproducers, marked xfail: none.
#: (Indexed roots with switched and convolution inputs crashed in the numeric
#: check until the one assembly handled them for every forcing method.)
KNOWN: dict[tuple[str, str, str], str] = {}


def combos():
    for kind, forcing, start in itertools.product(SPECTRA, FORCINGS, STARTS):
        reason = KNOWN.get((kind, forcing, start))
        marks = [pytest.mark.xfail(reason=reason, strict=False)] if reason else []
        yield pytest.param(kind, forcing, start, id=f"{kind}-{forcing}-{start}", marks=marks)


#: indexed roots and symbolic entries cost seconds a solve: a quarter of the examples
COSTLY = ("indexed", "symbolic")


def examples(kind: str, profile: str | None = None) -> int:
    """Examples for one class combination: the profile's max_examples (tests/conftest.py;
    the loaded profile unless one is named), a quarter of it (at least one) for the
    costly classes."""
    base = (settings.get_profile(profile) if profile else settings()).max_examples
    return max(1, base // 4) if kind in COSTLY else base


@pytest.mark.parametrize("kind, forcing, start", list(combos()))
def test_only_a_verified_solution_or_a_derive_error(kind, forcing, start):
    @settings(max_examples=examples(kind), deadline=None,
              suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large])
    @given(case=cases(kind, forcing, start))
    def prop(case: Case) -> None:
        outcome(case)

    prop()


@pytest.mark.parametrize("profile, least", [("ci", 300), ("default", 300), ("slow", 1500)])
def test_the_example_budget(profile, least):
    total = sum(examples(kind, profile) for kind, _, _ in itertools.product(SPECTRA, FORCINGS, STARTS))
    assert total >= least, total


def outcome(case: Case) -> None:
    note(case.reproducer())
    try:
        with time_limit(LIMIT, what="the property case"):
            sol = derive.solve(case.A, case.f, x0=case.x0, t0=case.t0)
    except TimeLimitError:
        event("time limit")
        return
    except VerificationError as err:
        # a DeriveError, so allowed here; counted, since on valid systems it means a
        # wrong answer or a right answer refused
        event(f"VerificationError: {str(err)[:60]}")
        return
    except DeriveError as err:
        event(f"{type(err).__name__}")
        return
    event("solved")
    assert sol.verification.ok
    check_independently(case, sol)
