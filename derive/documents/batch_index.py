"""The index of a batch of calculation sheets as a document: one row per case.

``BatchIndexDocument`` describes a batch's results once, in blocks; the one
renderer registry writes it in any format, and ``write_index`` writes
index.tex, index-body.tex (for a report's appendix) and index.pdf through
the one writer, ``derive.output.write_outputs``.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path
from typing import Any, Mapping, Sequence

import sympy as sp

from ..errors import DeriveError
from ..limits import LimitExpired, inner_limit
from ..model import SheetMeta
from ..render.printing import MathFormatter, MathStyle
from .base import Document, Frame, Layout, label_key, program_versions
from .blocks import Alert, Block, Caution, Code, Figure, Heading, Inline, N, P, Strong, Table
from .reading_section import figure_span, response_figure

__all__ = ["BatchIndexDocument", "write_index", "index_rows", "response_thumbnails", "response_thumbnail", "TITLE", "INDEX_FIGURES"]

#: The index draws the response of at most this many cases (a sweep of hundreds would make a book).
INDEX_FIGURES = 24
#: Seconds one case's small figure may take before it is left out.
FIGURE_SECONDS = 10.0

TITLE = "Index of calculation sheets"

CAUTION = (
    "The sheets listed were produced by software ({program}, with sympy {sympy}). Each must be checked and "
    "approved under the user's own quality procedures before it is relied on. The models -- their linearity, "
    "their constant coefficients and the parameter values -- are the user's responsibility, and applicable "
    "codes and licensed professional practice govern the use of the results. A case marked other than "
    "\"ok\" has no verified result and must not be used."
)


def index_rows(results: Sequence[Any]) -> list[dict[str, Any]]:
    """One row of plain values per case result: name, outcome, spectrum, check, time, sheet."""
    rows = []
    for r in results:
        sheet = next((o for o in r.outputs if o.endswith(".pdf")), "") or next(
            (o for o in r.outputs if o.endswith(".tex") and not o.endswith("-body.tex")), ""
        )
        if r.residual_method:
            check = ("residual zero" if r.residual_zero else "residual NOT zero") + f" ({r.residual_method})"
            if r.max_rel_gap is not None:
                check += f"; numeric gap {r.max_rel_gap:.1e}"
        else:
            check = r.message.splitlines()[0][:90] if r.message else ""
        rows.append(
            {
                "case": r.name,
                "status": str(r.status),
                "ok": bool(r.ok),
                "cached": bool(r.cached),
                "spectrum": r.spectrum or "",
                "check": check,
                "seconds": f"{r.seconds:.2f}",
                "sheet": sheet.rsplit("/", 1)[-1],
            }
        )
    return rows


def response_thumbnail(solution: Any, name: str) -> Figure | None:
    """The small response figure of one verified initial value problem, or None.

    Drawn from the exact solution like the sheet's figure, with fewer points and
    no check points (the case's sheet has those); None when it cannot be drawn
    in ``FIGURE_SECONDS`` or has parameters without values.  A batch worker
    draws it beside the sheet, so the index has it even when solutions are
    not kept.
    """
    if solution is None or not solution.ok or not solution.system.is_ivp:
        return None
    try:
        with inner_limit(FIGURE_SECONDS):
            span = figure_span(solution)
            if span is None:
                return None
            figure = response_figure(solution, span=span, points=61, checks=False, height=0.2)
    except (DeriveError, LimitExpired):
        return None
    return Figure(f"{name}: {figure.caption}", figure.xlabel, figure.ylabel, figure.series, figure.lines, name, figure.height)


def response_thumbnails(results: Sequence[Any], *, limit: int = INDEX_FIGURES) -> tuple[Figure, ...]:
    """The small response figures of the first ``limit`` verified initial value problems.

    A result's own ``thumbnail`` (drawn by the worker) is used; else one is
    drawn from its kept solution.
    """
    out: list[Figure] = []
    for r in results:
        if len(out) >= limit:
            break
        if not r.ok:
            continue
        figure = getattr(r, "thumbnail", None) or response_thumbnail(getattr(r, "solution", None), r.name)
        if figure is not None:
            out.append(figure)
    return tuple(out)


@dataclass(frozen=True)
class BatchIndexDocument(Document):
    """The index of a batch: ``results`` (case results), ``counts`` (status -> number),
    ``total`` cases asked for, and whether the batch was ``interrupted``.

    >>> BatchIndexDocument((), {"ok": 0}, total=0).record()["total"]
    0
    """

    kind = "index"
    body_file = True
    results: tuple[Any, ...]
    counts: Mapping[str, int]
    interrupted: bool = False
    total: int = 0

    def layout(self, *, style: MathStyle, fragment: bool = False) -> Layout:
        """The index's blocks: counts, one table row per case, the caution."""
        rows = index_rows(self.results)
        b: list[Block] = [Heading(2, TITLE)]
        if self.interrupted:
            b.append(Alert((f"The batch was interrupted: {len(rows)} of {self.total} cases finished; only those are listed.",)))
        others = "".join(f"; {n} {status}" for status, n in self.counts.items() if status != "ok" and n)
        b.append(P(f"{self.total} case{'' if self.total == 1 else 's'}: {self.counts.get('ok', 0)} solved and verified{others}."))
        b.append(P("Each line names the case, its outcome, the kind of spectrum of ", N("A"),
                   ", the independent check and the file of its sheet, which is in the folder ",
                   Code("cases/<case>/", breakable=True), " beside this index."))
        table_rows: list[tuple[tuple[Inline, ...], ...]] = []
        for row in rows:
            outcome: Inline = row["status"] if row["ok"] else Strong(row["status"])
            table_rows.append((
                (Code(row["case"], breakable=True),),
                (outcome, " (reused)" if row["cached"] else ""),
                (row["spectrum"] or "--",),
                (row["check"] or "--",),
                (row["seconds"],),
                (Code(row["sheet"], breakable=True),) if row["sheet"] else ("--",),
            ))
        b.append(Table(
            ("Case", "Outcome", "Spectrum", "Check", "Time [s]", "Sheet"),
            tuple(table_rows),
            align="llllrl",
            widths=(0.20, 0.10, 0.12, 0.22, None, 0.14),
            long=True,
        ))
        thumbnails = response_thumbnails(self.results)
        if thumbnails:
            b.append(Heading(3, "Responses at a glance"))
            b.append(P(
                "The response of each state of the verified cases, from the exact solution"
                + (f" (the first {INDEX_FIGURES})" if len(thumbnails) == INDEX_FIGURES else "")
                + "; each sheet has the full reading and the numeric check."
            ))
            b += thumbnails
        program = program_versions()[0]
        b.append(Caution(CAUTION.format(program=f"{program[0]} {program[1]}", sympy=sp.__version__)))
        return Layout(tuple(b), MathFormatter.for_roots((), style=style))

    def record(self) -> dict[str, Any]:
        """The index as plain data."""
        return {
            "title": TITLE,
            "total": self.total,
            "interrupted": self.interrupted,
            "counts": dict(self.counts),
            "cases": index_rows(self.results),
        }

    def frame(self) -> Frame:
        """The running header and footers of the index."""
        program = program_versions()[0]
        names = "|".join(str(getattr(r, "name", "")) for r in self.results)
        return Frame(
            title=TITLE,
            meta=SheetMeta(title=TITLE, subject=TITLE),
            key=label_key("eigensheet-index", names, str(self.total)),
            footer_left=f"Produced by {program[0]} {program[1]} (sympy {sp.__version__})",
            footer_right=("To be checked and approved before use",),
            packages=("longtable",),
        )


def write_index(
    out_dir: Path, results: Sequence[Any], *, counts: Any, pdf: bool, interrupted: bool, total: int
) -> tuple[Path, ...]:
    """index.tex (standalone) and index-body.tex (for \\input), and index.pdf when asked."""
    from ..output import write_outputs

    document = BatchIndexDocument(tuple(results), counts, interrupted=interrupted, total=total)
    return write_outputs(document, out_dir, stem="index", formats=("latex",), pdf=bool(pdf))
