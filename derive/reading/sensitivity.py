"""Exact parameter sensitivities of the closed form, and the tolerance band of the response.

Both use the closed form as it stands: a sensitivity is its derivative with
respect to a parameter; the band evaluates it at the corners of the
tolerance box, compiled once with the parameters as arguments, instead of
solving the system again at every corner.
"""

from __future__ import annotations

import itertools
from typing import Mapping, Sequence

import numpy as np
import sympy as sp

from ..errors import InputError
from ..exact import numeric_function
from ..model import Solution, Tolerance
from .evaluation import at_values, has_all_values, numeric_series, parameter_symbol, reading_values
from .reading import plot_span
from .records import Envelope, Sensitivity

__all__ = ["sensitivity", "envelope", "tolerance_envelope", "sensitivities", "SENSITIVITY_POINTS"]

#: Samples over the span on which the largest magnitude of a sensitivity is found.
SENSITIVITY_POINTS = 241


def sensitivity(solution: Solution, parameter: sp.Symbol | str) -> sp.ImmutableMatrix:
    """d x / d p of the closed form, each term simplified on its own.

    >>> import derive
    >>> k = sp.Symbol("k", positive=True)
    >>> t = sp.Symbol("t")
    >>> sensitivity(derive.solve([[-k]], x0=[1], t=t), k)
    Matrix([[-t*exp(-k*t)]])
    """
    p = parameter_symbol(solution, parameter)
    return sp.ImmutableMatrix([_derivative(e, p, None) for e in solution.x])


def _derivative(e: sp.Expr, p: sp.Symbol, tidy_up_to: int | None) -> sp.Expr:
    """de/dp; the product rule's terms simplified one by one, when it has at most ``tidy_up_to`` operations (None: always)."""
    d = sp.diff(e, p)
    if tidy_up_to is not None and sp.count_ops(d) > tidy_up_to:
        return d  # a long form is read in numbers; simplifying it costs seconds and rarely shortens it
    return sp.Add(*[sp.simplify(term) for term in sp.Add.make_args(d)])


def envelope(
    solution: Solution,
    tolerances: Mapping[sp.Symbol | str, object],
    *,
    span: float | None = None,
    points: int = 200,
    values: Mapping[sp.Basic, object] | None = None,
    levels: int = 2,
) -> Envelope:
    """Least and greatest value of each state over the corners p*(1 +- tolerance) of the box.

    ``tolerances`` maps a parameter (Symbol or name) to its relative
    tolerance, e.g. ``{k: Rational(5, 100)}``, or to a ``Tolerance``
    (relative or absolute); the other parameters keep their values.  The
    closed form is compiled once and evaluated at every corner.  ``span``
    defaults to the reading's plot span.  With ``levels = 3`` the box is also
    sampled inside, at the 3^n grid of lower, declared and upper values: the
    band then holds those sets too, and ``Envelope.beyond`` says how far the
    furthest of them lay outside the corners' range (0 when the response is
    monotone in each parameter there).  The declared values are always one
    of the inside sets.

    >>> import derive
    >>> tau, t = sp.Symbol("tau", positive=True), sp.Symbol("t")
    >>> band = envelope(derive.solve([[-1/tau]], [1/tau], x0=[0], t=t, params={tau: 2}), {tau: sp.Rational(1, 10)}, points=3)
    >>> band.corners, [round(float(v), 4) for v in band.lower["x_1"]]
    (2, [0.0, 0.897, 0.9894])
    """
    if levels not in (2, 3):
        raise InputError(f"levels is {levels!r}; expected 2 (the corners) or 3 (the corners and a grid inside)", key="levels")
    base = reading_values(solution, values)
    sy = solution.system
    toleranced = [(parameter_symbol(solution, p), r) for p, r in tolerances.items()]
    missing = [p for p, _ in toleranced if p not in base]
    if missing:
        raise InputError(f"the parameter {missing[0]} has no value to put a tolerance on", key="tolerance")
    half = [
        (p, r.half_width(base[p]) if isinstance(r, Tolerance) else abs(base[p]) * sp.nsimplify(r, rational=True))
        for p, r in toleranced
    ]
    varied = [p for p, _ in toleranced]
    fixed = {s: v for s, v in base.items() if s not in varied}
    width = span if span is not None else plot_span(solution, values=base)
    if width is None or width <= 0:
        raise InputError(f"the span must be a positive time, got {width}", key="span")
    t0 = float(sp.N(sp.sympify(sy.t0, strict=True).xreplace(base)))
    times = np.linspace(t0, t0 + width, points)
    exprs = [e.xreplace(fixed) for e in solution.x]
    fn = numeric_function((sy.t, *varied), exprs, "numpy")
    grid = times.astype(complex)
    names = [s.name for s in sy.states]
    nominal = _rows(fn, grid, [complex(sp.N(base[p])) for p in varied])
    if not np.all(np.isfinite(nominal)):
        nominal = _resolved(solution, base, times)
    ranges = tuple((p, base[p] - h, base[p] + h) for p, h in half)

    def at(point: Sequence[sp.Expr]) -> np.ndarray:
        rows = _rows(fn, grid, [complex(sp.N(v)) for v in point])
        if not np.all(np.isfinite(rows)):  # the closed form is singular at this point
            rows = _resolved(solution, {**base, **dict(zip(varied, point))}, times)
        return rows

    corners = list(itertools.product(*[(lo, hi) for _, lo, hi in ranges]))
    lower = upper = nominal
    for k, corner in enumerate(corners):
        rows = at(corner)
        lower, upper = (rows, rows) if k == 0 else (np.minimum(lower, rows), np.maximum(upper, rows))
    inside = [nominal]
    if levels == 3:
        declared = tuple(base[p] for p in varied)
        for point in itertools.product(*[(lo, base[p], hi) for p, lo, hi in ranges]):
            # the corners are done; the declared values are the nominal curve
            if point != declared and any(v == d for v, d in zip(point, declared)):
                inside.append(at(point))
    beyond = max(float(np.max(np.maximum(lower - rows, rows - upper))) for rows in inside)
    for rows in inside:
        lower, upper = np.minimum(lower, rows), np.maximum(upper, rows)
    return Envelope(
        times,
        {n: lower[i] for i, n in enumerate(names)},
        {n: upper[i] for i, n in enumerate(names)},
        {n: nominal[i] for i, n in enumerate(names)},
        len(corners),
        ranges,
        len(inside),
        max(beyond, 0.0),
    )


