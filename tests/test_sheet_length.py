"""The main sheet stays short on a large case: long intermediate algebra goes to the appendix (issue 17 item 4).

The three-cart chain (``tests/data/sheets/carts_indexed.toml``, our own
scenario) has an irreducible sextic, so every eigenvalue is an indexed complex
root: its P^-1, the vectors of each root and the row reductions are long.
Small cases keep every step in the main flow.  The PDF test is marked ``tex``
and ``slow``.
"""

from __future__ import annotations

import re
import shutil
import subprocess
from pathlib import Path

import pytest

from derive.casefile import load_case, loads_case
from derive.model import Solution
from derive.output import write_outputs
from derive.pipeline import solve_case
from derive.render import render

DATA = Path(__file__).parent / "data" / "sheets"
DEMO = Path(__file__).parents[1] / "derive" / "data" / "demo.toml"
APPENDIX = "APPENDIX A: INTERMEDIATE ALGEBRA"
#: the line of a displayed P^-1 in the text format (not P D P^-1)
INVERSE = re.compile(r"^\s+P\^-1 = \[", re.M)


def _solve(stem: str) -> Solution:
    if stem == "demo":
        return solve_case(loads_case(DEMO.read_text(), name="demo", source=str(DEMO)))
    return solve_case(load_case(DATA / f"{stem}.toml"))


def _split(text: str) -> tuple[str, str]:
    main, _, appendix = text.partition(APPENDIX)
    return main, appendix


@pytest.mark.parametrize("stem", ["demo", "cubic_roots"])
def test_a_small_case_keeps_its_inverse_and_root_vectors_in_the_main_flow(stem: str) -> None:
    main, appendix = _split(render(_solve(stem), "text"))
    assert INVERSE.search(main)
    assert "The inverse of the modal matrix" not in appendix
    assert "Vectors of the individual roots" not in appendix
    if stem == "cubic_roots":
        # three roots of a cubic, short vectors: each is shown where it is found
        assert "For the individual roots:" in main


@pytest.fixture(scope="module")
def carts() -> Solution:
    return _solve("carts_indexed")


@pytest.mark.slow
def test_the_long_inverse_and_root_vectors_move_to_the_appendix_with_a_reference(carts: Solution) -> None:
    main, appendix = _split(render(carts, "text"))
    assert appendix, "the sheet has an appendix"
    for title in ("The inverse of the modal matrix", "Vectors of the individual roots"):
        label = re.search(rf"(A\.\d+) {title}", appendix)
        assert label, title
        assert f"Appendix {label.group(1)}" in main, title
    # nothing is lost: every entry of P^-1 is in the appendix, none in the main flow
    assert INVERSE.search(appendix.split("The inverse of the modal matrix", 1)[1])
    assert not INVERSE.search(main)
    # the six roots share one sentence for the form of their value
    assert len(re.findall(r"no general radical\s+form", main)) == 1


@pytest.mark.slow
@pytest.mark.tex
@pytest.mark.skipif(shutil.which("latexmk") is None or shutil.which("pdftotext") is None,
                    reason="latexmk or pdftotext is not on the PATH")
def test_the_indexed_root_chain_keeps_its_main_sheet_within_fifteen_pages(carts: Solution, tmp_path: Path) -> None:
    write_outputs(carts, tmp_path, stem="carts", formats=("latex",), pdf=False)
    run = subprocess.run(["latexmk", "-pdf", "-interaction=nonstopmode", "-halt-on-error", "-no-shell-escape", "carts.tex"],
                         cwd=tmp_path, capture_output=True, text=True, timeout=600)
    assert run.returncode == 0
    text = subprocess.run(["pdftotext", "carts.pdf", "-"], cwd=tmp_path, capture_output=True, text=True,
                          check=True, timeout=60).stdout
    pages = text.split("\f")
    start = next(k for k, page in enumerate(pages, start=1) if "Appendix A: intermediate algebra" in page)
    # 17 pages before the appendix with P^-1 (3.5 pages) and each root's vector inline; 13 after the move
    assert start - 1 <= 15, start
