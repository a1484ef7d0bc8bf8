"""The case file's ``[plot]`` table: how the sheet's figures are drawn.

``span`` is the length of time the response figure shows, from t0 (a
positive number in the case's time unit); without it the span follows the
slowest time constant (``derive.reading.plot_span``).  Read here, so the
case-file reader only hands the table over.
"""

from __future__ import annotations

import math
from typing import Any

import sympy as sp

from .errors import CaseFileError
from .tablecheck import checked_table
from .valuetext import show, type_name

__all__ = ["PLOT_KEYS", "read_plot_span"]

PLOT_KEYS: tuple[str, ...] = ("span", "frequency_response", "frequencies")  # the last two: derive.frequency_plot


def read_plot_span(table: Any, *, file: str | None = None) -> sp.Rational | None:
    """``[plot] span`` as an exact positive number, None when not given; ``CaseFileError`` otherwise.

    >>> read_plot_span({"span": 30}), read_plot_span({"span": 0.5}), read_plot_span(None)
    (30, 1/2, None)
    """
    if table is None:
        return None
    table = checked_table(table, PLOT_KEYS, name="plot", example="[plot] span = 30", file=file)
    if "span" not in table:
        return None
    value = table["span"]
    if isinstance(value, bool) or not isinstance(value, (int, float)) or not math.isfinite(value) or value <= 0:
        raise CaseFileError(
            f"plot.span is {type_name(value)} ({show(value)}); expected a positive number of time units, e.g. span = 30",
            file=file, key="plot.span",
        )
    # floats become exact at the boundary, as every number of a case file does
    return sp.Rational(value) if isinstance(value, int) else sp.nsimplify(value, rational=True)
