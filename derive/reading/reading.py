"""``response`` and ``samples``: the engineering reading of a solution, and its data for figures."""

from __future__ import annotations

import math
from typing import Mapping, Sequence

import sympy as sp

from ..errors import InputError
from ..model import Solution
from .evaluation import at_values, has_all_values, reading_values, switch_and_impulse_times
from .modes import modes_of, time_span
from .records import Mode, Response, Samples
from .sinusoid import sinusoidal_input, sinusoidal_reading
from .stability import classify
from .timeline import sample_solution, state_readings

__all__ = ["response", "samples", "plot_span"]


def response(solution: Solution, *, values: Mapping[sp.Basic, object] | None = None) -> Response:
    """The reading of ``solution``: stability, modes, per-state figures, sinusoidal response, time span.

    ``values`` maps parameters (Symbols or names) to values, over the
    declared ones; without any, the reading is exact in the symbols.

    >>> import derive
    >>> r = response(derive.solve([[-1]], [1], x0=[0]))
    >>> str(r.stability), r.modes[0].time_constant, r.states["x_1"].final_value
    ('asymptotically stable', 1, 1.0)
    """
    sub = reading_values(solution, values)
    stability = classify(solution, sub)
    modes = modes_of(solution, sub)
    numeric = has_all_values(solution, sub)
    span = _span(solution, sub, modes) if numeric else None
    states = {}
    if numeric and solution.system.is_ivp and span is not None:
        switches, _impulses = switch_and_impulse_times(solution, sub)
        states = state_readings(solution, at_values(solution, sub), modes=modes, span=span, breaks=switches, values=sub)
    return Response(
        stability=stability.kind,
        reason=stability.reason,
        conditions=stability.conditions,
        modes=modes,
        states=states,
        sinusoidal=sinusoidal_reading(solution, sub),
        span=span,
        values=sub,
    )


def plot_span(solution: Solution, *, values: Mapping[sp.Basic, object] | None = None) -> float | None:
    """The time span of a figure: about five slowest time constants after the last switch (None with symbols).

    >>> import derive
    >>> plot_span(derive.solve([[-2]], x0=[1]))
    2.5
    """
    sub = reading_values(solution, values)
    if not has_all_values(solution, sub):
        return None
    return _span(solution, sub, modes_of(solution, sub))


def _span(solution: Solution, sub: dict[sp.Symbol, sp.Expr], modes: tuple[Mode, ...]) -> float | None:
    switches, _ = switch_and_impulse_times(solution, sub)
    t0 = float(sp.N(sp.sympify(solution.system.t0, strict=True).xreplace(sub)))
    last = max([s - t0 for s in switches if s > t0], default=0.0)
    found = sinusoidal_input(solution.system.f.xreplace(sub), solution.system.t)
    frequency = float(sp.N(found[0])) if found is not None else None
    return time_span(modes, last_switch=last, forcing_frequency=frequency)


def samples(
    solution: Solution,
    states: Sequence[str] | None = None,
    *,
    span: float | None = None,
    points: int = 200,
    values: Mapping[sp.Basic, object] | None = None,
) -> Samples:
    """The exact solution at ``points`` even times over [t0, t0 + span], plus the switch and impulse times.

    Unpacks as ``times, values``; ``.switches`` and ``.impulses`` carry the
    marks for a figure.  ``span`` defaults to :func:`plot_span`.

    >>> import derive
    >>> times, values = samples(derive.solve([[-1]], x0=[1]), points=3, span=2.0)
    >>> [round(float(v), 6) for v in values["x_1"]]
    [1.0, 0.367879, 0.135335]
    """
    sub = reading_values(solution, values)
    if not has_all_values(solution, sub):
        missing = sorted(s.name for s in solution.x.free_symbols - set(sub) - {solution.system.t})
        raise InputError(f"the parameters {', '.join(missing)} need values to sample the solution", key="values")
    names = [s.name for s in solution.system.states]
    chosen = list(states) if states is not None else names
    unknown = [n for n in chosen if n not in names]
    if unknown:
        raise InputError(f"{unknown[0]!r} is not a state; expected one of {', '.join(names)}", key="states")
    width = span if span is not None else plot_span(solution, values=sub)
    if width is None or not math.isfinite(width) or width <= 0:
        raise InputError(f"the span must be a positive time, got {width}", key="span")
    switches, impulses = switch_and_impulse_times(solution, sub)
    start = float(sp.N(sp.sympify(solution.system.t0, strict=True).xreplace(sub)))
    return sample_solution(
        solution,
        at_values(solution, sub),
        chosen,
        start=start,
        span=float(width),
        points=points,
        switches=switches,
        impulses=impulses,
    )
