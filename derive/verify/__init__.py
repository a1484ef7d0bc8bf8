"""Independent checks of a solution, on by default.

1. Substitution: x' - A x - f is reduced to zero exactly, first in a
   polynomial ring with the exponentials, cosines and sines as generators
   (``derive.ringcheck``), else by expansion and simplification, else by a
   numeric identity test at 50 digits.
2. Initial values: x(t0) - x0 = 0 for an initial value problem, the same way.
3. Numeric integration: where every parameter has a value, x(t) is computed
   numerically from x(t0) and compared with the exact solution at 60 points:
   stepped by scipy's matrix exponential when f = 0, and when f is a sum of
   modes t^k e^{gamma t} (sines and cosines included) with those modes
   appended to the state; integrated by scipy's ``solve_ivp`` (DOP853, rtol
   1e-11, atol 1e-13) otherwise; a general solution is checked with its
   constants set to fixed sample values.

These use only the final x(t), A, f and x0, never the intermediate objects of
the derivation, so a slip anywhere in the derivation shows up here.
"""

from __future__ import annotations

import math
from typing import Sequence

import numpy as np
import sympy as sp
import sympy.codegen.ast  # noqa: F401 - lambdify's printers import it on first use: load it with the package

from ..exact import decide_zero, numeric_function, root_value
from ..model import NumericCheck, System, Verification
from ..ringcheck import initial_is_zero, residual_is_zero

__all__ = ["verify", "numeric_check", "residual"]

RTOL = 1e-11
ATOL = 1e-13
GAP_LIMIT = 1e-6


def combined_method(methods: Sequence[str]) -> str:
    """How a set of zero tests was settled: "exact", or the first other method used."""
    return next((m for m in methods if m != "exact"), "exact")


def residual(system: System, x: sp.Matrix) -> sp.ImmutableMatrix:
    """x' - A x - f, expanded."""
    t = system.t
    xs = list(x)
    n = len(xs)
    A, f = system.A, system.f
    r = [
        sp.expand(xs[i].diff(t) - sp.Add(*[A[i, j] * xs[j] for j in range(n) if A[i, j] != 0]) - f[i])
        for i in range(n)
    ]
    return sp.ImmutableMatrix(n, 1, r)


def verify(
    system: System,
    x: sp.Matrix,
    *,
    constants: Sequence[sp.Symbol] = (),
    similarity_ok: bool = True,
    numeric: bool = True,
    eigenvalues: Sequence[sp.Expr] = (),
    decimals: Sequence[complex | None] = (),
) -> Verification:
    """Check x against the system; the result says how each check was settled."""
    x = sp.ImmutableMatrix(x)
    n = x.rows
    if residual_is_zero(list(x), system.A, list(system.f), system.t):
        zero, method, reduced = True, "exact", [sp.Integer(0)] * n
    else:
        res = residual(system, x)
        methods = []
        zero = True
        reduced = []
        for r in res:
            v = decide_zero(r)
            methods.append(v.method)
            zero = zero and v.zero
            reduced.append(sp.Integer(0) if v.zero else r)
        method = combined_method(methods)
    init_res = None
    init_ok = None
    if system.x0 is not None and system.t0 == 0 and initial_is_zero(list(x), list(system.x0), system.t):
        init_ok, init_res = True, sp.ImmutableMatrix(sp.zeros(n, 1))
    elif system.x0 is not None:
        vals = x.subs(system.t, system.t0)
        diffs = [sp.expand(a - b) for a, b in zip(vals, system.x0)]
        verdicts = [decide_zero(d) for d in diffs]
        init_ok = all(v.zero for v in verdicts)
        init_res = sp.ImmutableMatrix([0 if v.zero else d for v, d in zip(verdicts, diffs)])
    notes: list[str] = []
    num = None
    if numeric:
        try:
            num = numeric_check(system, x, constants=constants, eigenvalues=eigenvalues, decimals=decimals)
        except NumericSkipped as why:
            notes.append(f"numeric integration not run: {why}")
    return Verification(
        residual=sp.ImmutableMatrix(reduced),
        residual_zero=zero,
        residual_method=method,
        initial_residual=init_res,
        initial_ok=init_ok,
        numeric=num,
        similarity_ok=similarity_ok,
        notes=tuple(notes),
    )


class NumericSkipped(Exception):
    """A numeric check that cannot run; the reason becomes a note on the sheet."""


def sample_constants(constants: Sequence[sp.Symbol]) -> dict[sp.Symbol, sp.Expr]:
    """Fixed exact values for the free constants of a general solution in a numeric check."""
    samples = [sp.Rational(1), sp.Rational(-1, 2), sp.Rational(3, 4), sp.Rational(-2, 3), sp.Rational(1, 3)]
    return {c: samples[i % len(samples)] * (1 + sp.Rational(i, 7)) for i, c in enumerate(constants)}


