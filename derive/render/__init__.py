"""Renderers: any document (sheet, check report, batch index) as LaTeX, Markdown, text or JSON.

``RENDERERS`` maps a format name to a renderer; ``render`` looks one up.
Every renderer receives a document (``derive.documents``) and reads it only
through its blocks, its record and its frame, so a new output format is one
renderer class registered here and it works for every document type; the
contract test in ``tests/test_documents.py`` runs every document type
through every renderer.  A ``Solution`` stands for its calculation sheet.
"""

from __future__ import annotations

from typing import Any

from ..errors import InputError
from .base import Renderer
from .jsonout import JsonRenderer
from .latex import LatexRenderer
from .markdown import MarkdownRenderer
from .text import TextRenderer

__all__ = ["Renderer", "RENDERERS", "render", "formats", "renderer_for"]

#: Format name -> renderer, in the order help texts list them.
RENDERERS: dict[str, Renderer] = {
    "latex": LatexRenderer(),
    "markdown": MarkdownRenderer(),
    "text": TextRenderer(),
    "json": JsonRenderer(),
}


def formats() -> tuple[str, ...]:
    """The known format names.

    >>> formats()
    ('latex', 'markdown', 'text', 'json')
    """
    return tuple(RENDERERS)


def renderer_for(format: str) -> Renderer:
    """The renderer registered for ``format``; ``InputError`` lists the known ones.

    >>> renderer_for("text").suffix
    '.txt'
    """
    try:
        return RENDERERS[format]
    except (KeyError, TypeError):
        raise InputError(
            f"unknown output format {format!r}; expected one of {', '.join(RENDERERS)}",
            key="format",
        ) from None


def render(document: Any, format: str = "latex", *, fragment: bool = False) -> str:
    """Render a document (or a Solution's sheet) as text in the named format.

    >>> render(solution, "json")  # doctest: +SKIP
    '{"case": ...'
    """
    return renderer_for(format).render(document, fragment=fragment)
