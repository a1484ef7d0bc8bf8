"""The sheet's section "Response at a glance": the engineering reading, written once as blocks.

It answers, before the derivation, what an engineer reads a solution for:
does it settle (the stability class and its reason, with symbolic parameters
the conditions), how fast (the modes), to what (the final values), with what
peak (peak, overshoot, 2 % settling and 10-90 % rise time per state), the
steady amplitude and phase under a sinusoidal input, and two figures: the
response of each state from the exact solution with independent numeric
check points over it, and the eigenvalues in the complex plane.

The reading (``derive.reading``) runs under ``limits.inner_limit``; a reading
that runs out of time or raises a ``DeriveError`` is left out with one
sentence saying so, and the sheet is written all the same.  Every renderer
sets the section from these blocks; the JSON record gets ``reading_record``.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import sympy as sp

from ..errors import DeriveError
from ..limits import LimitExpired, inner_limit
from ..model import Solution
from ..reading import Envelope, Response, Stability, plot_span, samples
from ..reading.checkpoints import check_points
from ..reading.evaluation import approx
from ..render.escape import spoken
from ..render.siunits import axis_label
from .blocks import Block, Figure, Heading, Inline, Items, Math, N, Name, P, Series, Table, VLine
from .reading_numbers import decimal_name, headed, per_time, quantity, state_units, with_unit
from .tolerance_blocks import ReadingExtras, band_blocks, band_series, extras_record, read_extras, sensitivity_blocks

__all__ = [
    "SheetReading", "sheet_reading", "reading_blocks", "reading_record", "response_figure", "figure_span", "READING_SECONDS", "FIGURE_POINTS",
]

#: Seconds the reading may take on a sheet before it is left out.
READING_SECONDS = 30.0
#: Samples of the exact solution per curve of the response figure.
FIGURE_POINTS = 241

_HEADING = "Response at a glance"


@dataclass(frozen=True)
class SheetReading:
    """The reading as the sheet shows it: the response, its figures, the span, or why it is missing."""

    response: Response | None
    figures: tuple[Figure, ...] = ()
    span: float | None = None
    missing: str = ""
    extras: ReadingExtras = ReadingExtras()


#: (solution, reading) of the last sheet read: every format of one sheet shows
#: the same reading, computed once (the solution itself is kept, so an identity
#: match cannot be a different object at a reused address).
_last: tuple[Solution, SheetReading] | None = None


def sheet_reading(solution: Solution) -> SheetReading:
    """The reading of ``solution`` for its sheet, under a time guard; never raises a ``DeriveError``."""
    global _last
    if _last is not None and _last[0] is solution:
        return _last[1]
    try:
        with inner_limit(READING_SECONDS):
            found = _read(solution)
    except LimitExpired:
        found = SheetReading(None, missing=f"The response reading was left out: it took longer than {READING_SECONDS:g} s.")
    except DeriveError as exc:
        found = SheetReading(None, missing=f"The response reading was left out: {spoken(exc.message)}")
    _last = (solution, found)
    return found


def _read(solution: Solution) -> SheetReading:
    response = solution.response  # type: ignore[attr-defined]
    if not solution.verification.ok:
        return SheetReading(response)
    span = figure_span(solution)
    extras = read_extras(solution, span=span, points=FIGURE_POINTS)
    figures: list[Figure] = []
    if span is not None and solution.system.is_ivp:
        figures.append(response_figure(solution, span=span, band=extras.band))
    eigen = _eigenvalue_figure(solution, response)
    if eigen is not None:
        figures.append(eigen)
    return SheetReading(response, tuple(figures), span, extras=extras)


# ---------------------------------------------------------------------------
# Figures


def figure_span(solution: Solution) -> float | None:
    """The time a response figure shows: the case's ``[plot] span``, else ``reading.plot_span`` (None with symbols)."""
    given = getattr(solution.case, "plot_span", None) if solution.case is not None else None
    return float(given) if given is not None else plot_span(solution)


