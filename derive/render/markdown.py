"""Any document as Markdown: the blocks of ``derive.documents.blocks`` with ``$...$`` LaTeX.

Mathematics is written with the same LaTeX printer as the PDF sheet, for
Markdown viewers that render ``$...$`` and ``$$...$$`` (MathJax, KaTeX);
user text is escaped by ``derive.render.escape.md_escape`` so it cannot
start a heading, a link, HTML, a table cell or math.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any, Sequence

import sympy as sp

from ..documents.blocks import Alert, Block, Caution, Code, Eq, Figure, Heading, Inline, Items, Math, MathRows, Name, Para, Strong, Table, TermSum, Title
from .base import Renderer, as_document
from .escape import md_escape
from .text import figure_lines
from .printing import MathFormatter, MathStyle

__all__ = ["MarkdownRenderer", "md_escape", "blocks_to_markdown"]


def _inline(part: Inline, fmt: MathFormatter) -> str:
    if isinstance(part, Math):
        return f"${fmt.m(part.obj)}$"
    if isinstance(part, Name):
        return f"${part.latex}$"
    if isinstance(part, Strong):
        inner = md_escape(part.text) if isinstance(part.text, str) else _line(part.text, fmt)
        return f"**{inner}**"
    if isinstance(part, Code):
        # a code span shows its text verbatim; a backtick would end it and a bar a table cell
        return "`" + " ".join(part.text.replace("`", "'").replace("|", "\\|").split()) + "`"
    return md_escape(part)


def _line(parts: Sequence[Inline], fmt: MathFormatter) -> str:
    return "".join(_inline(p, fmt) for p in parts)


def blocks_to_markdown(blocks: Sequence[Block], fmt: MathFormatter) -> str:
    """Blocks as Markdown text."""
    out: list[str] = []
    for blk in blocks:
        if isinstance(blk, Title):
            out += [f"# {md_escape(blk.text)}", ""]
            if blk.fields:
                out += ["; ".join(f"**{md_escape(label)}:** {md_escape(value or '--')}" for label, value in blk.fields), ""]
        elif isinstance(blk, Heading):
            math = f"${blk.math.latex}$" if blk.math is not None else ""
            out += ["#" * min(blk.level, 6) + " " + md_escape(blk.text) + math, ""]
        elif isinstance(blk, Para):
            if blk.parts:
                out += [_line(blk.parts, fmt), ""]
        elif isinstance(blk, MathRows):
            rows = [f"{r[0].latex} &= {r[1].latex}" + "".join(f" && {c.latex}" for c in r[2:]) for r in blk.rows]
            out += ["$$", "\\begin{aligned}", " \\\\\n".join(rows), "\\end{aligned}", "$$", ""]
        elif isinstance(blk, TermSum):
            terms = " \\\\\n&\\quad + ".join(rf"\left({fmt.m(c)}\right) {fmt.m(v)}" for c, v in blk.terms)
            out += ["$$", "\\begin{aligned}", f"{blk.lhs.latex} &= {terms}", "\\end{aligned}", "$$", ""]
        elif isinstance(blk, Eq):
            rows = []
            for name, rhs in blk.rows:
                if isinstance(rhs, sp.MatrixBase):
                    rows.append(fmt.matrix_rows(name.latex, rhs))
                else:
                    rows.append(fmt.equation_rows([(name.latex, rhs)]))
            out += ["$$", "\\begin{aligned}", " \\\\\n".join(rows), "\\end{aligned}", "$$", ""]
        elif isinstance(blk, Items):
            for k, item in enumerate(blk.items, start=1):
                mark = f"{k}." if blk.numbered else "-"
                out.append(f"{mark} " + _line(item, fmt))
            out.append("")
        elif isinstance(blk, Table):
            out.append("| " + " | ".join(md_escape(h) if isinstance(h, str) else _line(h, fmt) for h in blk.header) + " |")
            out.append("|" + "|".join("---:" if blk.column_align(k) == "r" else "---" for k in range(len(blk.header))) + "|")
            out += ["| " + " | ".join(_line(cell, fmt) for cell in row) + " |" for row in blk.rows]
            out.append("")
        elif isinstance(blk, Alert):
            out += [f"> **{_line(blk.text, fmt)}**"]
            if blk.detail:
                out += [">", f"> {_line(blk.detail, fmt)}"]
            out.append("")
        elif isinstance(blk, Figure):
            # Markdown has no plot; the caption and each curve's range stand in for it
            lines = figure_lines(blk)
            out += [f"*{md_escape(lines[0])}*", ""] + [f"- {md_escape(line.strip())}" for line in lines[1:]] + [""]
        elif isinstance(blk, Caution):
            out += [f"*Caution.* {md_escape(blk.text)}", ""]
    return "\n".join(out).rstrip("\n") + "\n"


@dataclass(frozen=True)
class MarkdownRenderer(Renderer):
    """Any document as Markdown with LaTeX mathematics.

    >>> MarkdownRenderer().suffix
    '.md'
    """

    name: str = "markdown"
    suffix: str = ".md"
    style: MathStyle = field(default_factory=MathStyle)

    def render(self, document: Any, *, fragment: bool = False) -> str:
        """Markdown of the document; ``fragment`` leaves out the title block."""
        layout = as_document(document).layout(style=self.style, fragment=fragment)
        return blocks_to_markdown(layout.blocks, layout.fmt)
