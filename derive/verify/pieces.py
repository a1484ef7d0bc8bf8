"""Verification of a solution given per interval (switched inputs, impulses, convolution).

The residual on every interval, continuity (or the prescribed jump) at every
switch, the initial values, and scipy's ``solve_ivp`` restarted at each switch
with impulses applied as jumps.  Unevaluated convolution integrals are
evaluated by quadrature.
"""

from __future__ import annotations

import math
import warnings
from dataclasses import dataclass
from typing import Sequence

import numpy as np
import sympy as sp
from sympy.core.function import AppliedUndef

from ..exact import decide_zero, numeric_function
from ..model import NumericCheck, System, Verification
from ..ringcheck import residual_is_zero
from . import ATOL, GAP_LIMIT, RTOL, NumericSkipped, combined_method, sample_constants, time_span

__all__ = ["PieceRecord", "verify_pieces", "numeric_solution"]

_ZERO = sp.Integer(0)
Matrix = sp.ImmutableMatrix



@dataclass(frozen=True)
class PieceRecord:
    """One interval for verification: bounds, its forcing, its solution, the jump at its start."""

    start: sp.Expr
    end: sp.Expr | None
    f: Matrix
    x: Matrix
    jump: Matrix


def _drop_empty_integrals(e: sp.Expr) -> sp.Expr:
    return e.replace(
        lambda a: isinstance(a, sp.Integral) and all(sp.expand(lo - hi) == 0 for _, lo, hi in a.limits),
        lambda a: _ZERO,
    )


def _zero(e: sp.Expr) -> tuple[bool, str]:
    """Is ``e`` identically zero?  Structural first, then ``decide_zero``."""
    e = sp.expand(_drop_empty_integrals(e))
    if e == 0:
        return True, "exact"
    if e.has(sp.sin, sp.cos, sp.tan, sp.sinh, sp.cosh):
        # complex exponentials make sin^2 + cos^2 = 1 cancel by expansion alone; the
        # integrals are held as symbols so their integrands stay as they are
        ints = sorted(e.atoms(sp.Integral), key=sp.default_sort_key)
        hold = {I: sp.Dummy(f"J{k}") for k, I in enumerate(ints)}
        r = sp.expand(e.xreplace(hold).rewrite(sp.exp))
        if r == 0:
            return True, "exact"
    if e.has(sp.Integral) or e.atoms(AppliedUndef):
        return False, "undecided: unevaluated integrals or unspecified functions remain"
    v = decide_zero(e)
    return v.zero, v.method


def numeric_solution(X: Sequence[sp.Expr], t: sp.Symbol):
    """tt -> real values of X at t = tt; unevaluated integrals by adaptive quadrature."""
    from scipy.integrate import quad

    ints = sorted({I for e in X for I in sp.sympify(e, strict=True).atoms(sp.Integral)}, key=sp.default_sort_key)
    dummies = [sp.Dummy(f"I{k}") for k in range(len(ints))]
    Xd = [sp.sympify(e, strict=True).xreplace(dict(zip(ints, dummies))) for e in X]
    # mpmath evaluates special functions of closed-form integrals (erf, Ei, ...) at complex arguments too
    main = numeric_function([t, *dummies], Xd, ["mpmath"])
    parts = []
    for I in ints:
        (s, lo, hi), = I.limits
        body = numeric_function(s, I.function, ["numpy"])
        parts.append((body, numeric_function(t, lo, ["numpy"]), numeric_function(t, hi, ["numpy"])))

    complex_parts = [I.function.has(sp.I) for I in ints]

    def value(tt: float) -> np.ndarray:
        vals = []
        with warnings.catch_warnings():
            # quad's round-off notices near its tolerance floor; the gap to the ODE is what is judged
            warnings.simplefilter("ignore")
            for (body, lo, hi), cplx in zip(parts, complex_parts):
                a, b = float(lo(tt)), float(hi(tt))
                re = quad(lambda u: complex(body(u)).real, a, b, limit=200, epsabs=1e-14, epsrel=1e-12)[0]
                im = quad(lambda u: complex(body(u)).imag, a, b, limit=200, epsabs=1e-14, epsrel=1e-12)[0] if cplx else 0.0
                vals.append(re + 1j * im)
        return np.array([complex(v) for v in main(tt, *vals)], dtype=complex).reshape(-1).real

    return value


