"""Renderers: a solved system as LaTeX, Markdown, plain text or JSON.

``RENDERERS`` maps a format name to a renderer; ``render`` looks one up.
Every renderer receives the same ``Solution`` and its step records and must
render every step kind in ``derive.steps.STEP_KINDS`` (the contract test in
``tests/test_render.py`` checks this), so a new output format never touches
the algebra.
"""

from __future__ import annotations

from typing import TYPE_CHECKING, ClassVar

from ..errors import InputError

if TYPE_CHECKING:  # pragma: no cover
    from ..model import Solution

__all__ = ["Renderer", "RENDERERS", "render", "formats"]


class Renderer:
    """Base of all renderers; this docstring is the contract.

    A renderer has a ``name`` (the format name users type), a ``suffix``
    (the file name ending, with the dot) and one method, ``render``, that
    turns a ``Solution`` into text:

    * it is pure: the same solution gives the same text, and nothing is
      written anywhere (``derive.output`` writes files);
    * it shows every step in ``solution.steps``, whatever its kind, and raises
      ``derive.errors.OutputError`` for a kind it cannot show rather than
      leaving it out;
    * user text (titles, names, notes, assumptions, references) is escaped
      for the format, mathematics is printed by ``derive.render.printing``;
    * it shows the verification, and says plainly when it failed;
    * ``fragment=True`` gives a part for inclusion in a larger document
      (LaTeX: no preamble; other formats: no title block); renderers with no
      such distinction ignore it.
    """

    name: ClassVar[str] | str = "base"
    suffix: ClassVar[str] | str = ".txt"

    def render(self, solution: "Solution", *, fragment: bool = False) -> str:
        """Render ``solution``; subclasses implement this."""
        raise NotImplementedError(f"renderer {type(self).__name__} does not implement render()")


from .jsonout import JsonRenderer  # noqa: E402  (the base class must exist first)
from .latex import LatexRenderer  # noqa: E402
from .markdown import MarkdownRenderer  # noqa: E402
from .text import TextRenderer  # noqa: E402

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


def render(solution: "Solution", format: str = "latex", *, fragment: bool = False) -> str:
    """Render a Solution's derivation as text in the named format.

    >>> render(solution, "json")  # doctest: +SKIP
    '{"case": ...'
    """
    try:
        renderer = RENDERERS[format]
    except (KeyError, TypeError):
        raise InputError(
            f"unknown output format {format!r}; expected one of {', '.join(RENDERERS)}",
            key="format",
        ) from None
    return renderer.render(solution, fragment=fragment)