def response_figure(
    solution: Solution, *, span: float, points: int = FIGURE_POINTS, checks: bool = True, height: float = 0.3,
    band: Envelope | None = None,
) -> Figure:
    """Each state over [t0, t0 + span] from the exact solution, with numeric check points unless ``checks`` is False.

    ``band`` (a tolerance envelope) is drawn shaded under the curves.
    """
    sy = solution.system
    exact = samples(solution, span=span, points=points)
    checked = check_points(solution, span=span) if checks else None
    series: list[Series] = list(band_series(band)) if band is not None else []
    for s in sy.states:
        series.append(Series(s.name, tuple(zip(map(float, exact.times), map(float, exact.values[s.name]))), "line", s.name, s))
    if checked is not None:
        for k, s in enumerate(sy.states):
            pts = tuple(zip(map(float, checked.times), map(float, checked.values[s.name])))
            series.append(Series("numeric check" if k == 0 else "", pts, "marks", s.name))
    start = float(exact.times[0])
    end = start + span
    impulses = [a for a in exact.impulses if start < a <= end]
    lines = [VLine(a, "switch") for a in exact.switches if start < a <= end and a not in impulses]
    lines += [VLine(a, "impulse") for a in impulses]
    caption = f"Response of each state over {span:.3g} units of time from the exact solution (lines)"
    if checks:
        caption += (
            ", with points of an independent numeric integration of the system (circles)"
            if checked is not None else "; no numeric check points could be computed"
        )
    if any(line.style == "switch" for line in lines):
        caption += "; dashed lines: input switches"
    if impulses:
        caption += "; dotted lines: impulses"
    if band is not None:
        caption += "; shaded: the tolerance band of each state"
    t = sy.t
    return Figure(caption + ".", axis_label(sp.latex(t), str(t), sy.time_unit), N(f"x_i({sp.latex(t)})", f"x_i({t})"), tuple(series), tuple(lines), "response", height=height)


def _eigenvalue_figure(solution: Solution, response: Response) -> Figure | None:
    values = dict(response.values)
    eigenvalues = [e.xreplace(values) for e in solution.eigenvalues]
    if any(e.free_symbols for e in eigenvalues):
        return None
    points = tuple(sorted({(round(z.real, 12), round(z.imag, 12)) for z in map(approx, eigenvalues)}))
    return Figure(
        "Eigenvalues in the complex plane (the solid line is the imaginary axis: a mode to its left decays, "
        "to its right grows).",
        N(r"\operatorname{Re}\lambda", "Re λ"),
        N(r"\operatorname{Im}\lambda", "Im λ"),
        (Series("eigenvalues", points, "marks", "eigenvalues"),),
        (VLine(0.0, "axis"),),
        "eigenvalues",
        height=0.2,
    )


# ---------------------------------------------------------------------------
# Blocks


def _eigenvalue(mode: Any) -> tuple[Inline, ...]:
    lam = sp.sympify(mode.eigenvalue, strict=True)
    if not mode.is_pair or lam.free_symbols:
        return quantity(lam)
    re_, im_ = sp.re(lam), sp.Abs(sp.im(lam))
    # one formula: two inline formulas side by side would read as $$ (display math) in LaTeX and Markdown
    a, b = decimal_name(re_), decimal_name(im_)
    return (Name(f"{a.latex} \\pm {b.latex}", f"{a.plain} ± {b.plain}"), " ", Math(sp.I))


_TAU = N(r"\tau = -1/\operatorname{Re}\lambda", "τ = -1/Re λ")
_OMEGA_N = N(r"\omega_n = |\lambda|", "ω_n = |λ|")
_ZETA = N(r"\zeta = -\operatorname{Re}\lambda/|\lambda|", "ζ = -Re λ/|λ|")
_OMEGA_D = N(r"\omega_d = |\operatorname{Im}\lambda|", "ω_d = |Im λ|")


