"""The numeric check: x(t) computed by a route of its own and compared with the exact x(t).

One routine for a solution in one piece or many (switched inputs, impulses):
interval by interval, each started from the state the previous one ended in
(plus the prescribed jump at a switch), never from the exact pieces after
the first value at t0.

- On an interval whose forcing is zero or a sum of modes t^k e^{gamma t}
  (sines and cosines included), x is stepped by one matrix exponential of
  the state extended by those modes: x(t_k) = e^{M h} x(t_{k-1}) (scipy's
  ``expm``: Pade approximation with scaling and squaring).
- Elsewhere scipy's ``solve_ivp`` (DOP853, ``Settings.numeric_rtol`` and
  ``numeric_atol``) integrates x' = A x + f.
- Unevaluated convolution integrals in x are evaluated by adaptive quadrature.

The comparison must not reject a right answer for round-off.  Where the
double-precision gap of the stepped route exceeds ``numeric_gap_limit`` (a
growing mode and ill-conditioned eigenvectors amplify round-off), both sides
are recomputed at ``Settings.numeric_hp_digits`` digits with mpmath (the exact
x(t) by the zero test's tree walk, the stepping with mpmath's ``expm``), and
that gap decides; the method string says so.  On the integrated route the
accepted gap grows with the conditioning of the span: 1000 times the
integrator's tolerance times the largest norm of the propagator e^{A s} over
the span, at most 1e-3 (a wrong answer is off by far more).
"""

from __future__ import annotations

import math
import warnings
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

import mpmath
import numpy as np
import sympy as sp
from sympy.core.function import AppliedUndef

from ..model import NumericCheck, System
from ..rootring import atoms_of, contains
from ..settings import DEFAULT_SETTINGS, Settings
from .evaluate import numeric_function, root_value
from .span import settling_span
from .zero import Singular, drop_empty_integrals, mp_value

__all__ = [
    "NumericSkipped",
    "PieceRecord",
    "numeric_check",
    "numeric_pieces",
    "numeric_solution",
    "sample_constants",
    "time_span",
    "stepped",
]

#: e-foldings of the fastest growing mode a check may span (the old bound too)
GROWTH_FOLDS = 30.0

STEPPED = "scipy.linalg.expm (Pade, scaling and squaring), stepped"
INTEGRATED = "scipy solve_ivp DOP853"
STIFF = "scipy solve_ivp Radau (stiff over the span)"
#: spans longer than this many time constants of the fastest mode go to the implicit integrator
STIFF_RATIO = 500.0


@dataclass(frozen=True)
class PieceRecord:
    """One interval for verification: bounds, its forcing, its solution, the jump at its start.

    A solution in one piece is one record from t0 with ``end`` None and no jump.
    """

    start: sp.Expr
    end: sp.Expr | None
    f: sp.ImmutableMatrix
    x: sp.ImmutableMatrix
    jump: sp.ImmutableMatrix


class NumericSkipped(Exception):
    """A numeric check that cannot run; the reason becomes a note on the sheet."""


def sample_constants(constants: Sequence[sp.Symbol]) -> dict[sp.Symbol, sp.Expr]:
    """Fixed exact values for the free constants of a general solution in a numeric check."""
    samples = [sp.Rational(1), sp.Rational(-1, 2), sp.Rational(3, 4), sp.Rational(-2, 3), sp.Rational(1, 3)]
    return {c: samples[i % len(samples)] * (1 + sp.Rational(i, 7)) for i, c in enumerate(constants)}


def time_span(eigenvalues: Sequence[sp.Expr], subs: dict, decimals: Sequence[complex | None] = ()) -> float:
    """The span of the check: the one rule of :mod:`derive.verify.span`, growth capped.

    ``decimals`` are the eigenvalues' values where the caller has them
    (nested radicals are slow to evaluate again).  A growing mode is followed
    for at most ``GROWTH_FOLDS`` e-foldings: past that, double precision has
    nothing left of a decaying part, and e^{sigma t} overflows soon after.

    >>> time_span([sp.Integer(-1), sp.Integer(-2)], {})
    5.0
    """
    values: list[complex] = []
    known = list(decimals) + [None] * (len(eigenvalues) - len(decimals))
    for lam, z in zip(eigenvalues, known):
        if z is None and isinstance(lam, sp.Basic):  # eigenvalues are sympy objects; anything else is skipped
            try:
                z = complex(sp.N(lam.xreplace(subs), 15))
            except (TypeError, ValueError):
                continue
        if z is not None and math.isfinite(z.real) and math.isfinite(z.imag):
            values.append(z)
    span = settling_span(values)
    growth = max([z.real for z in values if z.real > 1e-9 * abs(z)], default=0.0)
    return float(min(span, GROWTH_FOLDS / growth) if growth > 0 else span)


