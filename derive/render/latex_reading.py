"""The sheet's "Response at a glance" in LaTeX: its blocks set by the generic block templates.

The hand-set sheet templates call ``reading()`` three times (the preamble,
to load pgfplots only for a sheet with figures; the fragment's note; the
body), so the LaTeX of the last sheet is kept.
"""

from __future__ import annotations

from ..documents.reading_section import reading_blocks
from ..model import Solution
from .latex_blocks import blocks_latex
from .printing import MathFormatter

__all__ = ["reading_latex"]

#: (solution, formatter, LaTeX) of the last sheet; the objects are kept, so an
#: identity match cannot be a different object at a reused address.
_last: tuple[Solution, MathFormatter, str] | None = None


def reading_latex(solution: Solution, fmt: MathFormatter) -> str:
    """The section "Response at a glance" of ``solution`` as LaTeX, printed by ``fmt``."""
    global _last
    if _last is not None and _last[0] is solution and _last[1] is fmt:
        return _last[2]
    text = blocks_latex(reading_blocks(solution), fmt)
    _last = (solution, fmt, text)
    return text