def time_span(eigenvalues: Sequence[sp.Expr], subs: dict, decimals: Sequence[complex | None] = ()) -> float:
    """A time span that shows the slowest decaying mode without overflow.

    ``decimals`` are the eigenvalues' values where the caller has them
    (nested radicals are slow to evaluate again).
    """
    rates = []
    known = list(decimals) + [None] * (len(eigenvalues) - len(decimals))
    for lam, z in zip(eigenvalues, known):
        if z is not None:
            if abs(z) > 1e-12:
                rates.append(abs(z))
            continue
        if not isinstance(lam, sp.Basic):  # eigenvalues are sympy objects; anything else is skipped
            continue
        try:
            z = complex(sp.N(lam.xreplace(subs), 15))
        except (TypeError, ValueError):
            continue
        if abs(z) > 1e-12:
            rates.append(abs(z))
    if not rates:
        return 5.0
    slow, fast = min(rates), max(rates)
    span = 4.0 / slow
    # growing modes: keep e^{Re(lam) T} moderate
    return float(min(max(span, 0.5), 20.0, 30.0 / max(fast, 1e-9) if fast > 1 else 20.0))


def numeric_check(
    system: System,
    x: sp.Matrix,
    *,
    constants: Sequence[sp.Symbol] = (),
    eigenvalues: Sequence[sp.Expr] = (),
    decimals: Sequence[complex | None] = (),
    points: int = 60,
) -> NumericCheck:
    """Compute x(t) numerically by a route of its own and compare with the exact x(t).

    Unforced (f = 0): x(t_k) = e^{A h} x(t_{k-1}) on an even grid, with e^{A h}
    from scipy.linalg.expm (Pade approximation with scaling and squaring), one
    matrix exponential and a matrix-vector product a point.  Forced: scipy's
    solve_ivp (DOP853, rtol 1e-11, atol 1e-13) on x' = A x + f.  Both start
    from the exact x(t0) and neither uses the eigen-decomposition.
    """
    t = system.t
    subs = dict(system.parameter_values())
    free = (system.A.free_symbols | system.f.free_symbols) - {t}
    missing = [s for s in free if s not in subs]
    if missing:
        raise NumericSkipped("parameters without numeric values: " + ", ".join(sorted(s.name for s in missing)))
    sampled = sample_constants(constants)  # read by the evaluator, not substituted
    xs = sp.ImmutableMatrix(x).xreplace(subs) if subs else sp.ImmutableMatrix(x)
    roots = xs.atoms(sp.CRootOf)
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
    A_num = system.A.xreplace(subs) if subs else system.A
    A = np.array([[float(e) if e.is_Rational else float(e.evalf(20)) for e in row] for row in A_num.tolist()], dtype=float)
    f_expr = system.f.xreplace(subs) if subs else system.f
    forced = any(e != 0 for e in f_expr)
    x_fn = numeric_function(t, list(xs), ["numpy"], values=sampled)
    t0 = float(system.t0)
    T = time_span(eigenvalues, subs, decimals)
    t_eval = np.linspace(t0, t0 + T, points)

    def exact(tt: np.ndarray) -> np.ndarray:
        # one vectorised call; a constant component comes back as a scalar
        cols = [np.broadcast_to(np.asarray(v, dtype=complex), np.shape(tt)) for v in x_fn(tt)]
        return np.array(cols).real

    bad = (KeyError, TypeError, ValueError, ZeroDivisionError, OverflowError)
    try:
        ref = exact(t_eval)  # t_eval[0] is t0: the exact x(t0) starts the numeric route
        y0 = ref[:, 0]
    except bad as exc:
        raise NumericSkipped(
            f"the exact solution cannot be evaluated at the given parameter values "
            f"({type(exc).__name__}: {exc}); a stated condition may be violated by them"
        )
    if not np.all(np.isfinite(y0)):
        raise NumericSkipped("the exact solution is not finite at t0 for the given parameter values; a stated condition may be violated by them")
    by_modes = _stepped_with_modes(f_expr, t, A, y0, t_eval) if forced else (_stepped(A, y0, t_eval), 0)
    if by_modes is not None:
        # unforced, or forced by modes carried in the state (``modes`` says how many)
        numeric, modes = by_modes
        method, rtol, atol = "scipy.linalg.expm (Pade, scaling and squaring), stepped", None, None
    else:
        from scipy.integrate import solve_ivp

        try:
            if f_expr.has(t):
                f_fn = numeric_function(t, list(f_expr), "numpy")

                def rhs(tt: float, y: np.ndarray) -> np.ndarray:
                    return A @ y + np.array(f_fn(tt), dtype=float).reshape(-1)
            else:
                f_const = np.array([float(e) for e in f_expr])

                def rhs(tt: float, y: np.ndarray) -> np.ndarray:
                    return A @ y + f_const

            np.asarray(rhs(t0, y0))
        except bad as exc:
            raise NumericSkipped(f"the forcing cannot be evaluated at the given parameter values ({type(exc).__name__}: {exc})")
        sol = solve_ivp(rhs, (t0, t0 + T), y0, method="DOP853", rtol=RTOL, atol=ATOL, t_eval=t_eval)
        if not sol.success:
            raise NumericSkipped(f"the integrator stopped: {sol.message}")
        numeric, method, rtol, atol, modes = sol.y, "scipy solve_ivp DOP853", RTOL, ATOL, 0
    gap = np.abs(numeric - ref)
    scale = max(1.0, float(np.max(np.abs(ref))))
    max_abs = float(np.max(gap))
    max_rel = max_abs / scale
    ok = bool(math.isfinite(max_rel) and max_rel <= GAP_LIMIT)
    return NumericCheck(
        method=method,
        t_start=t0,
        t_end=t0 + T,
        points=points,
        rtol=rtol,
        atol=atol,
        max_abs_gap=max_abs,
        max_rel_gap=max_rel,
        ok=ok,
        modes=modes,
    )