def _exponentials_inside(e: sp.Expr) -> sp.Expr:
    """e^{-a t} Int_0^t g(s) e^{a s} ds as Int_0^t g(s) e^{a (s - t)} ds, term by term.

    Over a span of many time constants of a fast mode the two factors
    overflow and underflow apart (inf times 0); joined in one exponent they
    stay of the size of the answer.
    """
    terms = []
    for term in sp.Add.make_args(e):
        factors = sp.Mul.make_args(term)
        ints = [f for f in factors if isinstance(f, sp.Integral)]
        if len(ints) != 1 or len(ints[0].limits) != 1:
            terms.append(term)
            continue
        I = ints[0]
        s = I.limits[0][0]
        outer = [f for f in factors if isinstance(f, sp.exp) and not f.has(s)]
        if not outer:
            terms.append(term)
            continue
        inner = sp.Mul.make_args(I.function)
        rates = [f.args[0] for f in (*outer, *inner) if isinstance(f, sp.exp)]
        body = sp.Mul(*[f for f in inner if not isinstance(f, sp.exp)], sp.exp(sp.expand(sp.Add(*rates))))
        rest = [f for f in factors if f is not I and not any(f is o for o in outer)]
        terms.append(sp.Mul(*rest, sp.Integral(body, I.limits[0])))
    return sp.Add(*terms)


def numeric_solution(X: Sequence[sp.Expr], t: sp.Symbol, *, complex_values: bool = False):
    """tt -> values of X at t = tt (real parts unless ``complex_values``); integrals by adaptive quadrature."""
    from scipy.integrate import quad

    X = [_exponentials_inside(sp.sympify(e, strict=True)) for e in X]
    ints = sorted({I for e in X for I in e.atoms(sp.Integral)}, key=sp.default_sort_key)
    dummies = [sp.Dummy(f"I{k}") for k in range(len(ints))]
    Xd = [e.xreplace(dict(zip(ints, dummies))) for e in X]
    # mpmath evaluates special functions of closed-form integrals (erf, Ei, ...) at complex arguments too
    main = numeric_function([t, *dummies], Xd, ["mpmath"])
    parts = []
    for I in ints:
        (s, lo, hi), = I.limits
        # the integrand may hold t too (a convolution written as int e^{A(t-s)} f(s) ds)
        body = numeric_function([s, t], I.function, ["numpy"])
        parts.append((body, numeric_function(t, lo, ["numpy"]), numeric_function(t, hi, ["numpy"])))

    complex_parts = [I.function.has(sp.I) for I in ints]

    def value(tt: float) -> np.ndarray:
        vals = []
        with warnings.catch_warnings():
            # quad's round-off notices near its tolerance floor; the gap to the ODE is what is judged
            warnings.simplefilter("ignore")
            for (body, lo, hi), cplx in zip(parts, complex_parts):
                a, b = float(lo(tt)), float(hi(tt))
                re = quad(lambda u: complex(body(u, tt)).real, a, b, limit=200, epsabs=1e-14, epsrel=1e-12)[0]
                im = quad(lambda u: complex(body(u, tt)).imag, a, b, limit=200, epsabs=1e-14, epsrel=1e-12)[0] if cplx else 0.0
                vals.append(re + 1j * im)
        out = np.array([complex(v) for v in main(tt, *vals)], dtype=complex).reshape(-1)
        return out if complex_values else out.real

    return value


# ---------------------------------------------------------------------------
# Stepping by the matrix exponential


@dataclass(frozen=True)
class _Modes:
    """f = C z on an interval, z the modes t^k e^{gamma t}: exact data, for both precisions."""

    modes: tuple[tuple[sp.Expr, int], ...]
    C: tuple[tuple[sp.Expr, ...], ...]


