"""Any document as plain text: the blocks of ``derive.documents.blocks``, 100 columns wide.

Mathematics is printed in sympy's plain notation by ``derive.render.printing``;
user text is only squashed (``derive.render.escape.squash``), since plain
text has nothing to escape.
"""

from __future__ import annotations

import textwrap
from dataclasses import dataclass, field
from typing import Any, Sequence

import sympy as sp

from ..documents.blocks import Alert, Block, Caution, Code, Eq, Figure, Heading, Inline, Items, Math, MathRows, Name, Para, Series, Strong, Table, TermSum, Title
from .base import Renderer, as_document
from .escape import squash
from .printing import MathFormatter, MathStyle

__all__ = ["TextRenderer", "blocks_to_text", "text_table", "figure_lines"]

WIDTH = 100


def _plain_inline(part: Inline, fmt: MathFormatter) -> str:
    if isinstance(part, Math):
        return fmt.plain(part.obj)
    if isinstance(part, Name):
        return part.plain
    if isinstance(part, Strong):
        return squash(part.text) if isinstance(part.text, str) else _plain(part.text, fmt)
    if isinstance(part, Code):
        return squash(part.text)
    return squash(str(part))


def _plain(parts: Sequence[Inline], fmt: MathFormatter) -> str:
    return "".join(_plain_inline(p, fmt) for p in parts)


def _plain_eq_rows(rows: Sequence[tuple[Name, Any]], fmt: MathFormatter) -> list[str]:
    out: list[str] = []
    for name, rhs in rows:
        rel = "="
        if isinstance(rhs, tuple) and len(rhs) == 2 and isinstance(rhs[0], str):
            rel, rhs = ("≈" if rhs[0] == r"\approx" else rhs[0]), rhs[1]
        lead = f"  {name.plain} {rel} "
        if isinstance(rhs, sp.MatrixBase) and rhs.rows * rhs.cols > 1:
            lines = fmt.plain_matrix(rhs)
            mid = (len(lines) - 1) // 2
            for k, line in enumerate(lines):
                out.append((lead if k == mid else " " * len(lead)) + line)
        else:
            value = fmt.plain(rhs[0] if isinstance(rhs, sp.MatrixBase) else rhs)
            wrapped = textwrap.wrap(value, width=max(40, WIDTH - len(lead)), break_long_words=False, break_on_hyphens=False)
            out.append(lead + (wrapped[0] if wrapped else ""))
            out += [" " * (len(lead) + 4) + w for w in wrapped[1:]]
    return out


def text_table(header: Sequence[str], rows: Sequence[Sequence[str]]) -> list[str]:
    """Rows under a header, columns padded to their widest cell and two spaces apart.

    >>> text_table(["#", "item"], [["1", "P"]])
    ['#  item', '-  ----', '1  P']
    """
    widths = [max(len(h), *(len(r[k]) for r in rows)) if rows else len(h) for k, h in enumerate(header)]

    def line(cells: Sequence[str]) -> str:
        return "  ".join(c.ljust(widths[k]) for k, c in enumerate(cells)).rstrip()

    return [line(header), line(["-" * w for w in widths]), *(line(r) for r in rows)]


_STYLE_WORDS = {"marks": "numeric check", "band": "tolerance band", "line": "curve"}


def _series_name(s: Series) -> str:
    """What a curve is, for a list: its label, and the state it belongs to when the label does not say."""
    what = squash(s.label) if s.label else _STYLE_WORDS.get(s.style, s.style)
    return what if not s.key or s.key == s.label else f"{what}, {s.key}"


