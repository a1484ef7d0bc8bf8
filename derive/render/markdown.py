"""Any document as Markdown: the blocks of ``derive.documents.blocks`` with ``$...$`` LaTeX.

Mathematics is written with the same LaTeX printer as the PDF sheet, for
Markdown viewers that render ``$...$`` and ``$$...$$`` (MathJax, KaTeX);
user text is escaped by ``derive.render.escape.md_escape`` so it cannot
start a heading, a link, HTML, a table cell or math.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any, Callable, Sequence

import sympy as sp

from ..documents.blocks import Alert, Block, Caution, Code, Eq, Figure, Heading, Inline, Items, Math, MathRows, Name, Para, Strong, Table, TermSum, Title
from .base import Renderer, as_document
from .escape import md_escape
from .text import figure_lines
from .printing import MathFormatter, MathStyle
from .svg import figure_svg, plots_available

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


def _figure_markdown(figure: Figure, path: str | None) -> list[str]:
    """A figure as an image reference with its caption, or a note and each curve's range where no file is written."""
    caption = f"*{md_escape(figure.caption)}*"
    if path is not None:
        return [f"![{figure.name}]({path})", "", caption, ""]
    why = (
        "written as an SVG file beside the Markdown file when the sheet is saved"
        if plots_available()
        else "it needs matplotlib (install the extra eigensheet[plots]) to be written as an SVG file"
    )
    lines = figure_lines(figure)
    return [f"*Figure omitted here ({md_escape(why)}): {md_escape(figure.caption)}*", ""] + [
        f"- {md_escape(line.strip())}" for line in lines[1:]
    ] + [""]


def blocks_to_markdown(blocks: Sequence[Block], fmt: MathFormatter, *, figure_path: Callable[[Figure], str | None] | None = None) -> str:
    """Blocks as Markdown text; ``figure_path`` names the image file written for a figure (None: no file)."""
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
            out += _figure_markdown(blk, figure_path(blk) if figure_path is not None else None)
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

    def render_files(self, document: Any, *, stem: str, fragment: bool = False) -> tuple[str, tuple[tuple[str, bytes], ...]]:
        """Markdown of the document with its figures as SVG files: (text, ((file name, bytes), ...)).

        Each figure becomes ``<stem>-<figure name>.svg``, referenced from the
        text; without matplotlib the text says the figure is omitted and no
        file is made.
        """
        layout = as_document(document).layout(style=self.style, fragment=fragment)
        files: list[tuple[str, bytes]] = []

        def path(figure: Figure) -> str | None:
            svg = figure_svg(figure, fmt=layout.fmt)
            if svg is None:
                return None
            taken = {name for name, _ in files}
            name = f"{stem}-{figure.name}.svg"
            k = 2
            while name in taken:
                name = f"{stem}-{figure.name}-{k}.svg"
                k += 1
            files.append((name, svg))
            return name

        text = blocks_to_markdown(layout.blocks, layout.fmt, figure_path=path)
        return text, tuple(files)
