"""The engineering reading of a solution: stability, modes, step-response figures, sensitivities.

Pure functions over a :class:`derive.model.Solution`; nothing here changes it.

>>> import derive
>>> from derive.reading import response
>>> r = response(derive.solve([[0, 1], [-4, -1]], x0=[1, 0]))
>>> str(r.stability), r.modes[0].damping_ratio, r.modes[0].natural_frequency
('asymptotically stable', 1/4, 2)
"""

from __future__ import annotations

from .reading import plot_span, response, samples
from .records import Envelope, Mode, Response, Samples, Sensitivity, SinusoidalReading, Stability, StabilityReading, StateReading
from .sensitivity import envelope, sensitivities, sensitivity, tolerance_envelope
from .stability import classify, hurwitz_determinants, jordan_blocks

__all__ = [
    "response",
    "samples",
    "plot_span",
    "sensitivity",
    "envelope",
    "tolerance_envelope",
    "sensitivities",
    "Sensitivity",
    "classify",
    "hurwitz_determinants",
    "jordan_blocks",
    "Response",
    "Mode",
    "StateReading",
    "SinusoidalReading",
    "Stability",
    "StabilityReading",
    "Samples",
    "Envelope",
]
