"""The check report of a hand derivation as a document, in every output format.

``CheckReportDocument`` describes a ``CheckReport`` once, in blocks; the one
renderer registry writes it as LaTeX, Markdown, text or JSON.
``render_check`` and ``write_check_outputs`` are the entry points the CLI
uses (thin calls to ``derive.render`` and ``derive.output``).

>>> from derive.check import check
>>> rep = check([[1, 0], [0, 2]], eigenvalues=[1, 2])
>>> render_check(rep).splitlines()[0]
'Check of a hand derivation'
"""

from __future__ import annotations

import os
from dataclasses import dataclass
from pathlib import Path
from typing import Any, Sequence

import sympy as sp

from ..check import CAUTION, CHECK_FORMATS, CheckReport
from ..errors import InputError
from ..model import SheetMeta
from ..render.printing import MathFormatter, MathStyle, plain_text
from .base import Document, Frame, Layout, label_key, program_versions
from .blocks import Alert, Block, Caution, Code, Eq, Heading, Inline, Items, Math, N, Name, P, Strong, Table, Title

__all__ = ["CheckReportDocument", "render_check", "write_check_outputs", "TITLE"]

TITLE = "Check of a hand derivation"

#: How the derivation steps are named (the items keep plain names).
_STEP_NAMES = {"P_inv": N("P^{-1}", "P_inv"), "P": N("P"), "D": N("D")}


def _step(step: str) -> Inline:
    return _STEP_NAMES.get(step, step)


def _verdict(ok: bool) -> Inline:
    return "pass" if ok else Strong("FAIL")