def _read_modes(f_expr: sp.MatrixBase, t: sp.Symbol) -> _Modes | None:
    from ..expoly import NotExpPoly, to_expoly  # read at call time: tests replace the reader

    try:
        eps = [to_expoly(e, t) for e in f_expr]
    except NotExpPoly:
        return None
    top: dict[sp.Expr, int] = {}
    for p in eps:
        for (k, g), _ in p.terms:
            top[g] = max(top.get(g, 0), k)
    modes = tuple((g, k) for g in sorted(top, key=sp.default_sort_key) for k in range(top[g] + 1))
    where = {mode: j for j, mode in enumerate(modes)}
    C = [[sp.Integer(0)] * len(modes) for _ in eps]
    for i, p in enumerate(eps):
        for (k, g), c in p.terms:
            C[i][where[(g, k)]] = c
    return _Modes(modes, tuple(tuple(r) for r in C))


def _extended(A: Any, md: _Modes, value: Any, zeros: Any) -> Any:
    """M = [[A, C], [0, B]]: the state extended by the modes, z' = gamma z_(gamma,k) + k z_(gamma,k-1)."""
    n, m = len(md.C), len(md.modes)
    M = zeros(n + m)
    where = {mode: j for j, mode in enumerate(md.modes)}
    for i in range(n):
        for j in range(n):
            M[i, j] = A[i, j]
        for j in range(m):
            M[i, n + j] = value(md.C[i][j])
    for j, (g, k) in enumerate(md.modes):
        M[n + j, n + j] = value(g)
        if k:
            M[n + j, n + where[(g, k - 1)]] = k
    return M


def stepped(M: np.ndarray, X0: np.ndarray, t_eval: np.ndarray) -> np.ndarray:
    """X(t_k) = e^{M h} X(t_{k-1}) on an even grid: one matrix exponential for all points."""
    from scipy.linalg import expm

    step = expm(M * (t_eval[1] - t_eval[0]))
    X = np.empty((len(X0), len(t_eval)), dtype=np.result_type(M, X0))
    X[:, 0] = X0
    for k in range(1, len(t_eval)):
        X[:, k] = step @ X[:, k - 1]
    return X


def _stepped_with_modes(
    md: _Modes, f_expr: sp.MatrixBase, t: sp.Symbol, A: np.ndarray, y0: np.ndarray, t_eval: np.ndarray, complex_values: bool = False
) -> np.ndarray | None:
    """x(t) for x' = A x + f with f = C z, by one matrix exponential of the extended state.

    The forcing written as the output of its own linear system (common
    practice).  The modes are this module's reading of f, so C z is first
    compared with f itself, evaluated directly on the grid; None (integrate
    instead) when the two differ.
    """
    n = len(md.C)
    try:
        gamma = np.array([complex(g) for g, _ in md.modes])
        f_fn = numeric_function(t, list(f_expr), "numpy")
        f_grid = np.array([np.broadcast_to(np.asarray(v, dtype=complex), t_eval.shape) for v in f_fn(t_eval)])
        M = _extended(A, md, complex, lambda size: np.zeros((size, size), dtype=complex))
    except (TypeError, ValueError, ZeroDivisionError, OverflowError):
        return None
    powers = np.array([k for _, k in md.modes])
    with np.errstate(over="ignore", invalid="ignore"):
        z_grid = t_eval[None, :] ** powers[:, None] * np.exp(gamma[:, None] * t_eval[None, :])
        if not (np.all(np.isfinite(z_grid)) and np.all(np.isfinite(f_grid))):
            return None
        scale = max(1.0, float(np.max(np.abs(f_grid))))
        if float(np.max(np.abs(M[:n, n:] @ z_grid - f_grid))) > 1e-9 * scale:
            return None
    X = stepped(M, np.concatenate([y0, z_grid[:, 0]]), t_eval)[:n]
    return X if complex_values else X.real


# ---------------------------------------------------------------------------
# The check


@dataclass
class _Interval:
    a: float
    b: float
    grid: np.ndarray
    piece: PieceRecord
    modes: _Modes | None
    ref: np.ndarray


