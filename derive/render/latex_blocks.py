"""Blocks as LaTeX: the generic LaTeX rendering of any document.

The layout of each block kind is in ``templates/blocks.tex.j2`` (one macro
per kind); this module gives that template the few functions that print a
block's parts: inline text and mathematics, displayed equations and the
column specification of a table.  User text goes through ``tex_escape``,
mathematics through the document's ``MathFormatter``.
"""

from __future__ import annotations

import re
from typing import Any, Callable, Sequence

import sympy as sp

from ..errors import OutputError
from ..documents.blocks import Block, Code, Figure, Inline, Math, Name, Para, Strong, Table, Unit
from .escape import tex_escape
from .printing import MathFormatter
from .siunits import unit_latex
from .templating import get_template

__all__ = ["blocks_latex", "block_helpers", "tex_text", "figure_latex", "figure_range", "FIGURE_PREAMBLE", "FIGURE_COLOURS"]

#: What a document with a figure adds to its preamble (pinned compat level, for reproducible builds).
FIGURE_PREAMBLE = "\\usepackage{pgfplots}\n\\pgfplotsset{compat=1.18}"

# \path typesets these verbatim and breaks long ones at / . - _; only text of
# those safe characters goes there, anything else is escaped into \texttt.
_PATH_SAFE = re.compile(r"[A-Za-z0-9][A-Za-z0-9._/-]*")


def tex_text(text: str) -> str:
    """``tex_escape`` keeping one leading and one trailing space (inline text joins its neighbours).

    >>> tex_text(" 50% of ")
    ' 50\\\\% of '
    """
    inner = tex_escape(text)
    if not inner:
        return " " if text else ""
    return (" " if text[:1].isspace() else "") + inner + (" " if text[-1:].isspace() else "")


def _inline_part(part: Inline, fmt: MathFormatter) -> str:
    if isinstance(part, Math):
        return f"${fmt.m(part.obj)}$"
    if isinstance(part, Name):
        return f"${part.latex}$"
    if isinstance(part, Strong):
        inner = tex_text(part.text) if isinstance(part.text, str) else "".join(_inline_part(p, fmt) for p in part.text)
        return r"\textbf{%s}" % inner
    if isinstance(part, Code):
        if part.breakable and _PATH_SAFE.fullmatch(part.text):
            return r"\path{%s}" % part.text
        return r"\texttt{%s}" % tex_escape(part.text)
    if isinstance(part, Unit):
        return unit_latex(part.text)
    return tex_text(str(part))


def _display(rows: Sequence[tuple[Name, Any]], fmt: MathFormatter) -> str:
    """Displayed equations: consecutive scalar rows aligned in one display, each matrix in its own."""
    out: list[str] = []
    scalars: list[tuple[str, Any]] = []
    for name, rhs in rows:
        if isinstance(rhs, sp.MatrixBase):
            if scalars:
                out.append(fmt.display(scalars))
                scalars = []
            out.append(fmt.matrix_display(name.latex, rhs))
        else:
            scalars.append((name.latex, rhs))
    if scalars:
        out.append(fmt.display(scalars))
    return "\n".join(out)


def _mathrows(rows: Sequence[Sequence[Name]]) -> str:
    lines = [f"{r[0].latex} &= {r[1].latex}" + "".join(f" && {c.latex}" for c in r[2:]) for r in rows]
    return "\\begin{align*}\n" + " \\\\\n".join(lines) + "\n\\end{align*}"


def _termsum(block: Any, fmt: MathFormatter) -> str:
    terms = " \\\\\n&\\quad + ".join(rf"\left({fmt.m(c)}\right) {fmt.m(v)}" for c, v in block.terms)
    return "\\begin{align*}\n" + f"{block.lhs.latex} &= {terms}" + "\n\\end{align*}"


