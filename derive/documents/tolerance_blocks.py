"""The reading's parts on request: exact sensitivities dx/dp, and the tolerance band of the response.

``[reading] sensitivities = true`` (``SolveOptions.sensitivities``) adds the
part "Sensitivities": for each parameter of the closed form, dx_i/dp exact
where it is short, and in numbers at the declared values at a quarter, half
and the whole of the figure's span, with the largest magnitude over the span
and when it occurs.  That is what an engineer reads for which parameter
matters when; a long exact form is left to the JSON record.

A ``tolerance`` on a parameter adds the band: the least and greatest value
of each state over the corners of the tolerance box, drawn shaded under the
curves of the response figure, with a sentence saying which corners made it
and a table of the widest band per state.

Both run under their own time guard: when they run out of time or raise a
``DeriveError`` the sheet says so in one sentence and keeps the rest of the
reading.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import sympy as sp

from ..errors import DeriveError
from ..limits import LimitExpired, inner_limit
from ..model import Solution
from ..reading import Envelope, Sensitivity, sensitivities, tolerance_envelope
from ..render.escape import spoken
from ..render.printing import greek_text
from .blocks import Block, Eq, Heading, Inline, Math, N, Name, P, Series, Table
from .reading_numbers import decimal_name

__all__ = ["ReadingExtras", "read_extras", "band_series", "band_blocks", "sensitivity_blocks", "extras_record",
           "EXTRA_SECONDS", "EXACT_OPS"]

#: Seconds the sensitivities, and separately the band, may take before they are left out.
EXTRA_SECONDS = 15.0
#: An exact sensitivity of at most this many operations is shown on the sheet; longer ones only in the JSON record.
EXACT_OPS = 24


@dataclass(frozen=True)
class ReadingExtras:
    """What was asked beyond the reading, and what came of it (``notes``: why a part was left out)."""

    asked: bool = False
    sensitivities: tuple[Sensitivity, ...] = ()
    band: Envelope | None = None
    points: int = 0
    notes: tuple[str, ...] = ()


def _guarded(what: str, fn: Any) -> tuple[Any, str]:
    try:
        with inner_limit(EXTRA_SECONDS):
            return fn(), ""
    except LimitExpired:
        return None, f"The {what} was left out: it took longer than {EXTRA_SECONDS:g} s."
    except DeriveError as exc:
        return None, f"The {what} was left out: {spoken(exc.message)}"


def read_extras(solution: Solution, *, span: float | None, points: int) -> ReadingExtras:
    """Sensitivities (when the case asks) and the tolerance band (when a parameter has a tolerance), each guarded."""
    options = solution.case.options if solution.case is not None else None
    asked = bool(options is not None and options.sensitivities)
    toleranced = any(p.tolerance is not None for p in solution.system.params)
    notes: list[str] = []
    found: tuple[Sensitivity, ...] = ()
    band = None
    if asked:
        got, note = _guarded("sensitivities part", lambda: sensitivities(solution, span=span, tidy_up_to=2 * EXACT_OPS))
        found, notes = (got or ()), notes + ([note] if note else [])
    if toleranced and span is not None and solution.system.is_ivp:
        band, note = _guarded("tolerance band", lambda: tolerance_envelope(solution, span=span, points=points))
        notes += [note] if note else []
    if (asked or toleranced) and solution.system.substituted:
        notes.append("The parameter values were put into the algebra, so the closed form holds no parameter to vary: "
                     "solve with the parameters as symbols for sensitivities and a tolerance band.")
    return ReadingExtras(asked, found, band, points, tuple(notes))


def band_series(band: Envelope) -> tuple[Series, ...]:
    """One shaded region per state (upper edge forward, lower edge back), coloured as the state's curve."""
    out = []
    for k, name in enumerate(band.upper):
        upper = list(zip(map(float, band.times), map(float, band.upper[name])))
        lower = list(zip(map(float, band.times), map(float, band.lower[name])))
        out.append(Series("tolerance band" if k == 0 else "", tuple(upper + lower[::-1]), "band", name))
    return tuple(out)


def _corners(band: Envelope) -> list[Inline]:
    parts: list[Inline] = []
    for k, (p, lo, hi) in enumerate(band.varied):
        parts += ([", "] if k else []) + [Math(p), " from ", decimal_name(lo), " to ", decimal_name(hi)]
    return parts