def _exact_function(x: Sequence[sp.Expr], t: sp.Symbol, sampled: dict, complex_values: bool = False):
    """t-grid -> the exact x on it (real parts for real data), vectorised where x has no integrals."""
    if any(e.has(sp.Integral) for e in x):
        point = numeric_solution([drop_empty_integrals(e.xreplace(sampled)) for e in x], t, complex_values=complex_values)
        return lambda grid: np.array([point(tt) for tt in grid]).T
    fn = numeric_function(t, list(x), ["numpy"], values=sampled)

    def exact(grid: np.ndarray) -> np.ndarray:
        # one vectorised call; a constant component comes back as a scalar
        values = np.array([np.broadcast_to(np.asarray(v, dtype=complex), np.shape(grid)) for v in fn(grid)])
        return values if complex_values else values.real

    return exact


def numeric_pieces(
    system: System,
    pieces: Sequence[PieceRecord],
    *,
    constants: Sequence[sp.Symbol] = (),
    eigenvalues: Sequence[sp.Expr] = (),
    decimals: Sequence[complex | None] = (),
    points: int | None = None,
    settings: Settings = DEFAULT_SETTINGS,
) -> NumericCheck:
    """Compute x(t) interval by interval by a route of its own and compare with the exact pieces.

    Starts from the exact x(t0); at each switch the numeric state plus the
    prescribed jump starts the next interval.  Neither route uses the
    eigen-decomposition.  Raises :class:`NumericSkipped` when it cannot run.
    """
    t = system.t
    points = settings.numeric_points if points is None else points
    subs = dict(system.parameter_values())
    for p in pieces:
        # contains, atoms_of: never into an indexed root's polynomial (rebuilt on every read)
        if any(contains(e, AppliedUndef) for e in (*p.f, *p.x)):
            raise NumericSkipped("the forcing contains an unspecified function")
    free = (system.A.free_symbols | {s for p in pieces for s in p.f.free_symbols | p.jump.free_symbols}) - {t}
    missing = [s for s in free if s not in subs]
    if missing:
        raise NumericSkipped("parameters without numeric values: " + ", ".join(sorted(s.name for s in missing)))
    sampled = sample_constants(constants)  # read by the evaluator, not substituted
    xs_all = []
    for p in pieces:
        xs = sp.ImmutableMatrix(p.x).xreplace(subs) if subs else sp.ImmutableMatrix(p.x)
        roots = set().union(*(atoms_of(e, sp.CRootOf) for e in xs))
        if roots:
            xs = xs.xreplace({r: root_value(r) for r in roots})
        if xs.has(sp.zoo, sp.nan, sp.oo, -sp.oo):
            raise NumericSkipped(
                "the exact solution has a vanishing denominator at the given parameter values: they "
                "violate one of the stated conditions (for example a resonance), so the generic result "
                "does not apply to them"
            )
        leftover = xs.free_symbols - {t} - set(sampled)
        if leftover:
            raise NumericSkipped("free symbols left in x(t): " + ", ".join(sorted(s.name for s in leftover)))
        xs_all.append(xs)
    A_num = system.A.xreplace(subs) if subs else system.A
    # complex data (i in A, f or x0): the check runs in complex arithmetic; else real parts
    cplx = any(e.has(sp.I) for e in (*A_num, *(system.x0 if system.x0 is not None else ()), *(q for p in pieces for q in (*p.f, *p.jump))))
    kind: Any = complex if cplx else float
    A = np.array([[kind(e) if e.is_Rational else kind(e.evalf(20)) for e in row] for row in A_num.tolist()], dtype=kind)
    t0 = float(sp.N(system.t0.xreplace(subs)))
    switches = [float(sp.N(p.start.xreplace(subs))) for p in pieces[1:]]
    T = time_span(eigenvalues, subs, decimals)
    t_end = (switches[-1] if switches else t0) + T
    bad = (KeyError, TypeError, ValueError, ZeroDivisionError, OverflowError)
    intervals: list[_Interval] = []
    methods: list[str] = []
    numeric_parts: list[np.ndarray] = []
    state: np.ndarray | None = None
    modes_used = 0
    for k, (p, xs) in enumerate(zip(pieces, xs_all)):
        a = t0 if k == 0 else switches[k - 1]
        b = t_end if p.end is None else min(float(sp.N(p.end.xreplace(subs))), t_end)
        if b <= a:
            break
        count = points if len(pieces) == 1 else max(4, int(points * (b - a) / max(t_end - t0, 1e-9)))
        grid = np.linspace(a, b, count)
        try:
            ref = _exact_function(list(xs), t, sampled, cplx)(grid)  # grid[0] is the start: x(t0) starts the check
        except bad as exc:
            raise NumericSkipped(
                f"the exact solution cannot be evaluated at the given parameter values "
                f"({type(exc).__name__}: {exc}); a stated condition may be violated by them"
            )
        if k == 0:
            state = ref[:, 0]
            if not np.all(np.isfinite(state)):
                raise NumericSkipped(
                    "the exact solution is not finite at t0 for the given parameter values; a stated "
                    "condition may be violated by them"
                )
        else:
            assert state is not None
            state = state + np.array([kind(sp.N(v.xreplace(subs))) for v in p.jump])
        f_expr = p.f.xreplace(subs) if subs else p.f
        if any(e != 0 for e in f_expr):
            md = _read_modes(f_expr, t)
            numeric = _stepped_with_modes(md, f_expr, t, A, state, grid, cplx) if md is not None else None
        else:
            md = _Modes((), tuple(() for _ in f_expr))
            numeric = stepped(A, state, grid)
        if numeric is not None:
            methods.append(STEPPED)
            modes_used = max(modes_used, len(md.modes))  # type: ignore[union-attr]
        else:
            md = None
            numeric, route = _integrated(A, f_expr, t, state, grid, settings)
            methods.append(route)
        intervals.append(_Interval(a, b, grid, p, md, ref))
        numeric_parts.append(numeric)
        state = numeric[:, -1]
    worst = max(float(np.max(np.abs(num - iv.ref))) for num, iv in zip(numeric_parts, intervals))
    scale = max([1.0] + [float(np.max(np.abs(iv.ref))) for iv in intervals])
    rel = worst / scale
    integrated = any(m != STEPPED for m in methods)
    limit = settings.numeric_gap_limit
    if integrated:
        # the integrator's error, amplified by the span; never so wide that a wrong answer passes
        limit = min(max(limit, 1e3 * settings.numeric_rtol * _growth(A, max(t_end - t0, 0.0))), 1e-3)
    method = " / ".join(dict.fromkeys(methods))
    if len(intervals) > 1:
        method += ", restarted at each switch"
    ok = bool(math.isfinite(rel) and rel <= limit)
    if not ok and not integrated and not any(e.has(sp.Integral) for e in xs_all):
        # the double-precision comparison may be limited by round-off: repeat it at high precision
        hp = _high_precision_gap(system, intervals, [xs_all[i] for i in range(len(intervals))], subs, sampled, settings, cplx)
        if hp is not None:
            worst, rel = hp
            method += f"; repeated at {settings.numeric_hp_digits} digits (mpmath) as double precision was limited by round-off"
            ok = bool(math.isfinite(rel) and rel <= settings.numeric_gap_limit)
    return NumericCheck(
        method=method,
        t_start=t0,
        t_end=t_end,
        points=sum(len(iv.grid) for iv in intervals),
        rtol=settings.numeric_rtol if integrated else None,
        atol=settings.numeric_atol if integrated else None,
        max_abs_gap=worst,
        max_rel_gap=rel,
        ok=ok,
        modes=modes_used,
    )


