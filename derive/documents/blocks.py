"""The format-neutral blocks every document is described in.

A document type (the calculation sheet, the check report, the batch index)
turns its result object into a tuple of these blocks; every renderer turns
blocks into its format.  User text stays ``str`` in a block, so each format
escapes it its own way (``derive.render.escape``), and mathematics stays a
sympy object, so each format prints it its own way (``derive.render.printing``).
A block never holds LaTeX, Markdown or layout decisions, except ``Name``,
which carries the LaTeX and the plain spelling of a named quantity.

Each block class has a ``kind`` (the name templates dispatch on).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any, ClassVar, Union

__all__ = [
    "Math",
    "Name",
    "Strong",
    "Code",
    "Unit",
    "Inline",
    "Title",
    "Heading",
    "Para",
    "Eq",
    "MathRows",
    "TermSum",
    "Items",
    "Table",
    "Alert",
    "Caution",
    "Series",
    "VLine",
    "Figure",
    "Block",
    "P",
    "N",
]


# ---------------------------------------------------------------------------
# Inline parts: a paragraph, a list item or a table cell is a tuple of these


@dataclass(frozen=True)
class Math:
    """Inline mathematics: a sympy expression or matrix."""

    obj: Any


@dataclass(frozen=True)
class Name:
    """A named quantity written differently per format (``P^{-1}`` / ``P^-1``).

    ``latex`` is math-mode LaTeX made by the program, never user text.
    """

    latex: str
    plain: str


@dataclass(frozen=True)
class Strong:
    """Text to stand out (a failure); shown bold where the format can.

    ``text`` is plain text, or inline parts when the bold words hold mathematics.
    """

    text: "str | tuple[Inline, ...]"


@dataclass(frozen=True)
class Code:
    """A file name, path or program text: shown verbatim, never reflowed as words.

    ``breakable``: a long name may be broken across lines (at / . - _), as in a
    narrow table column.
    """

    text: str
    breakable: bool = False


@dataclass(frozen=True)
class Unit:
    """A unit the case declares, as the user wrote it (``"kW"``, ``"m/s^2"``).

    LaTeX sets it with siunitx (``render.siunits.unit_latex``); the other
    formats print the text as written, which is what ``str`` gives.
    """

    text: str

    def __str__(self) -> str:
        return self.text


Inline = Union[str, Math, Name, Strong, Code, Unit]


# ---------------------------------------------------------------------------
# Blocks


@dataclass(frozen=True)
class Title:
    """The title of a document with its identification fields (label, value)."""

    kind: ClassVar[str] = "title"
    text: str
    fields: tuple[tuple[str, str], ...] = ()


@dataclass(frozen=True)
class Heading:
    """A section heading: level 1 the title line, 2 a section, 3 a subsection.

    ``math`` ends the heading with a formula (``Solution for y_1``);
    ``bookmark`` is the words that stand for it where no formula can go (PDF
    bookmarks).
    """

    kind: ClassVar[str] = "heading"
    level: int
    text: str
    math: Name | None = None
    bookmark: str = ""

    def plain(self) -> str:
        """The heading as plain text.

        >>> Heading(3, "Solution for ", N("y_{1}", "y_1")).plain()
        'Solution for y_1'
        """
        return self.text + (self.math.plain if self.math is not None else "")


@dataclass(frozen=True)
class Para:
    """A paragraph of running text.

    ``runs_on``: the text continues the paragraph before it (LaTeX sets both
    in one paragraph; the compact formats still start a new line).
    """

    kind: ClassVar[str] = "para"
    parts: tuple[Inline, ...]
    runs_on: bool = False


@dataclass(frozen=True)
class Eq:
    """Displayed equations ``lhs = rhs``, one per row."""

    kind: ClassVar[str] = "eq"
    rows: tuple[tuple[Name, Any], ...]


@dataclass(frozen=True)
class MathRows:
    """Formulas aligned in columns: each row is ``lhs = rhs`` followed by notes (``approx 1.5``, ...)."""

    kind: ClassVar[str] = "mathrows"
    rows: tuple[tuple[Name, ...], ...]


@dataclass(frozen=True)
class TermSum:
    """``lhs`` as a sum of products ``(scalar) vector``, one term per line, unmultiplied."""

    kind: ClassVar[str] = "termsum"
    lhs: Name
    terms: tuple[tuple[Any, Any], ...]


@dataclass(frozen=True)
class Items:
    """A bulleted (or numbered) list."""

    kind: ClassVar[str] = "items"
    items: tuple[tuple[Inline, ...], ...]
    numbered: bool = False


@dataclass(frozen=True)
class Table:
    """A table with a header row; each cell is a tuple of inline parts.

    ``align`` has one letter per column (``l``, ``r``, ``c``); ``widths``
    gives a column's share of the line width where its text should wrap
    (None: as wide as its content); ``long`` allows a page break inside.
    """

    kind: ClassVar[str] = "table"
    header: "tuple[str | tuple[Inline, ...], ...]"
    rows: tuple[tuple[tuple[Inline, ...], ...], ...]
    align: str = ""
    widths: tuple[float | None, ...] = ()
    long: bool = False

    def column_align(self, k: int) -> str:
        """The alignment letter of column ``k`` (left when not given)."""
        return self.align[k] if k < len(self.align) else "l"

    def column_width(self, k: int) -> float | None:
        """Column ``k``'s share of the line width, or None."""
        return self.widths[k] if k < len(self.widths) else None