def _numeric_pieces(
    system: System,
    pieces: Sequence[PieceRecord],
    *,
    constants: Sequence[sp.Symbol],
    eigenvalues: Sequence[sp.Expr],
    points: int = 60,
) -> NumericCheck:
    """scipy's solve_ivp restarted at every switch, impulses applied as jumps, against the pieces."""
    from scipy.integrate import solve_ivp

    t = system.t
    subs: dict[sp.Symbol, sp.Expr] = dict(system.parameter_values())
    subs.update(sample_constants(constants))
    for p in pieces:
        for obj in (p.f, p.x, p.jump):
            if any(e.atoms(AppliedUndef) for e in obj):
                raise NumericSkipped("the forcing contains an unspecified function")
            leftover = {x for e in obj for x in e.free_symbols} - {t} - set(subs)
            if leftover:
                raise NumericSkipped("symbols without numeric values: " + ", ".join(sorted(str(x) for x in leftover)))
    A = np.array(system.A.xreplace(subs).evalf(20).tolist(), dtype=float)
    t0 = float(sp.N(system.t0.xreplace(subs)))
    switches = [float(sp.N(p.start.xreplace(subs))) for p in pieces[1:]]
    span = time_span(eigenvalues, dict(subs))
    t_end = (switches[-1] if switches else t0) + span
    if system.x0 is not None:
        state = np.array([float(sp.N(v.xreplace(subs))) for v in system.x0])
    else:
        # a general solution: start from its own value at t0 (constants at sample values)
        first = pieces[0]
        at_start = [sp.expand(_drop_empty_integrals(e.xreplace(subs).subs(t, system.t0)) - b) for e, b in zip(first.x, first.jump.xreplace(subs))]
        state = np.array([float(sp.N(v)) for v in at_start])
    worst_abs = 0.0
    scale = 1.0
    total = 0
    for k, p in enumerate(pieces):
        a = t0 if k == 0 else switches[k - 1]
        b = t_end if p.end is None else min(float(sp.N(p.end.xreplace(subs))), t_end)
        if b <= a:
            break
        state = state + np.array([float(sp.N(v.xreplace(subs))) for v in p.jump])
        f_fn = numeric_function(t, list(p.f.xreplace(subs)), "numpy")
        exact = numeric_solution([e.xreplace(subs) for e in p.x], t)
        count = max(4, int(points * (b - a) / max(t_end - t0, 1e-9)))
        grid = np.linspace(a, b, count)

        def rhs(tt: float, yy: np.ndarray) -> np.ndarray:
            return A @ yy + np.array(f_fn(tt), dtype=float).reshape(-1)

        sol = solve_ivp(rhs, (a, b), state, method="DOP853", rtol=RTOL, atol=ATOL, t_eval=grid)
        if not sol.success:
            raise NumericSkipped(f"the integrator stopped: {sol.message}")
        ref = np.array([exact(tt) for tt in grid]).T
        worst_abs = max(worst_abs, float(np.max(np.abs(sol.y - ref))))
        scale = max(scale, float(np.max(np.abs(ref))))
        total += count
        state = sol.y[:, -1]
    rel = worst_abs / scale
    return NumericCheck(
        method="scipy solve_ivp DOP853, restarted at each switch",
        t_start=t0,
        t_end=t_end,
        points=total,
        rtol=RTOL,
        atol=ATOL,
        max_abs_gap=worst_abs,
        max_rel_gap=rel,
        ok=bool(math.isfinite(rel) and rel <= GAP_LIMIT),
    )


