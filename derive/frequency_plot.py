"""The case file's request for a frequency-response figure: ``[plot] frequency_response`` and ``frequencies``.

``frequency_response = true`` asks for the magnitude and phase of G(i omega)
against omega in the Laplace part of the sheet; ``frequencies = [lo, hi]``
(positive, in radians per unit of time, lo < hi) sets the range drawn, which
otherwise runs from a decade below the slowest mode to a decade above the
fastest.  Giving ``frequencies`` alone asks for the figure too.  The other
keys of ``[plot]`` are read by :mod:`derive.plotfile`.

The request is kept on the case as ``Case.frequency_plot``: None when not
asked, ``()`` for the range from the modes, ``(lo, hi)`` exact otherwise.
"""

from __future__ import annotations

import math
from typing import Any

import sympy as sp

from .errors import CaseFileError
from .valuetext import show, type_name

__all__ = ["FREQUENCY_KEYS", "read_frequency_plot"]

#: the keys of ``[plot]`` read here
FREQUENCY_KEYS: tuple[str, ...] = ("frequency_response", "frequencies")


def _positive(value: object) -> bool:
    return not isinstance(value, bool) and isinstance(value, (int, float)) and math.isfinite(value) and value > 0


def read_frequency_plot(table: Any, *, file: str | None = None) -> tuple[sp.Expr, ...] | None:
    """The frequency-response request of ``[plot]``: None, ``()`` or ``(lo, hi)``; ``CaseFileError`` when malformed.

    >>> read_frequency_plot({"frequency_response": True}), read_frequency_plot({"frequencies": [0.1, 10]})
    ((), (1/10, 10))
    >>> read_frequency_plot({"span": 3}) is None
    True
    """
    if not isinstance(table, dict):
        return None  # an absent table; a malformed one is refused by derive.plotfile
    asked = table.get("frequency_response")
    if asked is not None and not isinstance(asked, bool):
        raise CaseFileError(
            f"plot.frequency_response is {type_name(asked)} ({show(asked)}); expected true or false",
            file=file, key="plot.frequency_response",
        )
    if "frequencies" not in table:
        return () if asked else None
    if asked is False:
        raise CaseFileError(
            "plot.frequencies is given but plot.frequency_response = false; expected frequency_response = true "
            "(or no frequencies)", file=file, key="plot.frequencies",
        )
    value = table["frequencies"]
    if not (isinstance(value, list) and len(value) == 2 and all(_positive(v) for v in value) and value[0] < value[1]):
        raise CaseFileError(
            f"plot.frequencies is {type_name(value)} ({show(value)}); expected two positive numbers, lowest first, "
            "in radians per unit of time, e.g. frequencies = [0.01, 100]",
            file=file, key="plot.frequencies",
        )
    # floats become exact at the boundary, as every number of a case file does
    return tuple(sp.Integer(v) if isinstance(v, int) else sp.nsimplify(v, rational=True) for v in value)