def _settles(r: Response) -> list[Block]:
    words = {
        Stability.ASYMPTOTIC: "Yes: asymptotically stable",
        Stability.MARGINAL: "It stays bounded but does not settle: marginally stable",
        Stability.UNSTABLE: "No: unstable",
        Stability.UNDECIDED: "It depends on the parameters",
    }
    reason = spoken(r.reason)
    out: list[Block] = [P("Does it settle? ", words[r.stability], ". ", reason[:1].upper() + reason[1:] + ".")]
    if r.conditions:
        rows: list[tuple[Inline, ...]] = []
        for kind, relations in r.conditions:
            row: list[Inline] = [f"{str(kind).capitalize()} when "]
            for k, rel in enumerate(relations):
                # "one of them fails" is an Or: said in words, as the "and" of the others
                either = rel.args if isinstance(rel, sp.Or) else (rel,)
                for j, part in enumerate(either):
                    row += ([" and "] if k and not j else [" or "] if j else []) + [Math(part)]
            rows.append(tuple(row + ["."]))
        out.append(Items(tuple(rows)))
    return out


def _modes(solution: Solution, r: Response) -> list[Block]:
    if not r.modes:
        return []
    tu = solution.system.time_unit
    rate, angular = per_time("1", tu), per_time("rad", tu)
    numeric = not any(sp.sympify(m.eigenvalue, strict=True).free_symbols for m in r.modes)
    out: list[Block] = [P(
        "How fast? One mode per real eigenvalue or complex pair, with ", _TAU, ", ", _OMEGA_N, ", ", _ZETA, " and ", _OMEGA_D,
        "; the dominant mode, the slowest to decay, sets how long the response takes." if any(m.dominant for m in r.modes) else ".",
    )]
    if numeric:
        rows = tuple(
            (
                (f"{k}{' (dominant)' if m.dominant else ''}",),
                _eigenvalue(m),
                quantity(m.time_constant),
                quantity(m.natural_frequency),
                quantity(m.damping_ratio),
                quantity(m.damped_frequency),
            )
            for k, m in enumerate(r.modes, start=1)
        )
        header = (
            "Mode", headed((N(r"\lambda", "λ"),), rate), headed((N(r"\tau", "τ"),), tu),
            headed((N(r"\omega_n", "ω_n"),), angular), (N(r"\zeta", "ζ"),), headed((N(r"\omega_d", "ω_d"),), angular),
        )
        out.append(Table(header, rows, align="lrrrrr"))
        return out
    items: list[tuple[Inline, ...]] = []
    for k, m in enumerate(r.modes, start=1):
        row: list[Inline] = [f"Mode {k}{' (dominant)' if m.dominant else ''}: ", N(r"\lambda", "λ"), " = ", *with_unit(_eigenvalue(m), rate)]
        for name, value, unit in ((N(r"\tau", "τ"), m.time_constant, tu), (N(r"\omega_n", "ω_n"), m.natural_frequency, angular),
                                  (N(r"\zeta", "ζ"), m.damping_ratio, ""), (N(r"\omega_d", "ω_d"), m.damped_frequency, angular)):
            row += ["; ", name, " = ", *with_unit(quantity(value), unit)]
        items.append(tuple(row + ["."]))
    out.append(Items(tuple(items)))
    return out


def _states(solution: Solution, r: Response) -> list[Block]:
    if not r.states:
        why = (
            "the case has no initial values" if not solution.system.is_ivp
            else "some parameters have no value"
        )
        return [P(f"To what, with what peak? Final values, peaks, settling and rise times are read for an initial value problem with a value for every parameter; here {why}.")]
    out: list[Block] = [P(
        f"To what, with what peak? Per state, from the exact solution, times{' in ' + solution.system.time_unit if solution.system.time_unit else ''} from ", Math(solution.system.t0),
        ": the final value, the largest excursion (peak), the overshoot past the final value relative to the change, "
        "the last entry into a band of 2 % of the change (settling) and the time from 10 % to 90 % of it (rise).",
    )]
    rows = []
    units = state_units(solution.system)
    for s in solution.system.states:
        st = r.states[s.name]
        peak = st.peak
        unit = units.get(s.name, "")
        rows.append((
            (Math(s),),
            with_unit(quantity(st.initial_value), unit),
            with_unit(quantity(st.final_value), unit),
            quantity(peak[0] - float(approx(solution.system.t0.xreplace(r.values)).real) if peak else None),
            with_unit(quantity(peak[1] if peak else None), unit),
            ("--",) if st.overshoot is None else (decimal_name(100 * st.overshoot), " %"),
            quantity(st.settling_time),
            quantity(st.rise_time),
        ))
    tu = solution.system.time_unit
    header = (
        "State", "Initial", "Final", headed("Peak time", tu), "Peak", "Overshoot", headed("Settling 2 %", tu), headed("Rise 10-90 %", tu),
    )
    out.append(Table(header, tuple(rows), align="lrrrrrrr"))
    return out


