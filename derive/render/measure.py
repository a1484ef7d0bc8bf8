"""The printed width of LaTeX mathematics, estimated from its source, for breaking long displays."""

from __future__ import annotations

import re

__all__ = ["visible_width"]


def _group(tex: str, start: int) -> tuple[str, int]:
    """The brace group starting at ``tex[start] == '{'`` and the index after it."""
    depth = 0
    for k in range(start, len(tex)):
        ch = tex[k]
        if ch == "\\":
            continue
        if ch == "{" and (k == 0 or tex[k - 1] != "\\"):
            depth += 1
        elif ch == "}" and tex[k - 1] != "\\":
            depth -= 1
            if depth == 0:
                return tex[start + 1 : k], k + 1
    return tex[start + 1 :], len(tex)


_ZERO_WIDTH = re.compile(
    r"\\(left|right|bigl|bigr|Bigl|Bigr|biggl|biggr|big|Big|bigg|Bigg"
    r"|operatorname|mathrm|mathbf|mathit|mathbb|text|displaystyle|quad|qquad"
    r"|,|;|!|\s)(?![A-Za-z])"
)


def visible_width(tex: str) -> int:
    """Rough printed width of a LaTeX math string, in glyphs.

    A fraction counts as its wider part, sub- and superscripts count fully
    (an overestimate), ``\\left``/``\\right`` and spacing count nothing.

    >>> visible_width(r"\\frac{a + b}{c}")
    4
    """
    width = 0
    k = 0
    while k < len(tex):
        if tex.startswith(r"\begin{bmatrix}", k):
            end = tex.find(r"\end{bmatrix}", k)
            end = len(tex) if end < 0 else end
            body = tex[k + len(r"\begin{bmatrix}") : end]
            rows = [row.split("&") for row in body.split(r"\\")]
            ncols = max(len(row) for row in rows)
            cols = [
                max((visible_width(row[j]) for row in rows if j < len(row)), default=0)
                for j in range(ncols)
            ]
            width += sum(cols) + 2 * ncols
            k = end + len(r"\end{bmatrix}")
            continue
        if tex.startswith(r"\frac", k) or tex.startswith(r"\dfrac", k):
            k = tex.index("{", k)
            num, k = _group(tex, k)
            while k < len(tex) and tex[k] == " ":
                k += 1
            den, k = (_group(tex, k) if k < len(tex) and tex[k] == "{" else ("", k))
            width += max(visible_width(num), visible_width(den))
            continue
        m = _ZERO_WIDTH.match(tex, k)
        if m:
            k = m.end()
            continue
        if tex[k] == "\\":
            m = re.compile(r"\\([A-Za-z]+|.)").match(tex, k)
            assert m is not None
            k = m.end()
            width += 1
            continue
        if tex[k] in "{}^_& \t\n":
            k += 1
            continue
        width += 2 if tex[k] in "+-=<>" else 1
        k += 1
    return width


