"""The time span a system's modes set: the one rule for the numeric check and the reading.

About five of the slowest time constants, so the slowest decaying mode has
settled to within 1 % (e^-5 is 0.7 %; common practice); three periods of an
undamped oscillation; three e-foldings of a growing mode; three periods of a
sinusoidal input.  The longest of these is the span.
"""

from __future__ import annotations

import math
from collections.abc import Iterable

__all__ = ["DECAYING_TIME_CONSTANTS", "PERIODS", "settling_span"]

#: time constants of the slowest decaying mode that a span covers
DECAYING_TIME_CONSTANTS = 5
#: periods of an undamped mode or a sinusoidal input, e-foldings of a growing mode
PERIODS = 3
#: the span when no mode sets a time scale (every eigenvalue zero)
NO_SCALE = 10.0


def settling_span(eigenvalues: Iterable[complex], *, forcing_frequency: float | None = None) -> float:
    """The span the modes e^{lambda t} set, from their eigenvalues' values.

    A real part within 1e-9 of the eigenvalue's size counts as zero (decimals
    of a purely imaginary root carry round-off); a zero eigenvalue sets no scale.

    >>> settling_span([-1, -2])
    5.0
    >>> round(settling_span([1j, -1j]), 4)
    18.8496
    """
    spans: list[float] = []
    for lam in eigenvalues:
        z = complex(lam)
        size = abs(z)
        if size <= 1e-12:
            continue
        sigma, omega = z.real, abs(z.imag)
        if abs(sigma) <= 1e-9 * size:
            spans.append(PERIODS * 2 * math.pi / omega)
        elif sigma < 0:
            spans.append(DECAYING_TIME_CONSTANTS / -sigma)
        else:
            spans.append(PERIODS / sigma)
    if forcing_frequency:
        spans.append(PERIODS * 2 * math.pi / forcing_frequency)
    return max(spans) if spans else NO_SCALE
