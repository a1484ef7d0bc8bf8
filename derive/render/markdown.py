"""The sheet as Markdown: the blocks of ``derive.render.text`` with ``$...$`` LaTeX.

Mathematics is written with the same LaTeX printer as the PDF sheet, for
Markdown viewers that render ``$...$`` and ``$$...$$`` (MathJax, KaTeX);
user text is escaped so it cannot start a heading, a link, HTML or math.
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field
from typing import Sequence

import sympy as sp

from ..model import Solution
from . import Renderer
from .printing import MathFormatter, MathStyle
from .text import _squash, Block, Eq, Heading, Inline, Items, Math, Name, Para, Warning_, sheet_blocks

__all__ = ["MarkdownRenderer", "md_escape", "blocks_to_markdown"]

# Enough to stop emphasis, links, HTML, tables, headings and math; "." and
# "-" matter only at the start of a line, which user text never is here.
_MD_SPECIALS = re.compile(r"([\\`*_{}\[\]#|<>$~^])")


def md_escape(text: object) -> str:
    """Escape user text for Markdown (every punctuation mark with a meaning).

    >>> md_escape("x_1 <b>*")
    'x\\\\_1 \\\\<b\\\\>\\\\*'
    """
    return _MD_SPECIALS.sub(r"\\\1", _squash(str(text)))


def _inline(part: Inline, fmt: MathFormatter) -> str:
    if isinstance(part, Math):
        return f"${fmt.m(part.obj)}$"
    if isinstance(part, Name):
        return f"${part.latex}$"
    return md_escape(part)


def blocks_to_markdown(blocks: Sequence[Block], fmt: MathFormatter) -> str:
    """Blocks as Markdown text."""
    out: list[str] = []
    for blk in blocks:
        if isinstance(blk, Heading):
            out += ["#" * min(blk.level, 6) + " " + md_escape(blk.text), ""]
        elif isinstance(blk, Para):
            out += ["".join(_inline(p, fmt) for p in blk.parts), ""]
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
                out.append(f"{mark} " + "".join(_inline(p, fmt) for p in item))
            out.append("")
        elif isinstance(blk, Warning_):
            out += [f"> **{md_escape(blk.text)}**", ""]
    return "\n".join(out).rstrip("\n") + "\n"


@dataclass(frozen=True)
class MarkdownRenderer(Renderer):
    """The sheet as Markdown with LaTeX mathematics.

    >>> MarkdownRenderer().suffix
    '.md'
    """

    name: str = "markdown"
    suffix: str = ".md"
    style: MathStyle = field(default_factory=MathStyle)

    def render(self, solution: Solution, *, fragment: bool = False) -> str:
        """Markdown of the sheet; ``fragment`` leaves out the title block."""
        blocks, fmt = sheet_blocks(solution, style=self.style, fragment=fragment)
        return blocks_to_markdown(blocks, fmt)