def _stepped_with_modes(
    f_expr: sp.Matrix, t: sp.Symbol, A: np.ndarray, y0: np.ndarray, t_eval: np.ndarray
) -> tuple[np.ndarray, int] | None:
    """x(t) for x' = A x + f with f a sum of modes t^k e^{gamma t}, by one matrix exponential.

    The modes z_(gamma,k) = t^k e^{gamma t} obey z' = gamma z_(gamma,k) + k z_(gamma,k-1),
    so X = (x, z) solves the unforced X' = M X with M = [[A, C], [0, B]] and
    f = C z; X is stepped by e^{M h} like an unforced system (common practice:
    the forcing written as the output of its own linear system).  The modes are
    this module's reading of f, so C z is first compared with f itself,
    evaluated directly on the grid; None (integrate instead) when f is not such
    a sum or the two differ.
    """
    from ..expoly import NotExpPoly, to_expoly

    try:
        eps = [to_expoly(e, t) for e in f_expr]
    except NotExpPoly:
        return None
    top: dict[sp.Expr, int] = {}
    for p in eps:
        for (k, g), _ in p.terms:
            top[g] = max(top.get(g, 0), k)
    modes = [(g, k) for g in sorted(top, key=sp.default_sort_key) for k in range(top[g] + 1)]
    where = {mode: j for j, mode in enumerate(modes)}
    n, m = len(eps), len(modes)
    try:
        gamma = np.array([complex(g) for g, _ in modes])
        C = np.zeros((n, m), dtype=complex)
        for i, p in enumerate(eps):
            for (k, g), c in p.terms:
                C[i, where[(g, k)]] = complex(c)
        f_fn = numeric_function(t, list(f_expr), "numpy")
        f_grid = np.array([np.broadcast_to(np.asarray(v, dtype=complex), t_eval.shape) for v in f_fn(t_eval)])
    except (TypeError, ValueError, ZeroDivisionError, OverflowError):
        return None
    powers = np.array([k for _, k in modes])
    with np.errstate(over="ignore", invalid="ignore"):
        z_grid = t_eval[None, :] ** powers[:, None] * np.exp(gamma[:, None] * t_eval[None, :])
        if not (np.all(np.isfinite(z_grid)) and np.all(np.isfinite(f_grid))):
            return None
        scale = max(1.0, float(np.max(np.abs(f_grid))))
        if float(np.max(np.abs(C @ z_grid - f_grid))) > 1e-9 * scale:
            return None
    M = np.zeros((n + m, n + m), dtype=complex)
    M[:n, :n] = A
    M[:n, n:] = C
    for j, (g, k) in enumerate(modes):
        M[n + j, n + j] = gamma[j]
        if k:
            M[n + j, n + where[(g, k - 1)]] = k
    return _stepped(M, np.concatenate([y0, z_grid[:, 0]]), t_eval)[:n].real, m


def _stepped(M: np.ndarray, X0: np.ndarray, t_eval: np.ndarray) -> np.ndarray:
    """X(t_k) = e^{M h} X(t_{k-1}) on an even grid: one matrix exponential for all points."""
    from scipy.linalg import expm

    step = expm(M * (t_eval[1] - t_eval[0]))
    X = np.empty((len(X0), len(t_eval)), dtype=np.result_type(M, X0))
    X[:, 0] = X0
    for k in range(1, len(t_eval)):
        X[:, k] = step @ X[:, k - 1]
    return X
