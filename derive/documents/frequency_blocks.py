"""The frequency-response figure of the Laplace part of the sheet: magnitude and phase of G(i omega).

Asked for with ``[plot] frequency_response = true`` (:mod:`derive.frequency_plot`).
G(s) is the transfer function of the Laplace step (from the inputs to the
states, :func:`derive.laplace.transfer_function`); each nonzero entry is one
curve, sampled by :func:`derive.laplace.frequency_response` with every
parameter at its value, on a logarithmic frequency axis: the magnitude in
decibels (20 log10 |G|) and the phase in degrees.  The samples are floats for
drawing only.  When the system is not asymptotically stable the figure is
still drawn, but the sheet says that it describes no steady state: the free
response does not die out, so a sinusoidal input never settles into the
sinusoid the figure predicts.
"""

from __future__ import annotations

import math
from typing import Any, Sequence

import sympy as sp

from ..errors import DeriveError
from ..laplace import FrequencyResponse, frequency_response, input_matrix, transfer_function
from ..model import Solution
from ..reading.evaluation import approx
from ..reading.records import Stability
from ..reading.stability import classify
from ..render.siunits import axis_label
from .blocks import Block, Figure, N, P, Series

__all__ = ["frequency_blocks", "frequency_range", "FREQUENCY_POINTS", "MAX_CURVES", "MAX_STATES"]

#: samples per curve (log-spaced)
FREQUENCY_POINTS = 160
#: curves drawn at most (input-output pairs); the rest are named as left out
MAX_CURVES = 8
#: G(s) is formed for the figure alone (when the Laplace check did not run) up to this many states
MAX_STATES = 6


def frequency_range(eigenvalues: Sequence[complex]) -> tuple[float, float]:
    """From a decade below the slowest mode's |lambda| to a decade above the fastest (0.01 to 100 without one).

    >>> frequency_range([-2, -0.5 + 3j])
    (0.1, 100.0)
    >>> frequency_range([0j])
    (0.01, 100.0)
    """
    sizes = [abs(z) for z in eigenvalues if abs(z) > 1e-12]
    if not sizes:
        return 0.01, 100.0
    lo = 10.0 ** (math.floor(math.log10(min(sizes))) - 1)
    hi = 10.0 ** (math.ceil(math.log10(max(sizes))) + 1)
    return lo, hi


def _transfer(step: Any, solution: Solution, s: sp.Symbol) -> tuple[sp.MatrixBase, tuple[Any, ...]] | None:
    """G(s) and its inputs: the Laplace step's when it ran, else formed here for a small system."""
    if step.ran and step.G is not None:
        return step.G, tuple(step.inputs)
    system = solution.system
    if system.n > MAX_STATES:
        return None
    B, u, _ = input_matrix(system.f, system.t)
    return transfer_function(system.A, B, s=s), tuple(u)


def _outputs(solution: Solution, G: sp.MatrixBase) -> tuple[sp.MatrixBase, list[str], str]:
    """The declared outputs' C G with their names when y = C x (D = 0); else G and the state names.

    The third item names the rows: "output", "state", or "state" with why the outputs are not drawn.
    """
    states = [s.name for s in solution.system.states]
    out = solution.outputs
    if out is None:
        return G, states, "state"
    if any(e != 0 for e in out.D):
        return G, states, "state (the declared outputs take the inputs directly, so the states are drawn)"
    return sp.ImmutableMatrix(out.C * G), list(out.names), "output"


def _labels(names: list[str], inputs: tuple[Any, ...], pairs: list[tuple[int, int]]) -> list[str]:
    if len(inputs) <= 1:
        return [names[i] for i, _ in pairs]
    return [f"{names[i]} from u{j + 1}" for i, j in pairs]


def _not_steady(solution: Solution, values: dict[sp.Symbol, sp.Expr]) -> str:
    """The sentence for a system whose free response does not die out; "" when it does."""
    try:
        kind = classify(solution, values).kind
    except DeriveError:
        kind = Stability.UNDECIDED
    if kind == Stability.ASYMPTOTIC:
        return ""
    words = {Stability.MARGINAL: "only marginally stable", Stability.UNSTABLE: "unstable"}.get(kind, "not shown to be asymptotically stable")
    return (f"The system is {words}: its free response does not die out, so this is not a steady state. "
            "A sinusoidal input does not settle into the sinusoid that magnitude and phase describe; "
            "the figure only shows G on the imaginary axis.")


