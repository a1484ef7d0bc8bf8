"""Any document as LaTeX: the calculation sheet's own templates, or the generic block templates.

The sheet has a hand-set layout (``derive.render.latex_sheet``); every other
document type (check report, batch index, and any new one) is set from its
blocks by ``templates/blocks.tex.j2`` inside ``templates/document.tex.j2``,
which shares the sheet's preamble and running header, so every document
looks like the sheets it accompanies.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

from ..documents.base import parameter_assumptions, program_versions
from ..documents.sheet import SheetDocument
from .base import Renderer, as_document
from ..documents.blocks import Figure
from .latex_blocks import FIGURE_PREAMBLE, block_helpers, blocks_latex
from .latex_sheet import render_sheet
from .printing import MathStyle
from .templating import FRAGMENT_PACKAGES, get_template, template_environment

__all__ = [
    "LatexRenderer",
    "template_environment",
    "program_versions",
    "parameter_assumptions",
    "FRAGMENT_PACKAGES",
]


@dataclass(frozen=True)
class LatexRenderer(Renderer):
    """Any document as LaTeX (a standalone document, or a fragment for \\input).

    >>> LatexRenderer().suffix
    '.tex'
    """

    name: str = "latex"
    suffix: str = ".tex"
    style: MathStyle = field(default_factory=MathStyle)

    def render(self, document: Any, *, fragment: bool = False) -> str:
        """The document as LaTeX source; ``fragment`` gives the body for a host report."""
        doc = as_document(document)
        if isinstance(doc, SheetDocument):
            return render_sheet(doc.solution, style=self.style, fragment=fragment)
        layout = doc.layout(style=self.style, fragment=fragment)
        frame = doc.frame()
        versions = program_versions()
        return get_template("document.tex.j2").render(
            frame=frame,
            fragment=fragment,
            body=blocks_latex(layout.blocks, layout.fmt),
            program=versions[0],
            versions=versions,
            packages=FRAGMENT_PACKAGES + frame.packages + ("url",),
            figure_preamble=FIGURE_PREAMBLE if any(isinstance(b, Figure) for b in layout.blocks) else "",
            **block_helpers(layout.fmt),
        )