def figure_lines(figure: Figure) -> list[str]:
    """A figure where no picture can be drawn: its caption and the range of each curve.

    >>> from derive.documents.blocks import N, Series
    >>> figure_lines(Figure("Response", N("t"), N("x"), (Series("x_1", ((0.0, 1.0), (2.0, 0.5))),)))
    ['Figure: Response', '  x_1: 2 points, t from 0 to 2, x from 0.5 to 1']
    """
    out = [f"Figure: {squash(figure.caption)}"]
    for s in figure.series:
        xs = [x for x, _ in s.points]
        ys = [y for _, y in s.points]
        span = (
            f", {figure.xlabel.plain} from {min(xs):.3g} to {max(xs):.3g}, {figure.ylabel.plain} from {min(ys):.3g} to {max(ys):.3g}"
            if s.points
            else ""
        )
        out.append(f"  {_series_name(s)}: {len(s.points)} point{'' if len(s.points) == 1 else 's'}{span}")
    return out


def blocks_to_text(blocks: Sequence[Block], fmt: MathFormatter) -> str:
    """Blocks as plain text, 100 columns wide."""
    out: list[str] = []
    for blk in blocks:
        if isinstance(blk, Title):
            out += [blk.text, "=" * min(len(blk.text), WIDTH)]
            out += textwrap.wrap("; ".join(f"{label}: {value or '--'}" for label, value in blk.fields), width=WIDTH)
            out.append("")
        elif isinstance(blk, Heading):
            text = blk.plain().upper() if blk.level <= 2 else blk.plain()
            rule = {1: "=", 2: "=", 3: "-"}.get(blk.level, "-")
            out += ["", text, rule * min(len(text), WIDTH)]
        elif isinstance(blk, Para):
            if blk.parts:
                out += textwrap.wrap(_plain(blk.parts, fmt), width=WIDTH, break_long_words=False) or [""]
        elif isinstance(blk, Eq):
            out += _plain_eq_rows(blk.rows, fmt)
        elif isinstance(blk, MathRows):
            out += ["  " + "   ".join([f"{r[0].plain} = {r[1].plain}", *(c.plain for c in r[2:] if c.plain)]) for r in blk.rows]
        elif isinstance(blk, TermSum):
            lead = f"  {blk.lhs.plain} = "
            for k, (coeff, vec) in enumerate(blk.terms):
                out.append((lead if k == 0 else " " * (len(lead) - 2) + "+ ") + f"({fmt.plain(coeff)}) {fmt.plain(vec)}")
        elif isinstance(blk, Items):
            for k, item in enumerate(blk.items, start=1):
                mark = f"{k}. " if blk.numbered else "- "
                lines = textwrap.wrap(_plain(item, fmt), width=WIDTH - len(mark), break_long_words=False) or [""]
                out.append(mark + lines[0])
                out += [" " * len(mark) + line for line in lines[1:]]
        elif isinstance(blk, Table):
            header = [h if isinstance(h, str) else _plain(h, fmt) for h in blk.header]
            out += text_table(header, [[_plain(cell, fmt) for cell in row] for row in blk.rows])
        elif isinstance(blk, Alert):
            text = _plain(blk.text, fmt)
            bar = "!" * (len(text) + 8)
            out += [bar, f"!!! {text} !!!", bar]
            if blk.detail:
                out += textwrap.wrap(_plain(blk.detail, fmt), width=WIDTH, break_long_words=False)
        elif isinstance(blk, Figure):
            # plain text draws no pictures: one line says where the figure is
            out.append(f"[Figure: {squash(blk.name)}, drawn in the PDF and Markdown outputs]")
        elif isinstance(blk, Caution):
            # kept on one line, so the caution can be quoted and searched for verbatim
            out += ["", "Caution: " + squash(blk.text)]
    return "\n".join(out).strip("\n") + "\n"


@dataclass(frozen=True)
class TextRenderer(Renderer):
    """Any document as plain text (ASCII mathematics in sympy's notation).

    >>> TextRenderer().suffix
    '.txt'
    """

    name: str = "text"
    suffix: str = ".txt"
    style: MathStyle = field(default_factory=MathStyle)

    def render(self, document: Any, *, fragment: bool = False) -> str:
        """Plain text of the document; ``fragment`` leaves out the title block."""
        layout = as_document(document).layout(style=self.style, fragment=fragment)
        return blocks_to_text(layout.blocks, layout.fmt)