def tolerance_envelope(
    solution: Solution, *, span: float | None = None, points: int = 200, values: Mapping[sp.Basic, object] | None = None,
) -> Envelope | None:
    """The envelope over the tolerances declared on the parameters (``Parameter.tolerance``); None without any.

    Only parameters that appear in the closed form count: a value put into
    the algebra (``substitute``) leaves nothing to vary.
    """
    free = solution.x.free_symbols
    declared = {p.symbol: p.tolerance for p in solution.system.params if p.tolerance is not None and p.symbol in free}
    if not declared:
        return None
    return envelope(solution, declared, span=span, points=points, values=values, levels=3)


def sensitivities(
    solution: Solution,
    *,
    span: float | None,
    fractions: Sequence[float] = (0.25, 0.5, 1.0),
    values: Mapping[sp.Basic, object] | None = None,
    tidy_up_to: int | None = None,
) -> tuple[Sensitivity, ...]:
    """dx/dp for every parameter of the closed form, exact and read at the values at ``t0 + fraction*span``.

    Without a span or without a value for every parameter, only the exact
    forms are given (no times, values or peaks).  ``tidy_up_to`` leaves a
    derivative of more operations as differentiated (see :func:`sensitivity`).

    >>> import derive
    >>> k, t = sp.Symbol("k", positive=True), sp.Symbol("t")
    >>> (s,) = sensitivities(derive.solve([[-k]], x0=[1], t=t, params={k: 1}), span=2.0, fractions=(0.5,))
    >>> s.exact, [round(v, 4) for v in s.values["x_1"]], [round(v, 4) for v in s.peak["x_1"]]
    (Matrix([[-t*exp(-k*t)]]), [-0.3679], [1.0, -0.3679])
    """
    sub = reading_values(solution, values)
    sy = solution.system
    free = solution.x.free_symbols
    chosen = [q.symbol for q in sy.params if q.symbol in free]
    exact = {p: sp.ImmutableMatrix([_derivative(e, p, tidy_up_to) for e in solution.x]) for p in chosen}
    if span is None or not has_all_values(solution, sub):
        return tuple(Sensitivity(p, exact[p], (), {}, {}) for p in chosen)
    t0 = float(sp.N(sp.sympify(sy.t0, strict=True).xreplace(sub)))
    names = [s.name for s in sy.states]
    grid = np.linspace(t0, t0 + span, SENSITIVITY_POINTS)
    at = np.array([t0 + f * span for f in fractions])
    out = []
    for p in chosen:
        series = numeric_series([e.xreplace(sub) for e in exact[p]], sy.t)
        dense, sampled = series(grid), series(at)
        peaks = {}
        for i, n in enumerate(names):
            k = int(np.argmax(np.abs(dense[i])))
            peaks[n] = (float(grid[k]), float(dense[i][k]))
        out.append(Sensitivity(p, exact[p], tuple(map(float, at)), {n: tuple(map(float, sampled[i])) for i, n in enumerate(names)}, peaks))
    return tuple(out)


def _rows(fn, grid: np.ndarray, args: Sequence[complex]) -> np.ndarray:
    with np.errstate(all="ignore"):
        got = fn(grid, *args)
    return np.vstack([np.real(np.broadcast_to(np.asarray(r, dtype=complex), grid.shape)) for r in got])


def _resolved(solution: Solution, values: Mapping[sp.Symbol, sp.Expr], times: np.ndarray) -> np.ndarray:
    x = at_values(solution, values)
    return numeric_series(list(x), solution.system.t)(times)
