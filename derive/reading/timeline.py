"""Step-response figures of each state and sampled data for figures, from the exact closed form.

Definitions (x0 = x(t0), xf the final value, change = xf - x0):

- final value: the limit of x(t) as t -> oo, decided exactly from the
  closed form after the last switch (every term with t must decay); None when
  a term persists (an undamped oscillation, a forcing that does not settle)
  or grows.
- peak: among the turning points (x' = 0) and the switch times in
  (t0, t0 + span], the one farthest from x0 in the direction of the change
  (farthest in either direction when the state ends where it started or has
  no final value); None when the state only approaches its final value
  without passing it, grows without bound, or never moves.
- overshoot: (x_peak - xf)/(xf - x0), when xf != x0 and a peak exists.
- settling time: the last time |x(t) - xf| equals 2 % of |xf - x0| (2 % of
  the largest excursion when xf = x0), minus t0; 0 for a state that never
  moves.
- rise time: the time between the first crossings of x0 + 0.1 change and
  x0 + 0.9 change.

Crossings are bracketed on a dense sample of the closed form (at least 40
points per period and 20 per time constant of every mode) and refined with
bisection, all brackets at once, to 1e-12 relative.
"""

from __future__ import annotations

import math
from typing import Callable, Mapping, Sequence

import numpy as np
import sympy as sp

from ..model import Solution
from ..rootring import atoms_of, contains, replace_atoms
from .evaluation import approx, decided_sign, numeric_series, with_root_values
from .records import Mode, Samples, StateReading

__all__ = ["final_value", "state_readings", "sample_solution"]

_BAND = 0.02


def final_value(expr: sp.Expr, t: sp.Symbol) -> tuple[str, sp.Expr | None]:
    """("converges", limit), ("bounded", None), ("unbounded", None) or ("unknown", None) as t -> oo.

    >>> t = sp.Symbol("t")
    >>> final_value(1 - sp.exp(-t) + t * sp.exp(-2 * t), t), final_value(sp.sin(t), t)[0]
    (('converges', 1), 'bounded')
    """
    if not (isinstance(expr, sp.Piecewise) and not any(contains(v, sp.Piecewise) for v, _ in expr.args)):
        expr = sp.piecewise_fold(expr)  # folding a plain Piecewise walks every root: only when nested
    if isinstance(expr, sp.Piecewise):
        expr = expr.args[-1][0]  # the branch after the last switch
    # expand opens every indexed root again at every node (seconds on a 6-state chain): it works on
    # stand-in symbols, and each term gets its roots back, so the limit is the same exact number
    stand = {r: sp.Dummy("root") for r in atoms_of(expr, sp.CRootOf)}
    back = {v: k for k, v in stand.items()}
    timed: dict[sp.Expr, list[sp.Expr]] = {}
    for term in sp.Add.make_args(replace_atoms(expr, stand)):
        # only the factors in t are expanded: the coefficients (large polynomials in the roots)
        # are expanded where the verdict needs them, never for a decaying mode
        factors = sp.Mul.make_args(term)
        c = sp.Mul(*[f for f in factors if not f.has(t)])
        g = sp.expand(sp.Mul(*[f for f in factors if f.has(t)]), power_exp=False)
        for h in sp.Add.make_args(g):
            hf = sp.Mul.make_args(h)
            timed.setdefault(sp.Mul(*[f for f in hf if f.has(t)]), []).append(c * sp.Mul(*[f for f in hf if not f.has(t)]))
    constant = sp.Integer(0)
    verdict = "converges"
    for part, coeffs in timed.items():
        if part == 1:
            for term in sp.Add.make_args(sp.expand(sp.Add(*coeffs), power_exp=False)):
                constant += replace_atoms(term, back)
            continue
        kind = _term_kind(replace_atoms(part, back), t)
        if kind == "decays" or sp.expand(sp.Add(*coeffs), power_exp=False) == 0:
            continue
        if kind == "unknown" or kind == "unbounded":
            return kind, None
        if kind == "bounded":
            verdict = "bounded"
    return (verdict, sp.simplify(constant)) if verdict == "converges" else (verdict, None)