@dataclass(frozen=True)
class CheckReportDocument(Document):
    """A check report; ``meta`` (the case's ``SheetMeta``) fills the header,
    ``sources`` lists (file name, SHA-256) of the case and claim files, and
    ``brief`` keeps only the verdicts (for a terminal).

    >>> CheckReportDocument.kind
    'check'
    """

    kind = "check"
    report: CheckReport
    meta: SheetMeta | None = None
    sources: tuple[tuple[str, str], ...] = ()
    brief: bool = False

    @property
    def title(self) -> str:
        """The report's title, with the case's title when it has one."""
        if self.meta is not None and self.meta.title:
            return f"{TITLE}: {self.meta.title}"
        return TITLE

    def layout(self, *, style: MathStyle, fragment: bool = False) -> Layout:
        """The report's blocks."""
        # No root names: a check report has no legend, so an indexed root is printed in full.
        fmt = MathFormatter.for_roots((), style=style)
        rep = self.report
        meta = self.meta or SheetMeta()
        items = rep.items
        passed = sum(it.ok for it in items)
        first = rep.first_failure
        b: list[Block] = []
        if not fragment:
            fields = (
                ("Project", meta.project), ("Calculation no.", meta.calc_number),
                ("Subject", meta.subject), ("Revision", meta.revision),
                ("Prepared by", meta.prepared_by), ("Date", meta.date),
                ("Checked by", meta.checked_by), ("Date", ""),
            )
            b.append(Title(self.title, () if self.brief and self.meta is None else fields))
        if first is not None:
            b.append(Alert(("CHECK FAILED: the first wrong step is ", _step(first.step), "."),
                           (f"{passed} of {len(items)} claimed items pass; see the summary and the items below.",)))
        if not self.brief:
            b += self._inputs(fmt)
        b.append(Heading(2, "Summary"))
        b.append(Table(
            ("#", "Step", "Item", "Result", "Decided"),
            tuple(((str(k),), (_step(it.step),), (it.name,), (_verdict(it.ok),), (it.method or "-",))
                  for k, it in enumerate(items, start=1)),
            align="rllll",
        ))
        b.append(P("First wrong step: ", *((_step(first.step), f" ({first.name})") if first else ("none",))))
        b.append(P(f"Result: {passed} of {len(items)} items pass (exit code {rep.exit_code})."))
        b.append(Heading(2, "Items"))
        if self.brief:
            b.append(Items(tuple((f"[{'pass' if it.ok else 'FAIL'}] {it.name}: {it.detail}",) for it in items), numbered=True))
        else:
            for it in items:
                b += [Heading(3, f"{it.name}: {'pass' if it.ok else 'FAIL'}"), P(it.detail)]
                shown = (("claimed", it.claimed), ("residual", it.residual if not it.ok else None), ("right value", it.expected))
                rows = tuple((Name(r"\text{%s}" % label, label), obj) for label, obj in shown if obj is not None)
                if rows:
                    b.append(Eq(rows))
        if rep.notices:
            b += [Heading(2, "Notices"), Items(tuple((n,) for n in rep.notices))]
        b.append(Caution(CAUTION))
        return Layout(tuple(b), fmt)

    def _inputs(self, fmt: MathFormatter) -> list[Block]:
        rep = self.report
        t = rep.t
        A, f = N("A"), N(f"f({fmt.m(t)})", f"f({fmt.plain(t)})")
        ivp = ("", N(f"x({fmt.m(rep.t0)}) = x_0", f"x({fmt.plain(rep.t0)}) = x0"), ",") if rep.x0 is not None else ()
        b: list[Block] = [
            Heading(2, "Purpose"),
            P("To check, item by item, a hand derivation of the solution of the linear system ",
              N(f"x'({fmt.m(t)}) = A\\,x({fmt.m(t)}) + f({fmt.m(t)})", f"x' = A x + f({fmt.plain(t)})"),
              *((", with ", ivp[1], ",") if ivp else ()),
              " and to name the first wrong step in derivation order (eigenvalues, eigenvectors, ",
              N("P"), ", ", N("D"), ", ", N("P^{-1}", "P^-1"),
              ", general solution, solution of the initial value problem)."),
            Heading(2, "Inputs"),
            Eq(((A, rep.A), (f, rep.f), *(((N(f"x_0 = x({fmt.m(rep.t0)})", f"x0 = x({fmt.plain(rep.t0)})"), rep.x0),) if rep.x0 is not None else ()))),
        ]
        if rep.constants:
            b.append(P("The claimant's constants: ", Math(sp.Tuple(*rep.constants)), "."))
        record: list[tuple[tuple[Inline, ...], ...]] = []
        for k, (name, digest) in enumerate(self.sources):
            record += [(("Case file" if k == 0 else "Claim file",), (Code(name),)), (("SHA-256",), (Code(digest),))]
        for k, (name, version) in enumerate(program_versions()):
            label = "Program" if k == 0 else ("Algebra library" if name == "sympy" else "Interpreter")
            record.append(((label,), (f"{name} {version}",)))
        b.append(Table(("Record", ""), tuple(record)))
        b += [
            Heading(2, "Method"),
            P("Each claimed item is tested on its own, by its defining property, without using the program's own "
              "derivation (which is consulted only to state the right value of a failed solution):"),
            Items((
                ("eigenvalues: ", N(r"\prod_k (\lambda - \lambda_k) = \det(\lambda I - A)", "prod_k (lambda - lambda_k) = det(lambda I - A)"),
                 ", so the values are the roots with the right multiplicities, in any order;"),
                ("eigenvectors: ", N(r"v \neq 0", "v != 0"), " and ", N(r"A v - \lambda v = 0", "A v - lambda v = 0"),
                 ", so any nonzero scaling passes;"),
                (N("P"), " and ", N("D"), ": ", N(r"\det P \neq 0", "det P != 0"), " and ", N("A P = P D"),
                 " (so the columns of P are in the order of D); D diagonal, or a Jordan matrix, with the eigenvalues of A "
                 "and the same eigenvector counts;"),
                (N("P^{-1}", "P^-1"), ": ", N(r"P P^{-1} = I", "P P^-1 = I"), " and ", N(r"P^{-1} P = I", "P^-1 P = I"), ";"),
                ("general solution: ", N("x' - A x - f = 0", "x' - A x - f = 0"),
                 " for all values of its constants c, and ", N(r"\det(\partial x / \partial c) \not\equiv 0", "det(dx/dc) != 0"),
                 " with as many constants as states, so renamed, rescaled or recombined constants pass;"),
                ("solution of the initial value problem: ", N("x' - A x - f = 0"), " and ", N("x(t_0) = x_0", "x(t0) = x0"), "."),
            )),
            P("A quantity is decided to be zero exactly by symbolic reduction where possible; otherwise by a numeric "
              "identity test with 50 significant digits at several random points of ", Math(t),
              ", the constants and the parameters (sign assumptions respected, with points on both sides of every "
              "switching time). Each item states which method decided it. Reference for the method: common practice "
              "(substitution check)."),
        ]
        return b

    def record(self) -> dict[str, Any]:
        """The report as plain data (mathematics in sympy's plain notation)."""

        def s(obj: Any) -> str | None:
            return None if obj is None else plain_text(obj)

        rep = self.report
        first = rep.first_failure
        return {
            "title": self.title,
            "ok": rep.ok,
            "exit_code": rep.exit_code,
            "first_failure": None if first is None else {"step": first.step, "name": first.name},
            "system": {"A": s(rep.A), "f": s(rep.f), "t": s(rep.t), "x0": s(rep.x0), "t0": s(rep.t0)},
            "constants": [c.name for c in rep.constants],
            "items": [
                {
                    "name": it.name, "step": it.step, "ok": it.ok, "method": it.method, "detail": it.detail,
                    "residual": s(it.residual), "claimed": s(it.claimed), "expected": s(it.expected),
                }
                for it in rep.items
            ],
            "notices": list(rep.notices),
            "sources": [{"file": name, "sha256": digest} for name, digest in self.sources],
            "caution": CAUTION,
        }

    def frame(self) -> Frame:
        """The running header and footers of the report."""
        meta = self.meta or SheetMeta()
        program = program_versions()[0]
        first = self.report.first_failure
        return Frame(
            title=self.title,
            meta=meta,
            key=label_key("eigensheet-check", meta.title, meta.calc_number, meta.revision,
                          *(h for _, h in self.sources), plain_text(self.report.A)),
            subject_prefix="Check of the hand derivation: ",
            footer_left=f"Check report produced by {program[0]} {program[1]} (sympy {sp.__version__})",
            footer_right=(Strong("CHECK FAILED: "), _step(first.step)) if first else ("All claimed items pass",),
        )


