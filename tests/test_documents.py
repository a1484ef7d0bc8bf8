"""The document model's contract: every document type through every renderer.

The sheet sample is the hand-made solution of tests/test_render.py; the check
report comes from derive's own check of a small diagonal system; the batch
index is built from hand-made case results.  Each document must render in
every registered format, show its user text escaped for that format, and be
written by the one writer.
"""

from __future__ import annotations

import json
import math
import shutil
import subprocess
from dataclasses import dataclass
from pathlib import Path
from typing import ClassVar

import pytest
import sympy as sp

from derive.check import CAUTION, check
from derive.documents.base import Document
from derive.documents.batch_index import BatchIndexDocument, write_index
from derive.documents.blocks import Caution, Code, Figure, Heading, Math, N, P, Para, Series, Table, Title
from derive.documents.check_report import CheckReportDocument, render_check
from derive.documents.sheet import SheetDocument
from derive.model import SheetMeta
from derive.output import write_outputs
from derive.render import RENDERERS, render
from derive.render.escape import md_escape, tex_escape
from derive.render.latex_blocks import blocks_latex
from derive.render.printing import MathFormatter
from derive.steps import Step

from test_render import make_solution

HOSTILE = "50% & $x_1 <b>*"


@dataclass(frozen=True)
class FakeResult:
    """The fields of a batch case result that the index reads."""

    name: str
    status: str
    ok: bool
    outputs: tuple[str, ...] = ()
    residual_method: str = ""
    residual_zero: bool = False
    max_rel_gap: float | None = None
    message: str = ""
    cached: bool = False
    spectrum: str = ""
    seconds: float = 0.0


def sample_documents() -> dict[str, Document]:
    meta = SheetMeta(title=HOSTILE, project="Pump skid P-7")
    report = check([[1, 0], [0, 2]], eigenvalues=[1, 3])
    results = (
        FakeResult("a_good", "ok", True, ("cases/a_good/a_good.tex", "cases/a_good/a_good.pdf"),
                   residual_method="exact", residual_zero=True, max_rel_gap=1e-12, spectrum="distinct", seconds=0.5),
        FakeResult(HOSTILE, "bad-input", False, message="system.matrix is 2x3\nmore", seconds=0.01),
    )
    return {
        "sheet": SheetDocument(make_solution(meta=meta)),
        "check": CheckReportDocument(report, meta, (("case_1.toml", "0" * 64),)),
        "index": BatchIndexDocument(results, {"ok": 1, "bad-input": 1}, interrupted=True, total=3),
    }


@pytest.mark.parametrize("fmt", sorted(RENDERERS))
@pytest.mark.parametrize("kind", ["sheet", "check", "index"])
def test_every_document_type_renders_in_every_format(kind: str, fmt: str) -> None:
    doc = sample_documents()[kind]
    text = render(doc, fmt)
    assert text.endswith("\n") and len(text) > 200
    if fmt == "json":
        data = json.loads(text)
        assert data == json.loads(json.dumps(doc.record()))
        return
    # user text appears, escaped the format's way
    shown = {"latex": tex_escape(HOSTILE), "markdown": md_escape(HOSTILE), "text": HOSTILE}[fmt]
    if kind == "index" and fmt == "markdown":
        shown = f"`{HOSTILE}`"  # a case name is a file name: a code span, shown verbatim
    # (plain text sets top headings in capitals)
    assert shown in text if fmt != "text" else shown.upper() in text.upper()
    if fmt == "latex":
        assert "\\begin{document}" in text and "\\end{document}" in text
        fragment = render(doc, fmt, fragment=True)
        assert "\\documentclass" not in fragment and "\\begin{document}" not in fragment


def test_check_report_says_the_first_wrong_step_in_every_format() -> None:
    doc = sample_documents()["check"]
    for fmt in ("latex", "markdown", "text"):
        text = render(doc, fmt)
        assert "CHECK FAILED" in text and "eigenvalues" in text
    assert CAUTION in render(doc, "text")
    assert json.loads(render(doc, "json"))["first_failure"] == {"step": "eigenvalues", "name": "eigenvalues"}


def test_brief_check_report_keeps_the_verdicts_only() -> None:
    report = check([[1, 0], [0, 2]], eigenvalues=[1, 2])
    full = render_check(report, "text")
    brief = render_check(report, "text", brief=True)
    assert "First wrong step: none" in brief and "METHOD" in full and "METHOD" not in brief
    assert len(brief) < len(full)


def test_index_lists_every_case_and_the_interruption() -> None:
    doc = sample_documents()["index"]
    text = render(doc, "text")
    assert "a_good" in text and "a_good.pdf" in text and "bad-input" in text
    assert "interrupted: 2 of 3 cases" in text
    tex = render(doc, "latex")
    assert r"\path{a_good.pdf}" in tex and r"\textbf{bad-input}" in tex
    assert r"\begin{longtable}" in tex and r"\usepackage{longtable}" in tex


def test_a_new_block_renders_through_the_generic_latex_templates() -> None:
    fmt = MathFormatter.for_roots(())
    tex = blocks_latex(
        (Heading(2, "Loads & cases"), Para(("Sum ", Math(sp.Symbol("x") + 1), " in ", Code("a_b.toml"))),
         Table(("k", "file"), (((("1",), (Code("x.tex", breakable=True),))),))),
        fmt,
    )
    assert r"\derivesection{Loads \& cases}" in tex
    assert r"Sum $x + 1$ in \texttt{a\_b.toml}" in tex
    assert r"1 & \path{x.tex} \\" in tex