def verify_pieces(
    system: System,
    pieces: Sequence[PieceRecord],
    *,
    constants: Sequence[sp.Symbol] = (),
    eigenvalues: Sequence[sp.Expr] = (),
    numeric: bool = True,
) -> Verification:
    """Residual on every interval, continuity (or the jump) at every switch, x(t0), numerics.

    A mismatch at a switch counts against the residual: x' - A x - f, taken
    as a distribution, carries a delta there.

    >>> t = sp.Symbol("t")
    >>> sys_ = System(A=sp.ImmutableMatrix([[-1]]), f=sp.ImmutableMatrix([1]), t=t, states=(sp.Symbol("x"),),
    ...               x0=sp.ImmutableMatrix([0]))
    >>> piece = PieceRecord(0, None, sp.ImmutableMatrix([1]), sp.ImmutableMatrix([1 - sp.exp(-t)]), sp.ImmutableMatrix([0]))
    >>> verify_pieces(sys_, [piece]).ok
    True
    """
    t = system.t
    A = sp.Matrix(system.A)
    zero = True
    methods: list[str] = []
    reduced: list[list[sp.Expr]] = [[] for _ in range(system.n)]
    notes: list[str] = []
    for k, p in enumerate(pieces):
        if residual_is_zero(list(p.x), A, list(p.f), t):
            # settled exactly in the polynomial ring (derive.ringcheck)
            methods.append("exact")
            for i in range(system.n):
                reduced[i].append(_ZERO)
            continue
        r = sp.Matrix(p.x).diff(t) - A * sp.Matrix(p.x) - sp.Matrix(p.f)
        for i, e in enumerate(r):
            ok, how = _zero(e)
            methods.append(how)
            zero = zero and ok
            reduced[i].append(_ZERO if ok else sp.expand(e))
    for k in range(1, len(pieces)):
        a = pieces[k].start
        gap = [pieces[k].x[i].subs(t, a) - pieces[k - 1].x[i].subs(t, a) - pieces[k].jump[i] for i in range(system.n)]
        verdicts = [_zero(e) for e in gap]
        methods += [v[1] for v in verdicts]
        if all(v[0] for v in verdicts):
            what = "the prescribed jump" if any(e != 0 for e in pieces[k].jump) else "continuity"
            notes.append(f"At t = {sp.sstr(a)}: {what} x(t+) = x(t-)" + (" + b" if what != "continuity" else "") + " holds exactly.")
        else:
            zero = False
            notes.append(f"At t = {sp.sstr(a)}: the pieces do NOT join: x(t+) - x(t-) - b = {sp.sstr(sp.Matrix(gap).T)}.")
    if len(pieces) > 1:
        # the residual of a solution given per interval is reported per interval
        residual = Matrix([
            sp.Piecewise(*[(v, t < pieces[k + 1].start) for k, v in enumerate(col[:-1])], (col[-1], True))
            if any(v != 0 for v in col) else _ZERO
            for col in reduced
        ])
    else:
        residual = Matrix([col[0] for col in reduced])
    method = combined_method(methods)
    init_res = None
    init_ok = None
    if system.x0 is not None:
        first = pieces[0]
        diffs = [sp.expand(_drop_empty_integrals(first.x[i].subs(t, system.t0)) - system.x0[i] - first.jump[i]) for i in range(system.n)]
        verdicts = [_zero(d) for d in diffs]
        init_ok = all(v[0] for v in verdicts)
        init_res = Matrix([0 if v[0] else d for v, d in zip(verdicts, diffs)])
        if any(e != 0 for e in first.jump):
            notes.append("The impulse at t0 acts on x0: the check is x(t0+) = x0 + b.")
    num = None
    if numeric:
        try:
            num = _numeric_pieces(system, pieces, constants=constants, eigenvalues=eigenvalues)
        except NumericSkipped as why:
            notes.append(f"numeric integration not run: {why}")
    return Verification(
        residual=residual,
        residual_zero=zero,
        residual_method=method,
        initial_residual=init_res,
        initial_ok=init_ok,
        numeric=num,
        similarity_ok=True,
        notes=tuple(notes),
    )