def _growth(A: np.ndarray, span: float) -> float:
    """The largest norm of the propagator e^{A s} for 0 <= s <= span: how much the span amplifies an error."""
    from scipy.linalg import expm

    if span <= 0:
        return 1.0
    step = expm(A * (span / 16))
    P = np.eye(len(A))
    worst = 1.0
    for _ in range(16):
        P = step @ P
        worst = max(worst, float(np.linalg.norm(P, 2)))
    return worst


def _integrated(A: np.ndarray, f_expr: sp.MatrixBase, t: sp.Symbol, y0: np.ndarray, grid: np.ndarray, settings: Settings) -> tuple[np.ndarray, str]:
    from scipy.integrate import solve_ivp

    bad = (KeyError, TypeError, ValueError, ZeroDivisionError, OverflowError)
    try:
        if f_expr.has(t):
            f_fn = numeric_function(t, list(f_expr), "numpy")

            def rhs(tt: float, y: np.ndarray) -> np.ndarray:
                return A @ y + np.array(f_fn(tt), dtype=y.dtype).reshape(-1)
        else:
            f_const = np.array([complex(e) if e.has(sp.I) else float(e) for e in f_expr])

            def rhs(tt: float, y: np.ndarray) -> np.ndarray:
                return A @ y + f_const

        np.asarray(rhs(grid[0], y0))
    except bad as exc:
        raise NumericSkipped(f"the forcing cannot be evaluated at the given parameter values ({type(exc).__name__}: {exc})")
    # an explicit integrator over many time constants of a fast mode crawls at its stability limit
    fastest = float(np.max(np.abs(np.linalg.eigvals(A)))) if len(A) else 0.0
    stiff = (grid[-1] - grid[0]) * fastest > STIFF_RATIO
    sol = solve_ivp(
        rhs, (grid[0], grid[-1]), y0, method="Radau" if stiff else "DOP853", rtol=settings.numeric_rtol,
        atol=settings.numeric_atol, t_eval=grid, **({"jac": A} if stiff else {}),
    )
    if not sol.success:
        raise NumericSkipped(f"the integrator stopped: {sol.message}")
    return sol.y, STIFF if stiff else INTEGRATED