def _sinusoid(solution: Solution, r: Response) -> list[Block]:
    if not r.sinusoidal:
        return []
    first = next(iter(r.sinusoidal.values()))
    steady = "the steady response" if r.stability is Stability.ASYMPTOTIC else "the periodic part of the response (steady only if the free response decays)"
    units = state_units(solution.system)
    rows = tuple(
        (
            (Math(s),), with_unit(quantity(part.amplitude), units.get(s.name, "")), quantity(part.phase),
            with_unit(quantity(part.offset), units.get(s.name, "")),
        )
        for s in solution.system.states
        if (part := r.sinusoidal.get(s.name)) is not None
    )
    return [
        P(f"Sinusoidal input: {steady} of each state is ",
          N(r"\text{offset} + \text{amplitude}\,\sin(\omega t + \text{phase})", "offset + amplitude sin(ω t + phase)"),
          ", with ", N(r"\omega", "ω"), " = ", *with_unit(quantity(first.frequency), per_time("rad", solution.system.time_unit)), ":"),
        Table(("State", "Amplitude", "Phase (rad)", "Offset"), rows, align="lrrr"),
    ]


def reading_blocks(solution: Solution) -> tuple[Block, ...]:
    """The section "Response at a glance" as blocks (a sentence in its place when the reading is missing)."""
    found = sheet_reading(solution)
    out: list[Block] = [Heading(2, _HEADING)]
    r = found.response
    if r is None:
        return (*out, P(found.missing))
    if r.values:
        given: list[Inline] = ["Read from the exact solution at the declared parameter values ("]
        for k, (symbol, value) in enumerate(sorted(r.values.items(), key=lambda kv: kv[0].name)):
            given += ([", "] if k else []) + [Math(sp.Eq(symbol, value, evaluate=False))]
        out.append(P(*given, ")."))
    elif solution.system.params:
        out.append(P("Read with the parameters kept as symbols: give them values for numbers and figures."))
    out += _settles(r)
    out += _modes(solution, r)
    out += _states(solution, r)
    out += _sinusoid(solution, r)
    if not solution.verification.ok:
        out.append(P("No figures: the verification failed."))
    out += band_blocks(solution, found.extras)
    out += found.figures
    out += sensitivity_blocks(solution, found.extras)
    out += [P(note) for note in found.extras.notes]
    return tuple(out)


def reading_record(solution: Solution) -> dict[str, Any]:
    """The reading for the JSON record (``{"missing": reason}`` when left out); records and
    sympy values stay as they are, for ``sheet.to_json_value`` to turn into JSON data."""
    found = sheet_reading(solution)
    r = found.response
    if r is None:
        return {"missing": found.missing}
    return {
        "stability": str(r.stability),
        "reason": spoken(r.reason),
        "conditions": [{"class": str(kind), "relations": [str(rel) for rel in rels]} for kind, rels in r.conditions],
        "modes": r.modes,
        "states": dict(r.states),
        "sinusoidal": None if r.sinusoidal is None else dict(r.sinusoidal),
        "span": found.span,
        "values": {str(k): str(v) for k, v in r.values.items()},
        **extras_record(solution, found.extras),
    }