def _heading(heading: Any) -> str:
    text = tex_text(heading.text)
    if heading.math is None:
        return text.strip()
    bookmark = tex_escape(heading.bookmark or heading.math.plain)
    return r"%s\texorpdfstring{$%s$}{%s}" % (text, heading.math.latex, bookmark)


def _colspec(table: Table) -> str:
    cols = []
    for k in range(len(table.header)):
        width = table.column_width(k)
        if width is not None:
            cols.append(r">{\raggedright\arraybackslash}p{%.2f\textwidth}" % width)
        else:
            cols.append(table.column_align(k))
    return "@{}" + "".join(cols) + "@{}"


#: Colours of the curves, in order of their key; a curve's check points take its colour.
FIGURE_COLOURS: tuple[str, ...] = (
    "blue!80!black", "red!75!black", "green!50!black", "orange!90!black", "violet", "cyan!60!black", "brown", "magenta!70!black",
)
_LINE_STYLES = {"switch": "gray, dashed", "impulse": "gray, densely dotted, thick", "axis": "black!60"}


def _coordinate(v: float) -> str:
    """A coordinate for pgfplots: six significant digits keep the source short and TeX's numbers in range."""
    text = f"{v:.6g}"
    return "0" if text in ("-0", "0") else text


def figure_range(values: Sequence[float], *, pad: float = 0.05) -> tuple[float, float]:
    """The span of ``values`` widened by ``pad`` of its width each side (a unit each side for a single value).

    >>> figure_range([0.0, 10.0])
    (-0.5, 10.5)
    """
    lo, hi = min(values), max(values)
    if hi - lo <= 1e-12 * max(1.0, abs(lo), abs(hi)):
        width = max(1.0, abs(lo))
        return lo - width, hi + width
    return lo - pad * (hi - lo), hi + pad * (hi - lo)


def figure_latex(figure: Figure, *, fmt: MathFormatter | None = None) -> str:
    """A figure as a pgfplots axis inside a TikZ picture, built with pylatex.

    A curve that carries its ``symbol`` has it in the legend as mathematics,
    printed by ``fmt`` (the sheet's formatter; a plain one when not given).

    pylatex escapes text by default; the labels are program-made math
    (``Name.latex``) or escaped here, so they go in as ``NoEscape``, and the
    axis options are one raw string with the braced labels.  The axis limits
    are set from the data and the vertical lines, so a line outside the data
    (the imaginary axis of an eigenvalue map) is still in view.
    """
    from pylatex import Axis, Plot, TikZ
    from pylatex.utils import NoEscape

    xs = [x for s in figure.series for x, _ in s.points] + [v.at for v in figure.lines]
    ys = [y for s in figure.series for _, y in s.points]
    limits = ""
    if xs and ys:
        # a time axis starts where the curves start; points alone (an eigenvalue map) keep a margin
        only_marks = all(s.style == "marks" for s in figure.series)
        (x0, x1), (y0, y1) = (min(xs), max(xs)) if figure.xmode == "log" else figure_range(xs, pad=0.08 if only_marks else 0.02), figure_range(ys, pad=0.08)
        limits = f"xmin={_coordinate(x0)}, xmax={_coordinate(x1)}, ymin={_coordinate(y0)}, ymax={_coordinate(y1)}, "
    options = (
        rf"width=0.72\textwidth, height={figure.height:.2f}\textwidth, grid=major, "
        r"scaled ticks=false, tick label style={/pgf/number format/fixed}, "
        r"legend pos=outer north east, legend cell align=left, legend style={font=\footnotesize}, "
        + limits + ("xmode=log, " if figure.xmode == "log" else "")
        + f"xlabel={{${figure.xlabel.latex}$}}, ylabel={{${figure.ylabel.latex}$}}"
    )
    axis = Axis(options=NoEscape(options))
    fmt = fmt or MathFormatter.for_roots(())
    keys: dict[str, int] = {}
    for series in figure.series:
        colour = FIGURE_COLOURS[keys.setdefault(series.key or series.label, len(keys)) % len(FIGURE_COLOURS)]
        if series.style == "band":
            axis.append(NoEscape(_band(series, colour, _legend(series, fmt))))
            continue
        style = f"color={colour}, " + ("only marks, mark=o, mark size=1.8pt" if series.style == "marks" else "thick, no markers")
        if not series.label:
            style += ", forget plot"
        axis.append(Plot(
            name=NoEscape(_legend(series, fmt)) if series.label else None,
            coordinates=[(NoEscape(_coordinate(float(x))), NoEscape(_coordinate(float(y)))) for x, y in series.points],
            options=NoEscape(style),
        ))
    for line in figure.lines:
        at = _coordinate(float(line.at))
        axis.append(NoEscape(
            rf"\draw[{_LINE_STYLES.get(line.style, 'gray')}] ({{axis cs:{at},0}}|-{{rel axis cs:0,0}}) -- ({{axis cs:{at},0}}|-{{rel axis cs:0,1}});"
        ))
    picture = TikZ()
    picture.append(axis)
    return picture.dumps()