def _high_precision_gap(
    system: System,
    intervals: Sequence[_Interval],
    xs_all: Sequence[sp.MatrixBase],
    subs: dict,
    sampled: dict,
    settings: Settings,
    complex_values: bool = False,
) -> tuple[float, float] | None:
    """The stepped comparison again at high precision: (max abs gap, max rel gap), or None if it cannot run."""
    part: Any = (lambda z: z) if complex_values else mpmath.re
    t = system.t
    A_exact = system.A.xreplace(subs) if subs else system.A
    try:
        with mpmath.workdps(settings.numeric_hp_digits):
            def value(e: Any) -> Any:
                return mp_value(sp.sympify(e, strict=True), {})[0]

            A = mpmath.matrix([[value(e) for e in row] for row in A_exact.tolist()])
            n = A.rows
            worst = mpmath.mpf(0)
            scale = mpmath.mpf(1)
            state = None
            for k, (iv, xs) in enumerate(zip(intervals, xs_all)):
                md = iv.modes
                assert md is not None
                M = _extended(A, md, value, mpmath.zeros)
                count = len(iv.grid)
                a, b = mpmath.mpf(iv.a), mpmath.mpf(iv.b)
                h = (b - a) / (count - 1)
                step = mpmath.expm(M * h)
                point = dict(sampled)

                def exact_at(tt: Any) -> list[Any]:
                    point[t] = tt
                    return [part(mp_value(e, point)[0]) for e in xs]

                if k == 0:
                    x_now = exact_at(a)
                else:
                    x_now = [state[i] + value(iv.piece.jump[i].xreplace(subs)) for i in range(n)]  # type: ignore[index]
                z_now = [a**kk * mpmath.exp(value(g) * a) for g, kk in md.modes]
                X = mpmath.matrix(x_now + z_now)
                for j in range(count):
                    if j:
                        X = step * X
                    tt = a + j * h
                    ref = exact_at(tt)
                    for i in range(n):
                        worst = max(worst, abs(part(X[i]) - ref[i]))
                        scale = max(scale, abs(ref[i]))
                state = [part(X[i]) for i in range(n)]
            return float(worst), float(worst / scale)
    except (Singular, ZeroDivisionError, ValueError, TypeError, OverflowError):
        return None


def numeric_check(
    system: System,
    x: sp.MatrixBase,
    *,
    constants: Sequence[sp.Symbol] = (),
    eigenvalues: Sequence[sp.Expr] = (),
    decimals: Sequence[complex | None] = (),
    points: int | None = None,
    settings: Settings = DEFAULT_SETTINGS,
) -> NumericCheck:
    """The numeric check of a solution in one piece (see :func:`numeric_pieces`)."""
    record = PieceRecord(system.t0, None, system.f, sp.ImmutableMatrix(x), sp.ImmutableMatrix(sp.zeros(system.n, 1)))
    return numeric_pieces(
        system, [record], constants=constants, eigenvalues=eigenvalues, decimals=decimals, points=points, settings=settings
    )