def _term_kind(term: sp.Expr, t: sp.Symbol) -> str:
    rate, power = sp.Integer(0), 0
    for factor in sp.Mul.make_args(term):
        if not factor.has(t):
            continue
        base, exp = factor.as_base_exp()
        if base == t and exp.is_Integer and exp > 0:
            power += int(exp)
        elif isinstance(base, sp.exp) or base == sp.E:
            arg = (base.args[0] if isinstance(base, sp.exp) else sp.Integer(1)) * exp
            slope = sp.diff(arg, t)
            if slope.has(t):
                return "unknown"
            rate += slope
        elif isinstance(factor, (sp.sin, sp.cos)) and not sp.diff(factor.args[0], t).has(t):
            continue
        else:
            return "unknown"
    sign = decided_sign(sp.re(rate))
    if sign is None:
        return "unknown"
    if sign < 0:
        return "decays"
    return "bounded" if sign == 0 and power == 0 else "unbounded"


def _grid_step(modes: Sequence[Mode], span: float) -> float:
    step = span / 2000
    for m in modes:
        omega = abs(approx(m.eigenvalue).imag)
        if omega > 0:
            step = min(step, 2 * math.pi / omega / 40)
        if m.time_constant is not None:
            step = min(step, abs(approx(m.time_constant)) / 20)
    return max(step, span / 200_000)


class _Curve:
    """One state's closed form on [t0, end], sampled piece by piece between the switch times."""

    def __init__(self, x: sp.Expr, t: sp.Symbol, t0: float, breaks: Sequence[float], step: float) -> None:
        # the rate differentiated with the roots' decimals in (sympy's diff opens every indexed root)
        x = with_root_values(x)
        self.fn: Callable[[np.ndarray], np.ndarray] = numeric_series([x, sp.diff(x, t)], t)
        self.t0 = t0
        self.breaks = [b for b in breaks if b > t0]
        self.step = step

    def value(self, when: float, row: int = 0) -> float:
        return float(self.fn(np.array([when]))[row][0])

    def pieces(self, end: float) -> list[tuple[np.ndarray, np.ndarray]]:
        edges = [self.t0] + [b for b in self.breaks if b < end] + [end]
        out = []
        for a, b in zip(edges, edges[1:]):
            if b <= a:
                continue
            left = b - 1e-12 * max(1.0, abs(b)) if b != end else b  # the left limit at a switch
            n = max(3, int(math.ceil((b - a) / self.step)) + 1)
            times = np.linspace(a, left, n)
            out.append((times, self.fn(times)))
        return out

    def crossings(self, end: float, level: float, row: int = 0) -> list[float]:
        """Every time the state (row 0) or its rate (row 1) crosses ``level``, in order."""
        found: list[float] = []
        for times, rows in self.pieces(end):
            g = rows[row] - level
            at = np.nonzero(g[:-1] == 0)[0]
            inside = np.nonzero(g[:-1] * g[1:] < 0)[0]
            refined = self.refine(times[inside], times[inside + 1], level, row)
            found += sorted([float(times[i]) for i in at] + [float(s) for s in refined])
        return found

    def refine(self, lo: np.ndarray, hi: np.ndarray, level: float, row: int = 0) -> np.ndarray:
        """The crossings of ``level`` inside the brackets [lo, hi] (a sign change in each), all at once.

        Bisection on arrays: one evaluation of the closed form per halving for
        every bracket together (a bracket at a time, the evaluations dominated
        the reading of a 6-state chain), to 1e-13 plus 1e-12 relative.
        """
        lo, hi = np.array(lo, dtype=float), np.array(hi, dtype=float)
        if not lo.size:
            return lo
        g_lo = self.fn(lo)[row] - level
        while True:
            open_ = np.abs(hi - lo) > 1e-13 + 1e-12 * np.maximum(np.abs(lo), np.abs(hi))
            if not open_.any():
                break
            mid = np.where(open_, 0.5 * (lo + hi), lo)
            g_mid = self.fn(mid)[row] - level
            left = open_ & (np.sign(g_mid) != np.sign(g_lo))  # the crossing is in [lo, mid]
            right = open_ & ~left
            hi = np.where(left, mid, hi)
            lo, g_lo = np.where(right, mid, lo), np.where(right, g_mid, g_lo)
        return 0.5 * (lo + hi)


def state_readings(
    solution: Solution,
    x: sp.ImmutableMatrix,
    *,
    modes: Sequence[Mode],
    span: float,
    breaks: Sequence[float],
    values: Mapping[sp.Symbol, sp.Expr],
) -> dict[str, StateReading]:
    """The figures of every state of an initial value problem with every value given (see the module text)."""
    t = solution.system.t
    t0 = approx(sp.sympify(solution.system.t0, strict=True).xreplace(dict(values))).real
    step = _grid_step(modes, span)
    out: dict[str, StateReading] = {}
    x0 = solution.system.x0
    for i, (name, xi) in enumerate(zip((s.name for s in solution.system.states), x)):
        curve = _Curve(xi, t, t0, breaks, step)
        start = x0[i].xreplace(dict(values)) if x0 is not None else None
        out[name] = _reading(curve, xi, t, t0 + span, span, start)
    return out