@dataclass(frozen=True)
class Alert:
    """A prominent warning (verification failed, a wrong step), with an optional detail line."""

    kind: ClassVar[str] = "alert"
    text: tuple[Inline, ...]
    detail: tuple[Inline, ...] = ()


@dataclass(frozen=True)
class Caution:
    """The caution that closes an engineering record, kept whole in every format."""

    kind: ClassVar[str] = "caution"
    text: str


@dataclass(frozen=True)
class Series:
    """One curve of a figure: a label (plain text) and its (x, y) samples.

    The samples are floats for drawing only; they are computed from the
    exact result by the document type, never used in the algebra.
    ``style`` is ``"line"`` (a curve) or ``"marks"`` (points only: check
    points, eigenvalues); series with the same ``key`` share a colour (a
    curve and its check points); an empty ``label`` has no legend entry.
    ``symbol`` is the sympy expression a curve stands for (a state), or None:
    a format that sets mathematics prints it in the legend with the sheet's
    printer (``T_1``, ``q_1'``), and ``label`` is its plain spelling.
    """

    label: str
    points: tuple[tuple[float, float], ...]
    style: str = "line"
    key: str = ""
    symbol: Any = None


@dataclass(frozen=True)
class VLine:
    """A vertical line across a figure at ``at`` (a switch time, an impulse, the imaginary axis).

    ``style`` is ``"switch"`` (dashed), ``"impulse"`` (dotted) or ``"axis"`` (solid, thin).
    """

    at: float
    style: str = "switch"


@dataclass(frozen=True)
class Figure:
    """A plot of one or more curves against a common axis (a response over time, say).

    ``lines`` are vertical marks across the plot; ``name`` is a short file-name
    part for formats that write the figure to a file of its own (Markdown's SVG);
    ``height`` is the plot's height as a share of the line width.
    """

    kind: ClassVar[str] = "figure"
    caption: str
    xlabel: Name
    ylabel: Name
    series: tuple[Series, ...]
    lines: tuple[VLine, ...] = ()
    name: str = "figure"
    height: float = 0.36
    xmode: str = "linear"  # "log": a logarithmic x axis (a frequency response)


Block = Union[Title, Heading, Para, Eq, MathRows, TermSum, Items, Table, Alert, Caution, Figure]


def P(*parts: Inline, runs_on: bool = False) -> Para:
    """A paragraph from its parts.

    >>> P("x = ", Math(1)).parts
    ('x = ', Math(obj=1))
    """
    return Para(tuple(parts), runs_on)


def N(latex: str, plain: str | None = None) -> Name:
    """A Name whose plain spelling defaults to its LaTeX.

    >>> N("A").plain
    'A'
    """
    return Name(latex, latex if plain is None else plain)
