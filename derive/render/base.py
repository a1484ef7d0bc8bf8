"""The renderer contract and the coercion of results to documents."""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

if TYPE_CHECKING:  # pragma: no cover
    from ..documents.base import Document

__all__ = ["Renderer", "as_document"]


def as_document(obj: Any) -> "Document":
    """``obj`` if it is a document; a ``Solution`` becomes its ``SheetDocument``.

    >>> as_document(3)
    Traceback (most recent call last):
    ...
    derive.errors.OutputError: cannot render an object of type int; expected a Solution or a document (derive.documents)
    """
    from ..documents.base import Document
    from ..documents.sheet import SheetDocument
    from ..errors import OutputError
    from ..model import Solution

    if isinstance(obj, Document):
        return obj
    if isinstance(obj, Solution):
        return SheetDocument(obj)
    raise OutputError(
        f"cannot render an object of type {type(obj).__name__}; expected a Solution or a document (derive.documents)"
    )


class Renderer:
    """Base of all renderers; this docstring is the contract.

    A renderer has a ``name`` (the format name users type), a ``suffix``
    (the file name ending, with the dot) and one method, ``render``, that
    turns a document (``derive.documents``: a sheet, a check report, a
    batch index; a ``Solution`` stands for its sheet) into text:

    * it reads the document only through its ``layout()`` (blocks),
      ``record()`` (plain data) and ``frame()`` (page furniture), so it works
      for every document type, present and future;
    * it is pure: the same document gives the same text, and nothing is
      written anywhere (``derive.output`` writes files);
    * it shows every block, whatever its kind, and raises
      ``derive.errors.OutputError`` for something it cannot show rather than
      leaving it out (a sheet step of an unknown kind, for one);
    * user text is escaped by ``derive.render.escape`` for the format,
      mathematics is printed by ``derive.render.printing``;
    * ``fragment=True`` gives a part for inclusion in a larger document
      (LaTeX: no preamble; other formats: no title block); renderers with no
      such distinction ignore it.
    """

    name: str = "base"
    suffix: str = ".txt"

    def render(self, document: Any, *, fragment: bool = False) -> str:
        """Render ``document``; subclasses implement this."""
        raise NotImplementedError(f"renderer {type(self).__name__} does not implement render()")