def _reading(curve: _Curve, xi: sp.Expr, t: sp.Symbol, end: float, span: float, start: sp.Expr | None) -> StateReading:
    x0 = approx(start).real if start is not None and not start.free_symbols else curve.value(curve.t0)
    kind, exact_final = final_value(xi, t)
    final = approx(exact_final).real if exact_final is not None else None
    change = (final - x0) if final is not None else 0.0
    scale = max(abs(x0), abs(final or 0.0), 1.0)
    moving = final is not None and abs(change) > 1e-12 * scale
    turning = np.array([s for s in curve.crossings(end, 0.0, row=1) if s > curve.t0], dtype=float)
    # one evaluation for every turning point together
    candidates = list(zip(turning.tolist(), curve.fn(turning)[0].tolist())) if turning.size else []
    for b in curve.breaks:
        if b < end:
            candidates += [(b, curve.value(b - 1e-12 * max(1.0, abs(b)))), (b, curve.value(b))]
    direction = math.copysign(1.0, change) if moving else 0.0

    def deviation(v: float) -> float:
        return direction * (v - x0) if direction else abs(v - x0)

    peak = max(candidates, key=lambda c: deviation(c[1]), default=None)
    if peak is not None:
        beyond = abs(change) if moving else 0.0
        if kind == "unbounded" or kind == "unknown" or deviation(peak[1]) <= beyond + 1e-12 * scale:
            peak = None
    overshoot = (peak[1] - final) / change if (peak is not None and moving and final is not None) else None
    rise = None
    if moving and final is not None:
        low = curve.crossings(end, x0 + 0.1 * change)
        high = curve.crossings(end, x0 + 0.9 * change)
        if low and high:
            rise = high[0] - low[0]
    settling = _settling(curve, final, x0, peak, moving, end, span) if final is not None else None
    return StateReading(x0, final, exact_final, peak, overshoot, settling, rise)


def _settling(curve: _Curve, final: float, x0: float, peak, moving: bool, end: float, span: float) -> float | None:
    reach = abs(final - x0) if moving else (abs(peak[1] - x0) if peak is not None else 0.0)
    if reach == 0.0:
        return 0.0
    band = _BAND * reach
    for _ in range(12):  # extend the window until the state stays well inside the band
        tail = np.linspace(end - 0.25 * span, end, 400)
        if np.max(np.abs(curve.fn(tail)[0] - final)) < 0.5 * band:
            break
        end += span
    last = None
    for times, rows in curve.pieces(end):
        outside = np.nonzero(np.abs(rows[0] - final) > band)[0]
        if outside.size:
            last = (times, rows[0], int(outside[-1]))
    if last is None:
        return 0.0
    times, values, i = last
    if i + 1 >= len(times):
        return float(times[i]) - curve.t0  # it enters the band by a jump at a switch
    level = final + math.copysign(band, values[i] - final)
    when = float(curve.refine(times[i : i + 1], times[i + 1 : i + 2], level)[0])
    return when - curve.t0


def sample_solution(
    solution: Solution,
    x: sp.ImmutableMatrix,
    names: Sequence[str],
    *,
    start: float,
    span: float,
    points: int,
    switches: Sequence[float],
    impulses: Sequence[float],
) -> Samples:
    """The states ``names`` of ``x`` at ``points`` even times and at each switch (twice at an impulse)."""
    index = {s.name: i for i, s in enumerate(solution.system.states)}
    fn = numeric_series([x[index[n]] for n in names], solution.system.t)
    end = start + span
    inside = [s for s in switches if start < s <= end]
    times = np.unique(np.concatenate([np.linspace(start, end, points), np.array(inside, dtype=float)]))
    at = times.copy()
    for s in impulses:
        if start < s <= end:
            k = int(np.searchsorted(times, s))
            times = np.insert(times, k, s)
            at = np.insert(at, k, s - 1e-12 * max(1.0, abs(s)))  # the value just before the jump
    rows = fn(at)
    values: Mapping[str, np.ndarray] = {n: rows[i] for i, n in enumerate(names)}
    return Samples(times, values, tuple(float(s) for s in switches), tuple(float(s) for s in impulses))
