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
from ..model import Solution
from .evaluation import at_values, numeric_series, parameter_symbol, reading_values
from .reading import plot_span
from .records import Envelope

__all__ = ["sensitivity", "envelope"]


def sensitivity(solution: Solution, parameter: sp.Symbol | str) -> sp.ImmutableMatrix:
    """d x / d p of the closed form, each term simplified on its own.

    >>> import derive
    >>> k = sp.Symbol("k", positive=True)
    >>> t = sp.Symbol("t")
    >>> sensitivity(derive.solve([[-k]], x0=[1], t=t), k)
    Matrix([[-t*exp(-k*t)]])
    """
    p = parameter_symbol(solution, parameter)
    rows = []
    for e in solution.x:
        d = sp.diff(e, p)
        rows.append(sp.Add(*[sp.simplify(term) for term in sp.Add.make_args(d)]))  # the product rule's terms, one by one
    return sp.ImmutableMatrix(rows)


def envelope(
    solution: Solution,
    tolerances: Mapping[sp.Symbol | str, object],
    *,
    span: float | None = None,
    points: int = 200,
    values: Mapping[sp.Basic, object] | None = None,
) -> Envelope:
    """Least and greatest value of each state over the corners p*(1 +- tolerance) of the box.

    ``tolerances`` maps a parameter (Symbol or name) to its relative
    tolerance, e.g. ``{k: Rational(5, 100)}``; the other parameters keep their
    values.  The closed form is compiled once and evaluated at every corner.
    ``span`` defaults to the reading's plot span.
    """
    base = reading_values(solution, values)
    sy = solution.system
    toleranced = [(parameter_symbol(solution, p), sp.nsimplify(r, rational=True)) for p, r in tolerances.items()]
    missing = [p for p, _ in toleranced if p not in base]
    if missing:
        raise InputError(f"the parameter {missing[0]} has no value to put a tolerance on", key="tolerance")
    varied = [p for p, _ in toleranced]
    fixed = {s: v for s, v in base.items() if s not in varied}
    width = span if span is not None else plot_span(solution, values=base)
    if width is None or width <= 0:
        raise InputError(f"the span must be a positive time, got {width}", key="span")
    t0 = float(sp.N(sp.sympify(sy.t0).xreplace(base)))
    times = np.linspace(t0, t0 + width, points)
    exprs = [e.xreplace(fixed) for e in solution.x]
    fn = numeric_function((sy.t, *varied), exprs, "numpy")
    grid = times.astype(complex)
    names = [s.name for s in sy.states]
    nominal = _rows(fn, grid, [complex(sp.N(base[p])) for p in varied])
    if not np.all(np.isfinite(nominal)):
        nominal = _resolved(solution, base, times)
    lower, upper = nominal.copy(), nominal.copy()
    corners = list(itertools.product(*[(base[p] * (1 - r), base[p] * (1 + r)) for p, r in toleranced]))
    for corner in corners:
        rows = _rows(fn, grid, [complex(sp.N(v)) for v in corner])
        if not np.all(np.isfinite(rows)):  # the closed form is singular at this corner
            rows = _resolved(solution, {**base, **dict(zip(varied, corner))}, times)
        lower, upper = np.minimum(lower, rows), np.maximum(upper, rows)
    return Envelope(
        times,
        {n: lower[i] for i, n in enumerate(names)},
        {n: upper[i] for i, n in enumerate(names)},
        {n: nominal[i] for i, n in enumerate(names)},
        len(corners),
    )


def _rows(fn, grid: np.ndarray, args: Sequence[complex]) -> np.ndarray:
    with np.errstate(all="ignore"):
        got = fn(grid, *args)
    return np.vstack([np.real(np.broadcast_to(np.asarray(r, dtype=complex), grid.shape)) for r in got])


def _resolved(solution: Solution, values: Mapping[sp.Symbol, sp.Expr], times: np.ndarray) -> np.ndarray:
    x = at_values(solution, values)
    return numeric_series(list(x), solution.system.t)(times)
