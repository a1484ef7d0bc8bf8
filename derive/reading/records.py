"""The records of the engineering reading: what a solution says about the system.

Every record is frozen; sympy values are exact (``Expr``), numeric series are
numpy arrays.  ``Response`` is what :func:`derive.reading.response` returns.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from enum import Enum
from typing import Iterator, Mapping

import numpy as np
import sympy as sp

__all__ = [
    "Stability",
    "StabilityReading",
    "Mode",
    "StateReading",
    "SinusoidalReading",
    "Response",
    "Samples",
    "Envelope",
    "Sensitivity",
]


class Stability(str, Enum):
    """The stability class of x' = A x (a ``str`` Enum: compares equal to its words).

    >>> Stability.MARGINAL == "marginally stable"
    True
    """

    ASYMPTOTIC = "asymptotically stable"
    MARGINAL = "marginally stable"
    UNSTABLE = "unstable"
    UNDECIDED = "undecided"

    def __str__(self) -> str:
        return self.value


@dataclass(frozen=True)
class StabilityReading:
    """The class, the reason in words, and (with symbolic parameters) the conditions of each class.

    ``conditions`` pairs a class with the relations that together make it
    hold, e.g. ``(Stability.ASYMPTOTIC, (c/m > 0, k/m > 0))``; empty when the
    class was decided outright.
    """

    kind: Stability
    reason: str
    conditions: tuple[tuple[Stability, tuple[sp.Basic, ...]], ...] = ()


@dataclass(frozen=True)
class Mode:
    """One real eigenvalue or one complex pair (``eigenvalue`` is the member with Im > 0).

    ``time_constant`` is -1/Re lambda (negative for a growing mode: its
    e-folding time, with the sign saying it grows; None when Re lambda = 0);
    ``natural_frequency`` |lambda|; ``damping_ratio`` -Re lambda/|lambda|
    (None for lambda = 0); ``damped_frequency`` |Im lambda|.  ``shape`` is the
    eigenvector scaled so its reference entry is 1: for a real mode the signed
    entries, for a complex pair the magnitudes, with ``phase`` the phase of
    each state relative to the reference state (radians).  ``dominant`` marks
    the slowest decaying mode (largest Re lambda) where that can be decided.
    """

    eigenvalue: sp.Expr
    multiplicity: int
    time_constant: sp.Expr | None
    natural_frequency: sp.Expr
    damping_ratio: sp.Expr | None
    damped_frequency: sp.Expr
    shape: tuple[sp.Expr, ...] | None
    phase: tuple[sp.Expr, ...] | None = None
    is_pair: bool = False
    dominant: bool = False


@dataclass(frozen=True)
class StateReading:
    """Step-response figures of one state of an initial value problem (floats, None where undefined).

    ``peak`` is (time, value) at the largest excursion; ``overshoot`` is
    (peak - final)/(final - initial) in the direction of the change;
    ``settling_time`` and ``rise_time`` are durations measured from t0 (rise:
    from the 10 % to the 90 % crossing of the change).  See the package
    documentation for the exact definitions.
    """

    initial_value: float
    final_value: float | None
    exact_final_value: sp.Expr | None
    peak: tuple[float, float] | None
    overshoot: float | None
    settling_time: float | None
    rise_time: float | None


@dataclass(frozen=True)
class SinusoidalReading:
    """The periodic response of one state to a sinusoidal input at ``frequency`` (rad per unit time).

    The state's periodic part is ``offset + amplitude*sin(frequency*t + phase)``;
    exact expressions.  It is the steady response when the system is
    asymptotically stable.
    """

    frequency: sp.Expr
    amplitude: sp.Expr
    phase: sp.Expr
    offset: sp.Expr


@dataclass(frozen=True)
class Response:
    """The engineering reading of a solution (see :func:`derive.reading.response`)."""

    stability: Stability
    reason: str
    conditions: tuple[tuple[Stability, tuple[sp.Basic, ...]], ...]
    modes: tuple[Mode, ...]
    states: Mapping[str, StateReading]
    sinusoidal: Mapping[str, SinusoidalReading] | None
    span: float | None
    values: Mapping[sp.Symbol, sp.Expr] = field(default_factory=dict)

    @property
    def dominant(self) -> Mode | None:
        """The slowest decaying mode, when it is decided."""
        return next((m for m in self.modes if m.dominant), None)


@dataclass(frozen=True)
class Samples:
    """The exact solution sampled for a figure; unpacks as ``times, values = samples(...)``.

    ``values`` maps a state name to its values at ``times``.  A time appears
    twice where the state jumps (an impulse): the value just before, then just
    after.  ``switches`` are the times the input switches, ``impulses`` the
    times of its impulses.
    """

    times: np.ndarray
    values: Mapping[str, np.ndarray]
    switches: tuple[float, ...] = ()
    impulses: tuple[float, ...] = ()

    def __iter__(self) -> Iterator[object]:
        return iter((self.times, self.values))


@dataclass(frozen=True)
class Envelope:
    """The least and greatest value of each state over the corners of a tolerance box.

    ``corners`` is how many parameter sets were evaluated (2 per toleranced
    parameter, multiplied); ``nominal`` is the response at the declared values;
    ``varied`` gives each toleranced parameter with its lower and upper value.
    The corners bound the response exactly where it is monotone in each
    parameter over the box; elsewhere the band may be narrower than the true
    range.
    """

    times: np.ndarray
    lower: Mapping[str, np.ndarray]
    upper: Mapping[str, np.ndarray]
    nominal: Mapping[str, np.ndarray]
    corners: int
    varied: tuple[tuple[sp.Symbol, sp.Expr, sp.Expr], ...] = ()
    #: parameter sets inside the box that were evaluated too (the declared values, and the grid with ``levels = 3``)
    inside: int = 1
    #: how far the furthest inside set lay outside the corners' range (0: none did)
    beyond: float = 0.0

    def widest(self, state: str) -> tuple[float, float]:
        """(time, width) where the band of ``state`` is widest."""
        width = self.upper[state] - self.lower[state]
        k = int(np.argmax(width))
        return float(self.times[k]), float(width[k])


@dataclass(frozen=True)
class Sensitivity:
    """The sensitivity dx/dp of every state to one parameter: exact, and read at the parameter values.

    ``exact`` is the column dx_i/dp of the closed form (parameters as
    symbols); ``times`` are the sample times and ``values`` each state's
    sensitivity there (floats, at the declared values); ``peak`` is each
    state's (time, value) of the largest magnitude over the span.
    """

    parameter: sp.Symbol
    exact: sp.ImmutableMatrix
    times: tuple[float, ...]
    values: Mapping[str, tuple[float, ...]]
    peak: Mapping[str, tuple[float, float]]
