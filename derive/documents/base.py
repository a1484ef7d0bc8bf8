"""The document contract: what a document type gives every renderer.

A document type wraps one result object (a ``Solution``, a ``CheckReport``,
a batch's results) and describes it once, format-neutrally:

* ``layout(style=..., fragment=...)`` -> ``Layout``: the blocks of
  ``derive.documents.blocks`` plus the math formatter that names its indexed
  roots; Markdown, text and the generic LaTeX rendering read only this;
* ``record()`` -> plain data (str, int, float, bool, None, lists, dicts) for
  the JSON renderer;
* ``frame()`` -> ``Frame``: what surrounds the blocks on a printed page
  (running header fields, footers, the key of its "Sheet X of Y" labels).

So a new output format is one renderer class over these three, and it works
for every document type at once.
"""

from __future__ import annotations

import hashlib
import platform
from dataclasses import dataclass, field
from typing import Any, ClassVar

import sympy as sp

from ..model import Parameter, SheetMeta
from ..render.printing import MathFormatter, MathStyle
from .blocks import Block, Inline

__all__ = ["Document", "Layout", "Frame", "program_versions", "parameter_assumptions", "label_key"]


@dataclass(frozen=True)
class Layout:
    """A document's blocks and the formatter that prints their mathematics."""

    blocks: tuple[Block, ...]
    fmt: MathFormatter


@dataclass(frozen=True)
class Frame:
    """The page around a document's blocks (used by the LaTeX renderer).

    ``meta`` fills the running header (project, calculation number, ...);
    ``subject_prefix`` goes before its subject; ``footer_left`` is plain
    text, ``footer_right`` inline parts; ``key`` is unique to the document,
    so two documents ``\\input`` into one report keep separate sheet counts.
    """

    title: str
    meta: SheetMeta
    key: str
    subject_prefix: str = ""
    footer_left: str = ""
    footer_right: tuple[Inline, ...] = ()
    packages: tuple[str, ...] = field(default=())


class Document:
    """Base of all document types; this docstring is the contract.

    * ``kind`` names the type (``"sheet"``, ``"check"``, ``"index"``);
    * ``body_file``: whether writers add ``<stem>-body.tex``, the LaTeX
      fragment for a host report, beside the standalone ``<stem>.tex``;
    * ``layout``, ``record`` and ``frame`` are pure: the same result gives
      the same description, and nothing is written anywhere;
    * mathematics stays sympy and user text stays ``str`` inside the blocks
      (renderers escape and print it); ``fragment=True`` leaves out the
      title block.
    """

    kind: ClassVar[str] = "document"
    body_file: ClassVar[bool] = False

    def layout(self, *, style: MathStyle, fragment: bool = False) -> Layout:
        """The document as blocks; subclasses implement this."""
        raise NotImplementedError(f"document type {type(self).__name__} does not implement layout()")

    def record(self) -> dict[str, Any]:
        """The document as plain data for JSON; subclasses implement this."""
        raise NotImplementedError(f"document type {type(self).__name__} does not implement record()")

    def frame(self) -> Frame:
        """The page around the blocks; subclasses implement this."""
        raise NotImplementedError(f"document type {type(self).__name__} does not implement frame()")


#: The name users meet on every screen, command and sheet (the Python package is ``derive``).
PROGRAM_NAME = "eigensheet"


def program_versions() -> tuple[tuple[str, str], ...]:
    """(name, version) of this program, sympy and Python, for the record.

    >>> [name for name, _ in program_versions()]
    ['eigensheet', 'sympy', 'Python']
    """
    from .. import __version__ as version

    return ((PROGRAM_NAME, str(version)), ("sympy", sp.__version__), ("Python", platform.python_version()))


_ASSUMPTION_WORDS = ("positive", "negative", "nonnegative", "nonpositive", "nonzero", "real", "integer")
_IMPLIED = {
    "positive": ("nonnegative", "nonzero", "real"),
    "negative": ("nonpositive", "nonzero", "real"),
    "nonnegative": ("real",),
    "nonpositive": ("real",),
    "nonzero": (),
    "integer": ("real",),
    "real": (),
}


def parameter_assumptions(param: Parameter) -> tuple[str, ...]:
    """The sign and domain assumptions declared on a parameter, weakest implied ones dropped.

    >>> parameter_assumptions(Parameter(sp.Symbol("k", positive=True)))
    ('positive',)
    """
    held = [w for w in _ASSUMPTION_WORDS if getattr(param.symbol, f"is_{w}") is True]
    implied = {i for w in held for i in _IMPLIED[w]}
    return tuple(w for w in held if w not in implied)


def label_key(prefix: str, *parts: str) -> str:
    """A LaTeX label key from a hash of ``parts``, unique to one document.

    >>> label_key("eigensheet", "a", "b")[:11]
    'eigensheet-'
    """
    return prefix + "-" + hashlib.sha256("|".join(parts).encode("utf-8")).hexdigest()[:10]