def render_check(
    report: CheckReport,
    format: str = "text",
    *,
    meta: Any = None,
    sources: Sequence[tuple[str, str]] = (),
    brief: bool = False,
) -> str:
    """A check report as text, Markdown, JSON or a LaTeX document.

    ``meta`` (a ``SheetMeta``, e.g. the case's) fills the header; ``sources``
    lists (file name, SHA-256) of the case and claim files for the record;
    ``brief`` keeps only the verdicts.

    >>> from derive.check import check
    >>> render_check(check([[1, 0], [0, 2]], eigenvalues=[1, 2])).splitlines()[0]
    'Check of a hand derivation'
    """
    from ..render import render

    if format not in CHECK_FORMATS:
        raise InputError(f"unknown check report format {format!r}; expected one of {', '.join(CHECK_FORMATS)}", key="format")
    return render(CheckReportDocument(report, meta, tuple(sources), brief), format)


def write_check_outputs(
    report: CheckReport,
    out_dir: str | os.PathLike[str],
    *,
    stem: str,
    formats: Sequence[str] = ("latex",),
    pdf: bool | None = None,
    meta: Any = None,
    sources: Sequence[tuple[str, str]] = (),
    tex_timeout: float = 120.0,
) -> tuple[Path, ...]:
    """Write the check report in each format (atomically) and the PDF; return the paths.

    ``pdf`` None means: when LaTeX is among the formats and latexmk is on the PATH.

    >>> write_check_outputs(rep, "out", stem="tanks-check", formats=("latex",))  # doctest: +SKIP
    (PosixPath('out/tanks-check.tex'), PosixPath('out/tanks-check.pdf'))
    """
    from ..output import latex_available, write_outputs

    unknown = [f for f in formats if f not in CHECK_FORMATS]
    if unknown:
        raise InputError(
            f"unknown check report format(s) {', '.join(map(repr, unknown))}; expected one of {', '.join(CHECK_FORMATS)}",
            key="formats",
        )
    want_pdf = ("latex" in formats and latex_available()) if pdf is None else bool(pdf)
    document = CheckReportDocument(report, meta, tuple(sources))
    return write_outputs(document, out_dir, stem=stem, formats=formats, pdf=want_pdf, tex_timeout=tex_timeout)