def test_one_writer_for_every_document(tmp_path: Path) -> None:
    docs = sample_documents()
    sheet = write_outputs(docs["sheet"], tmp_path, stem="s", formats=("latex", "text"), pdf=False)
    assert [p.name for p in sheet] == ["s.tex", "s-body.tex", "s.txt"]
    report = write_outputs(docs["check"], tmp_path, stem="c", formats=("markdown", "json"), pdf=False)
    assert [p.name for p in report] == ["c.md", "c.json"]
    doc = docs["index"]
    index = write_index(tmp_path, doc.results, counts=doc.counts, pdf=False, interrupted=True, total=3)  # type: ignore[attr-defined]
    assert [p.name for p in index] == ["index.tex", "index-body.tex"]
    assert "interrupted" in (tmp_path / "index.tex").read_text()
    assert not list(tmp_path.glob("*.part"))


def test_blocks_hold_no_markup() -> None:
    # the sheet's blocks keep user text as str and mathematics as sympy objects
    from derive.render.printing import MathStyle

    layout = sample_documents()["sheet"].layout(style=MathStyle())
    paras = [b for b in layout.blocks if isinstance(b, Para)]
    assert any(isinstance(p, Math) for b in paras for p in b.parts)
    assert all("\\" not in p for b in paras for p in b.parts if isinstance(p, str))
    assert isinstance(P("x"), Para)


# ---------------------------------------------------------------------------
# A new document type needs only layout, record and frame; a figure is drawn by pylatex


@dataclass(frozen=True)
class ResponseDocument(Document):
    """A made-up document type with a figure: x(t) = e^{-t} sampled for drawing."""

    kind = "response"
    samples: tuple[tuple[float, float], ...] = tuple((k / 4, math.exp(-k / 4)) for k in range(17))

    def layout(self, *, style, fragment=False):
        from derive.documents.base import Layout

        blocks = (
            Title("Free response of a decay"),
            Para(("The state ", Math(sp.Symbol("x")), " decays from one.")),
            Figure("Response of x over 0 <= t <= 4 s", N("t\\ \\mathrm{[s]}", "t [s]"), N("x"), (Series("x_1 & more", self.samples),)),
            Caution("Drawn by software; check before use."),
        )
        return Layout(blocks, MathFormatter.for_roots((), style=style))

    def record(self):
        return {"samples": [list(p) for p in self.samples]}

    def frame(self):
        from derive.documents.base import Frame

        return Frame(title="Free response", meta=SheetMeta(title="Free response"), key="derive-response-test")


@pytest.mark.parametrize("fmt", sorted(RENDERERS))
def test_a_new_document_type_renders_in_every_format(fmt: str) -> None:
    text = render(ResponseDocument(), fmt)
    if fmt == "json":
        assert json.loads(text)["samples"][0] == [0.0, 1.0]
    elif fmt == "latex":
        assert r"\usepackage{pgfplots}" in text and r"\pgfplotsset{compat=1.18}" in text
        assert r"\begin{axis}[" in text and r"xlabel={$t\ \mathrm{[s]}$}" in text
        assert "\\addplot[color=blue!80!black, thick, no markers] coordinates {%\n(0,1)%\n(0.25,0.778801)%" in text
        assert r"\addlegendentry{x\_1 \& more}" in text
    elif fmt == "markdown":
        # no file is written by render(): the note and each curve's range stand in for the picture
        assert "*Figure omitted here (" in text
        assert md_escape("17 points, t [s] from 0 to 4, x from 0.0183 to 1") in text
    else:
        assert "[Figure: figure, drawn in the PDF and Markdown outputs]" in text


@pytest.mark.tex
@pytest.mark.skipif(shutil.which("latexmk") is None or shutil.which("pdftotext") is None, reason="needs latexmk and pdftotext")
def test_a_figure_compiles(tmp_path: Path) -> None:
    paths = write_outputs(ResponseDocument(), tmp_path, stem="response", formats=("latex",), pdf=True)
    assert [p.name for p in paths] == ["response.tex", "response.pdf"]
    text = subprocess.run(["pdftotext", str(paths[-1]), "-"], capture_output=True, text=True, check=True).stdout
    assert "Response of x over" in text and "Sheet 1 of 1" in text


@dataclass(frozen=True)
class GainStep(Step):
    kind: ClassVar[str] = "gain_test"
    gain: sp.Expr


def test_a_step_kind_with_only_a_block_function_renders_in_every_format(monkeypatch: pytest.MonkeyPatch) -> None:
    # a new step kind is described once, in STEP_BLOCKS; with no LaTeX partial the
    # sheet sets it from those blocks
    from derive.documents import sheet_steps

    def gain_blocks(step, ctx):
        return [Heading(3, "Static gain"), P("The static gain is ", Math(step.gain), ".")]

    monkeypatch.setitem(sheet_steps.STEP_BLOCKS, "gain_test", gain_blocks)
    sol = make_solution((GainStep(sp.Rational(1, 2)),))
    tex = render(sol, "latex")
    assert "\\derivesubsection{Static gain}\nThe static gain is $\\frac{1}{2}$." in tex
    assert "Static gain" in render(sol, "markdown") and "The static gain is 1/2." in render(sol, "text")
