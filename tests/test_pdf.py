"""PDF production: compile sample sheets with latexmk and read them back.

Needs latexmk and pdftotext on the PATH (TeX Live, poppler-utils); skipped
otherwise.
"""

from __future__ import annotations

import re
import shutil
import subprocess
from pathlib import Path

import pytest
import sympy as sp

from derive import pipeline
from derive.errors import OutputError
from derive.model import SheetMeta
from derive.output import compile_pdf, write_outputs
from reference import assert_close, expm_values, solution_values

from test_render import make_solution

pytestmark = [
    pytest.mark.tex,
    pytest.mark.skipif(shutil.which("latexmk") is None, reason="latexmk is not on the PATH"),
    pytest.mark.skipif(shutil.which("pdftotext") is None, reason="pdftotext is not on the PATH"),
]


def pdf_text(pdf: Path) -> str:
    return subprocess.run(["pdftotext", "-layout", str(pdf), "-"], check=True, capture_output=True,
                          text=True, timeout=60).stdout


def test_sample_sheet_compiles_with_header_and_result(tmp_path: Path) -> None:
    meta = SheetMeta(title="Pump skid transient", project="P-7 upgrade", calc_number="C-0042",
                     prepared_by="A. Writer", date="2024-05-02")
    paths = write_outputs(make_solution(meta=meta), tmp_path, stem="sheet", pdf=True)
    pdf = tmp_path / "sheet.pdf"
    assert pdf in paths and pdf.stat().st_size > 1000
    text = pdf_text(pdf)
    assert "Sheet 1 of" in text
    total = int(re.search(r"Sheet 1 of (\d+)", text).group(1))  # type: ignore[union-attr]
    assert f"Sheet {total} of {total}" in text  # the second pass filled in the count
    assert "Pump skid transient" in text and "C-0042" in text
    assert "Result" in text and "Verification" in text
    assert re.search(r"x\s*1\s*\(t\)\s*=", text)  # the result, component by component
    assert "must be checked and approved" in text
    # only the outputs are left behind, no build folder
    assert sorted(p.name for p in tmp_path.iterdir()) == ["sheet-body.tex", "sheet.pdf", "sheet.tex"]


def test_title_with_write18_runs_nothing(tmp_path: Path) -> None:
    canary = tmp_path / "canary"
    meta = SheetMeta(title=r"\immediate\write18{touch %s} \write18{touch canary}" % canary)
    write_outputs(make_solution(meta=meta), tmp_path, stem="hostile", pdf=True)
    assert not canary.exists()
    assert "write18" in pdf_text(tmp_path / "hostile.pdf")  # shown as text, not run


def test_shell_escape_is_off_even_for_raw_tex(tmp_path: Path) -> None:
    canary = tmp_path / "canary-raw"
    tex = tmp_path / "raw.tex"
    tex.write_text(
        "\\documentclass{article}\n\\begin{document}\n"
        f"\\immediate\\write18{{touch {canary}}}\nhello\n\\end{{document}}\n",
        encoding="utf-8",
    )
    pdf = compile_pdf(tex, timeout=120)
    assert pdf == tmp_path / "raw.pdf" and pdf.is_file()
    assert not canary.exists()


def test_tex_failure_reports_the_first_error_lines(tmp_path: Path) -> None:
    tex = tmp_path / "bad.tex"
    tex.write_text("\\documentclass{article}\n\\begin{document}\n\\nosuchmacro\n\\end{document}\n", encoding="utf-8")
    with pytest.raises(OutputError) as info:
        compile_pdf(tex, timeout=120)
    message = str(info.value)
    assert "bad.tex:3: Undefined control sequence" in message
    assert "nosuchmacro" in message
    assert len(message) < 1500  # the first errors, not the whole log
    assert sorted(p.name for p in tmp_path.iterdir()) == ["bad.tex"]


@pytest.mark.parametrize(
    "name, A, f, x0, expect",
    [
        ("two", [[0, 1], [-2, -3]], None, [1, 0], "Solution for"),
        ("three", [[0, 1, 0], [0, 0, 1], [-5, -7, -3]], None, [1, 0, 0], "Real form"),
    ],
)
def test_solved_systems_compile(tmp_path: Path, name: str, A: list, f: object, x0: list, expect: str) -> None:
    t = sp.Symbol("t", real=True)
    sol = pipeline.solve(A, f=f, x0=x0, t=t)
    # the sheet shows a right answer: scipy.linalg.expm of A t applied to x0 (unforced)
    times = (0.5, 2.0)
    assert_close(solution_values(sol.x, times, t=t), expm_values(A, x0, times))
    write_outputs(sol, tmp_path, stem=name, formats=("latex", "markdown", "text", "json"), pdf=True)
    text = pdf_text(tmp_path / f"{name}.pdf")
    assert "Sheet 1 of" in text and expect in text
    assert "VERIFICATION FAILED" not in text
    assert (tmp_path / f"{name}-body.tex").is_file() and (tmp_path / f"{name}.json").is_file()


def test_the_demo_sheet_with_its_figures_compiles_and_answers_on_its_first_pages(tmp_path: Path) -> None:
    from importlib import resources

    from derive.casefile import loads_case

    text = resources.files("derive.data").joinpath("demo.toml").read_text(encoding="utf-8")
    sol = pipeline.solve_case(loads_case(text, name="demo", source="the built-in demo case"))
    write_outputs(sol, tmp_path, stem="demo", formats=("latex",), pdf=True)
    tex = (tmp_path / "demo.tex").read_text(encoding="utf-8")
    assert tex.count(r"\begin{tikzpicture}") == 2 and r"\pgfplotsset{compat=1.18}" in tex
    pages = pdf_text(tmp_path / "demo.pdf").split("\f")
    first = "\n".join(pages[:3])
    assert "Response at a glance" in first and "Does it settle? Yes: asymptotically stable" in first
    assert "2 (dominant)" in first and "numeric check" in first  # the modes table and the figure's legend
    assert "Settling 2 %" in first