def band_blocks(solution: Solution, extras: ReadingExtras) -> list[Block]:
    """The sentences saying which parameter sets made the band and what they show, and the widest band per state."""
    band = extras.band
    if band is None:
        return []
    n = len(band.varied)
    words = "both ends" if n == 1 else f"all {band.corners} combinations of the lower and upper ends"
    inside = (
        "and at the declared values" if band.inside == 1
        else f"and at {band.inside} sets inside it (the grid of lower, declared and upper values, the declared ones among them)"
    )
    scale = max([1.0] + [float(abs(v).max()) for v in band.nominal.values()])
    if band.beyond <= 1e-9 * scale:
        verdict: list[Inline] = [
            "Every set inside the box lay within the range of the corners, as it does where each state is monotone in each "
            "parameter; the band's edges are then exact."
        ]
    else:
        verdict = [
            "Some sets inside the box lay outside the range of the corners, by up to ", decimal_name(band.beyond),
            ": a state is not monotone in every parameter over the box (a time constant or a frequency moves the "
            "response along the time axis), so the band can still miss a little of the true spread between the sets.",
        ]
    rows = []
    for s in solution.system.states:
        at, width = band.widest(s.name)
        rows.append(((Math(s),), (decimal_name(width),), (decimal_name(at),)))
    varied = {p for p, _, _ in band.varied}
    others = ", the other parameters at their values," if any(p.symbol not in varied for p in solution.system.params) else ","
    return [
        P("Tolerance band: the shaded band of the response figure is the least and greatest value of each state over ",
          words, " of ", *_corners(band), f" (the corners of the tolerance box) {inside}{others} evaluated on the "
          f"closed form at {extras.points} times. ", *verdict, " Widest band per state:"),
        Table(("State", "Widest band", "At time"), tuple(rows), align="lrr"),
    ]


def _partial(x: sp.Symbol, p: sp.Symbol) -> Name:
    return N(rf"\frac{{\partial {sp.latex(x)}}}{{\partial {sp.latex(p)}}}", f"∂{greek_text(x.name)}/∂{greek_text(p.name)}")


def _listed(names: list[Name]) -> list[Inline]:
    out: list[Inline] = []
    for k, name in enumerate(names):
        out += ([", "] if k else []) + [name]
    return out


def sensitivity_blocks(solution: Solution, extras: ReadingExtras) -> list[Block]:
    """The part "Sensitivities": exact short forms, then one table of numbers over the span."""
    if not extras.asked:
        return []
    out: list[Block] = [Heading(3, "Sensitivities")]
    found = extras.sensitivities
    if not found:
        if not extras.notes:
            out.append(P("The closed form holds no parameter: there is no sensitivity to read."))
        return out
    states = solution.system.states
    out.append(P("How much each state moves per unit change of each parameter: the derivative of the exact "
                 "solution with respect to the parameter, in the state's unit per the parameter's unit."))
    pairs = [(x, s.parameter, e) for s in found for x, e in zip(states, s.exact)]
    short = [(_partial(x, p), e) for x, p, e in pairs if e != 0 and sp.count_ops(e) <= EXACT_OPS]
    long_ = [_partial(x, p) for x, p, e in pairs if sp.count_ops(e) > EXACT_OPS]
    zero = [_partial(x, p) for x, p, e in pairs if e == 0]
    if short:
        out.append(Eq(tuple(short)))
    if long_:
        out.append(P("The exact forms of ", *_listed(long_), " are long: they are in the JSON record; their numbers follow."))
    if zero:
        out.append(P("Zero, as the state does not depend on the parameter: ", *_listed(zero), "."))
    numbered = [s for s in found if s.times]
    if not numbered:
        out.append(P("Give every parameter a value to read the sensitivities in numbers."))
        return out
    t = solution.system.t
    times = numbered[0].times
    header: tuple[Any, ...] = (
        "Parameter", "State",
        *((N(f"{sp.latex(t)} = {decimal_name(v).latex}", f"{t} = {decimal_name(v).plain}"),) for v in times),
        "Largest", "At time",
    )
    rows: list[tuple[tuple[Inline, ...], ...]] = []
    for s in numbered:
        for x, e in zip(states, s.exact):
            if e == 0:
                continue
            at, peak = s.peak[x.name]
            cells: list[tuple[Inline, ...]] = [(Math(s.parameter),), (Math(x),)]
            cells += [(decimal_name(v),) for v in s.values[x.name]] + [(decimal_name(peak),), (decimal_name(at),)]
            rows.append(tuple(cells))
    out.append(P("In numbers at the declared values; the column Largest is the value of greatest magnitude over the figure's span:"))
    out.append(Table(header, tuple(rows), align="ll" + "r" * (len(times) + 2)))
    return out


def extras_record(solution: Solution, extras: ReadingExtras) -> dict[str, Any]:
    """The sensitivities and the band for the JSON record (only the parts that were asked for)."""
    out: dict[str, Any] = {}
    names = [s.name for s in solution.system.states]
    if extras.asked:
        out["sensitivities"] = [
            {
                "parameter": s.parameter.name,
                "exact": dict(zip(names, s.exact)),
                "times": list(s.times),
                "values": {n: list(v) for n, v in s.values.items()},
                "largest": {n: {"time": at, "value": v} for n, (at, v) in s.peak.items()},
            }
            for s in extras.sensitivities
        ]
    if extras.band is not None:
        band = extras.band
        out["tolerance_band"] = {
            "corners": band.corners,
            "inside": band.inside,
            "beyond_corners": band.beyond,
            "varied": [{"parameter": p.name, "low": lo, "high": hi} for p, lo, hi in band.varied],
            "widest": {n: dict(zip(("time", "width"), band.widest(n))) for n in names},
        }
    if extras.notes:
        out["extras_left_out"] = list(extras.notes)
    return out