def _legend(series: Any, fmt: MathFormatter) -> str:
    """A curve's legend entry: its symbol as inline mathematics, else its label as text."""
    if series.symbol is not None:
        return f"${fmt.m(series.symbol)}$"
    return tex_escape(series.label)


def _band(series: Any, colour: str, name: str) -> str:
    """A shaded region: the closed path of its points, filled lightly under the curves, no outline."""
    path = " ".join(f"({_coordinate(float(x))},{_coordinate(float(y))})" for x, y in series.points)
    legend = rf"\addlegendentry{{{name}}}" if series.label else ""
    options = f"fill={colour}, fill opacity=0.18, draw=none" + (", area legend" if series.label else ", forget plot")
    return rf"\addplot[{options}] coordinates {{{path}}} -- cycle;" + legend


def block_helpers(fmt: MathFormatter) -> dict[str, Callable[..., str]]:
    """The functions ``templates/blocks.tex.j2`` calls, bound to ``fmt``."""
    def inline(parts: Sequence[Inline]) -> str:
        out = ""
        for p in parts:
            text = _inline_part(p, fmt)
            # two formulas side by side would close and open math as $$, which TeX reads as display math
            out += ("{}" if out.endswith("$") and text.startswith("$") else "") + text
        return out

    return {
        "inline": inline,
        "cells": lambda row: " & ".join(inline(cell) for cell in row),
        "display": lambda rows: _display(rows, fmt),
        "colspec": _colspec,
        "figure": lambda figure: figure_latex(figure, fmt=fmt),
        "heading": _heading,
        "mathrows": _mathrows,
        "termsum": lambda block: _termsum(block, fmt),
        "header": lambda table: " & ".join(tex_escape(h) if isinstance(h, str) else inline(h) for h in table.header),
        "unknown_block": _unknown_block,
    }


def _unknown_block(block: Any) -> str:
    raise OutputError(f"no LaTeX rendering for block kind {getattr(block, 'kind', type(block).__name__)!r}", key="blocks")


def blocks_latex(blocks: Sequence[Block], fmt: MathFormatter) -> str:
    """The LaTeX of ``blocks`` (no preamble, no final newline), one macro of ``blocks.tex.j2`` per block.

    Blocks are set line after line; only two paragraphs in a row are parted by
    a blank line, so a sentence that leads into a display and the one that
    follows it stay in one paragraph, as in hand-set LaTeX.
    """
    macros = get_template("blocks.tex.j2").make_module(block_helpers(fmt))
    out: list[str] = []
    for k, block in enumerate(blocks):
        if k and isinstance(block, Para) and not block.runs_on and isinstance(blocks[k - 1], Para):
            out.append("")
        out.append(str(macros.block(block)).strip("\n"))  # type: ignore[attr-defined]
    return "\n".join(out)