def frequency_blocks(step: Any, ctx: Any) -> list[Block]:
    """The figure of |G(i omega)| (dB) and arg G(i omega) (degrees), or the sentence why it is not drawn."""
    solution: Solution = ctx.solution
    case = solution.case
    if case is None or case.frequency_plot is None:
        return []
    s = step.s
    found = _transfer(step, solution, s)
    if found is None:
        return [P(f"The frequency response was asked for but is drawn for systems of at most {MAX_STATES} states.")]
    G, inputs = found
    G, names, rows = _outputs(solution, G)
    values = dict(solution.system.parameter_values())
    missing = sorted({x.name for x in G.free_symbols} - {s.name} - {k.name for k in values})
    if missing:
        return [P(f"The frequency response was asked for but is not drawn: {', '.join(missing)} "
                  f"{'has' if len(missing) == 1 else 'have'} no value.")]
    if case.frequency_plot:
        lo, hi = (float(v) for v in case.frequency_plot)
    else:
        lo, hi = frequency_range([approx(e.xreplace(values)) for e in solution.eigenvalues])
    pairs = [(i, j) for j in range(G.cols) for i in range(G.rows) if sp.cancel(G[i, j].xreplace(values)) != 0]
    drawn = pairs[:MAX_CURVES]
    curves: list[FrequencyResponse] = [
        frequency_response(G[i, j], s, values=values, omega_min=lo, omega_max=hi, points=FREQUENCY_POINTS) for i, j in drawn
    ]
    return _figures(solution, ctx, curves, _labels(names, inputs, drawn), len(pairs) - len(drawn), values, rows)


def _figures(
    solution: Solution, ctx: Any, curves: list[FrequencyResponse], labels: list[str], left_out: int,
    values: dict[sp.Symbol, sp.Expr], rows: str,
) -> list[Block]:
    unit = ctx.fmt.style.imaginary_unit
    time_unit = solution.system.time_unit
    omega = axis_label(r"\omega", "omega", f"rad/{time_unit}" if time_unit else "")
    magnitude, phase = [], []
    for label, r in zip(labels, curves):
        db = [(w, 20 * math.log10(m)) for w, m in zip(r.omega, r.magnitude) if m > 0 and math.isfinite(m)]
        symbol = sp.Symbol(label) if " " not in label else None  # one state or output: named in the sheet's mathematics
        magnitude.append(Series(label, tuple(db), "line", label, symbol))
        phase.append(Series(label, tuple(zip(r.omega, r.phase_degrees)), "line", label, symbol))
    G = rf"G({unit}\omega)"
    C, Cp = ("C\\,", "C ") if rows == "output" else ("", "")
    Gp = f"G({unit} omega)"
    out: list[Block] = [
        P("On request, the frequency response: ", N(f"{G} = {C}({unit}\\omega I - A)^{{-1}} B", f"{Gp} = {Cp}({unit} omega I - A)^-1 B"),
          f" for each {rows.split(' (')[0]} and input, with every parameter at its value; the magnitude in decibels, ",
          N(rf"20 \log_{{10}} \lvert {G} \rvert", f"20 log10 |{Gp}|"), ", and the phase in degrees, unwrapped"
          + (f" ({left_out} more pair{'s' if left_out != 1 else ''} not drawn)." if left_out else ".")),
    ]
    if " (" in rows:
        out.append(P(rows.split(" (", 1)[1].rstrip(")").capitalize() + "."))
    warning = _not_steady(solution, values)
    if warning:
        out.append(P(warning))
    out += [
        Figure("Magnitude of the frequency response (decibels) against the angular frequency (logarithmic axis).",
               omega, axis_label(rf"\lvert {G} \rvert", f"|{Gp}|", "dB"), tuple(magnitude), name="frequency-magnitude",
               height=0.3, xmode="log"),
        Figure("Phase of the frequency response (degrees) against the angular frequency (logarithmic axis).",
               omega, axis_label(rf"\arg {G}", f"arg {Gp}", "deg"), tuple(phase), name="frequency-phase",
               height=0.3, xmode="log"),
    ]
    return out
