"""The response reading on the sheet: the section "Response at a glance", its figures, and the notebook display."""

from __future__ import annotations

import json
import math
from importlib import resources
from pathlib import Path

import pytest
import sympy as sp

import derive
from derive.casefile import loads_case
from derive.documents import reading_section
from derive.documents.blocks import Figure, Heading, Table
from derive.documents.check_report import CheckReportDocument
from derive.documents.reading_section import reading_blocks
from derive.errors import CaseFileError, DeriveError
from derive.model import Solution
from derive.output import write_outputs
from derive.pipeline import solve_case
from derive.render import render
from derive.render import markdown as markdown_module
from derive.render import svg as svg_module
from derive.render.notebook import solution_markdown

DATA = Path(__file__).parent / "data" / "sheets"


def demo_solution() -> Solution:
    text = resources.files("derive.data").joinpath("demo.toml").read_text(encoding="utf-8")
    return solve_case(loads_case(text, name="demo", source="the built-in demo case"))


def figures(solution: Solution) -> dict[str, Figure]:
    return {b.name: b for b in reading_blocks(solution) if isinstance(b, Figure)}


def exact_at(solution: Solution, index: int, when: float) -> float:
    """x_index(when) by sympy alone, at the declared values (30 digits, then a float).

    A symbolic closed form may hold sqrt(c^2 - 4 k m) of a negative number at
    the values: its value is then real up to round-off in the last digits.
    """
    values = solution.system.parameter_values()
    expr = solution.x[index].xreplace(dict(values))
    value = complex(sp.N(expr.subs(solution.system.t, sp.Float(when, 30)), 30))
    assert abs(value.imag) <= 1e-20 * max(1.0, abs(value.real))
    return value.real


# ---------------------------------------------------------------------------
# The figure's data


@pytest.mark.parametrize("stem", ["demo", "compartments", "smd"])
def test_the_plotted_curves_are_the_exact_solution_at_the_sampled_times(stem: str) -> None:
    sol = demo_solution() if stem == "demo" else solve_case(derive.load_case(DATA / f"{stem}.toml"))
    fig = figures(sol)["response"]
    names = [s.name for s in sol.system.states]
    curves = [s for s in fig.series if s.style == "line"]
    assert [c.key for c in curves] == names
    for i, curve in enumerate(curves):
        times = [p[0] for p in curve.points]
        # where the state jumps (an impulse) a time is drawn twice: check the points away from jumps
        single = [k for k, when in enumerate(times) if times.count(when) == 1]
        for k in single[:: max(1, len(single) // 12)]:
            when, drawn = curve.points[k]
            assert drawn == pytest.approx(exact_at(sol, i, when), rel=1e-9, abs=1e-12)


def test_the_check_points_come_from_an_integration_that_agrees_with_the_exact_solution() -> None:
    # compartments: a pulse and an impulse, so the points cross a switch and a jump
    sol = solve_case(derive.load_case(DATA / "compartments.toml"))
    fig = figures(sol)["response"]
    marks = [s for s in fig.series if s.style == "marks"]
    assert [m.key for m in marks] == [s.name for s in sol.system.states]
    assert [m.label for m in marks] == ["numeric check"] + [""] * (len(marks) - 1)  # one legend entry
    assert len(marks[0].points) >= 10
    for i, mark in enumerate(marks):
        for when, value in mark.points:
            # scipy's DOP853 at rtol 1e-10 against the closed form evaluated by sympy
            assert value == pytest.approx(exact_at(sol, i, when), rel=1e-7, abs=1e-8)
    impulses = [line.at for line in fig.lines if line.style == "impulse"]
    assert impulses and "dotted lines: impulses" in fig.caption


def test_the_eigenvalue_map_holds_every_eigenvalue_and_the_imaginary_axis() -> None:
    sol = solve_case(derive.load_case(DATA / "smd.toml"))
    fig = figures(sol)["eigenvalues"]
    (points,) = [s.points for s in fig.series]
    expected = sorted((complex(sp.N(e.xreplace(dict(sol.system.parameter_values())))).real,
                       complex(sp.N(e.xreplace(dict(sol.system.parameter_values())))).imag) for e in sol.eigenvalues)
    assert len(points) == 2 and all(p == pytest.approx(q) for p, q in zip(sorted(points), expected))
    assert [(line.at, line.style) for line in fig.lines] == [(0.0, "axis")]


def test_plot_span_from_the_case_file_sets_the_time_axis() -> None:
    text = (DATA / "smd.toml").read_text() + "\n[plot]\nspan = 7.5\n"
    case = loads_case(text, name="smd")
    assert case.plot_span == sp.Rational(15, 2)
    fig = figures(solve_case(case))["response"]
    assert max(p[0] for p in fig.series[0].points) == pytest.approx(7.5)


@pytest.mark.parametrize("table, key", [("span = -1", "plot.span"), ('span = "long"', "plot.span"), ("spam = 3", "plot.spam")])
def test_a_wrong_plot_span_names_the_key(table: str, key: str) -> None:
    text = (DATA / "smd.toml").read_text() + f"\n[plot]\n{table}\n"
    with pytest.raises(CaseFileError) as err:
        loads_case(text, name="smd", source="smd.toml")
    assert err.value.key == key and "smd.toml" in str(err.value)


# ---------------------------------------------------------------------------
# The section in every format


def test_the_demo_sheet_says_it_settles_and_names_the_dominant_time_constant() -> None:
    sol = demo_solution()
    blocks = reading_blocks(sol)
    assert isinstance(blocks[0], Heading) and blocks[0].text == "Response at a glance"
    modes = next(b for b in blocks if isinstance(b, Table) and b.header[0] == "Mode")
    dominant = [row for row in modes.rows if "dominant" in row[0][0]]
    assert len(dominant) == 1 and dominant[0][2][0].plain == "5"  # tau = -1/(-1/5), hours
    text = render(sol, "text")
    assert "Does it settle? Yes: asymptotically stable." in text
    assert text.index("INPUTS") < text.index("RESPONSE AT A GLANCE") < text.index("DERIVATION")
    # the final values, exact 2Q/5 and Q/5 at Q = 6
    states = next(b for b in blocks if isinstance(b, Table) and b.header[0] == "State")
    assert [row[2][0].plain for row in states.rows] == ["2.4", "1.2"]


@pytest.mark.parametrize("fmt", ["latex", "markdown", "text"])
def test_the_section_sits_after_the_inputs_in_every_format(fmt: str) -> None:
    out = render(demo_solution(), fmt)
    heading = {"latex": r"\derivesection{Response at a glance}", "markdown": "## Response at a glance", "text": "RESPONSE AT A GLANCE"}[fmt]
    inputs = {"latex": r"\derivesection{Inputs}", "markdown": "## Inputs", "text": "INPUTS"}[fmt]
    derivation = {"latex": r"\derivesection{Derivation}", "markdown": "## Derivation", "text": "DERIVATION"}[fmt]
    assert out.index(inputs) < out.index(heading) < out.index(derivation)
    assert "asymptotically stable" in out
    if fmt == "latex":
        assert r"\usepackage{pgfplots}" in out and out.count(r"\begin{tikzpicture}") == 2
        assert "only marks" in out  # the numeric check points
    if fmt == "text":
        assert "[Figure: response, drawn in the PDF and Markdown outputs]" in out


def test_the_json_record_carries_the_reading() -> None:
    record = json.loads(render(demo_solution(), "json"))["reading"]
    assert record["stability"] == "asymptotically stable"
    dominant = [m for m in record["modes"] if m["dominant"]]
    assert [m["time_constant"] for m in dominant] == ["5"]
    assert record["states"]["T1"]["exact_final_value"] == "12/5" and record["span"] == 25.0


def test_symbolic_parameters_give_conditions_and_expressions_without_figures() -> None:
    sol = derive.solve([["0", "1"], ["-k/m", "-c/m"]], x0=[1, 0], params={"k": None, "m": None, "c": None})
    text = render(sol, "text")
    section = text[text.index("RESPONSE AT A GLANCE"): text.index("ASSUMPTIONS")]
    assert "Asymptotically stable when c/m > 0 and c k/m^2 > 0." in section
    assert "Unstable when c/m < 0 or c k/m^2 < 0." in section
    assert "τ = 2 m/c" in section and "[Figure" not in section


def test_a_reading_that_fails_is_left_out_in_one_sentence(monkeypatch: pytest.MonkeyPatch) -> None:
    def broken(self: Solution) -> None:
        raise DeriveError("the reading could not decide a sign")

    monkeypatch.setattr(Solution, "response", property(broken))
    sol = derive.solve([[-1]], x0=[1])
    text = render(sol, "text")
    assert "The response reading was left out: the reading could not decide a sign" in text
    assert "RESULT" in text  # the sheet is written all the same


def test_a_reading_that_runs_out_of_time_is_left_out(monkeypatch: pytest.MonkeyPatch) -> None:
    def endless(self: Solution) -> None:
        while True:
            pass

    monkeypatch.setattr(Solution, "response", property(endless))
    monkeypatch.setattr(reading_section, "READING_SECONDS", 0.2)
    text = render(derive.solve([[-1]], x0=[1]), "text")
    assert "The response reading was left out: it took longer than 0.2 s." in text


# ---------------------------------------------------------------------------
# Markdown's figure files


def test_markdown_writes_its_figures_as_svg_files_beside_it(tmp_path: Path) -> None:
    paths = write_outputs(demo_solution(), tmp_path, stem="demo", formats=("markdown",), pdf=False)
    assert sorted(p.name for p in paths) == ["demo-eigenvalues.svg", "demo-response.svg", "demo.md"]
    md = (tmp_path / "demo.md").read_text(encoding="utf-8")
    assert "![response](demo-response.svg)" in md and "![eigenvalues](demo-eigenvalues.svg)" in md
    svg = (tmp_path / "demo-response.svg").read_bytes()
    assert svg.startswith(b"<?xml") and b"<svg" in svg
    # the same figure gives the same bytes (no date, fixed ids)
    again = write_outputs(demo_solution(), tmp_path / "again", stem="demo", formats=("markdown",), pdf=False)
    assert next(p for p in again if p.name == "demo-response.svg").read_bytes() == svg


def test_without_matplotlib_the_markdown_says_the_figure_is_omitted(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setattr(svg_module, "plots_available", lambda: False)
    monkeypatch.setattr(markdown_module, "plots_available", lambda: False)
    paths = write_outputs(demo_solution(), tmp_path, stem="demo", formats=("markdown",), pdf=False)
    assert [p.name for p in paths] == ["demo.md"]
    md = (tmp_path / "demo.md").read_text(encoding="utf-8")
    assert "Figure omitted here (it needs matplotlib" in md and ".svg" not in md


# ---------------------------------------------------------------------------
# Notebooks


def test_a_solution_shows_itself_as_markdown_mathematics() -> None:
    sol = derive.solve([[0, 1], [-2, -3]], x0=[1, 0])
    shown = sol._repr_markdown_()  # type: ignore[attr-defined]
    assert shown == solution_markdown(sol)
    assert "{x_{1}}(t) &= -e^{- 2 t} + 2 e^{- t}" in shown and shown.startswith("### Solution of")
    assert "Verified: residual x' - A x - f reduces to zero" in shown


def test_a_check_report_shows_itself_as_markdown_mathematics() -> None:
    report = derive.check([[2, 0], [0, -1]], eigenvalues=[-1, 2])
    shown = report._repr_markdown_()  # type: ignore[attr-defined]
    assert shown == render(CheckReportDocument(report), "markdown", fragment=True)
    assert r"\begin{bmatrix}2 & 0\\0 & -1\end{bmatrix}" in shown


def test_the_dominant_mode_time_constant_reads_the_slowest_eigenvalue() -> None:
    # tau = -1/Re(lambda) for the slowest mode: common practice (first-order lag time constant)
    sol = demo_solution()
    slowest = max(sol.eigenvalues, key=lambda e: float(sp.re(e)))
    assert sol.response.dominant.time_constant == -1 / slowest  # type: ignore[attr-defined]
    assert math.isclose(float(-1 / slowest), 5.0)


# ---------------------------------------------------------------------------
# The batch index


def test_the_batch_index_shows_a_small_response_figure_per_verified_case() -> None:
    from derive import CaseResult
    from derive.documents.batch_index import BatchIndexDocument, response_thumbnails
    from derive.reading import samples

    smd = solve_case(derive.load_case(DATA / "smd.toml"))
    general = derive.solve([[-1]])  # no initial values: nothing to draw
    results = (
        CaseResult("demo", "ok", solution=demo_solution()),
        CaseResult("smd", "ok", solution=smd),
        CaseResult("general", "ok", solution=general),
        CaseResult("broken", "bad-input"),
    )
    thumbs = response_thumbnails(results)
    assert [f.name for f in thumbs] == ["demo", "smd"]
    times, values = samples(smd, points=61)
    (y_curve,) = [s for s in thumbs[1].series if s.key == "y"]
    assert [p[1] for p in y_curve.points] == pytest.approx(list(values["y"]), rel=1e-12, abs=1e-15)
    assert all(s.style == "line" for f in thumbs for s in f.series)  # the sheets carry the check points
    tex = render(BatchIndexDocument(results, {"ok": 3, "bad-input": 1}, total=4), "latex")
    assert tex.count(r"\begin{tikzpicture}") == 2 and "Responses at a glance" in tex


def test_a_cli_batch_index_has_the_figures_although_solutions_are_not_kept(tmp_path: Path) -> None:
    # the CLI's batch keeps no solutions in the parent: the workers draw the small figures
    from click.testing import CliRunner

    from derive.cli import cli

    folder = tmp_path / "in"
    folder.mkdir()
    (folder / "smd.toml").write_text((DATA / "smd.toml").read_text())
    (folder / "general.toml").write_text('[system]\nmatrix = [[-1]]\n')
    out = tmp_path / "out"
    res = CliRunner().invoke(cli, ["batch", str(folder), "-o", str(out), "--no-pdf", "--jobs", "1"])
    assert res.exit_code == 0, res.output
    tex = (out / "index.tex").read_text()
    assert tex.count(r"\begin{tikzpicture}") == 1 and "smd" in tex
    summary = (out / "summary.json").read_text()
    assert "thumbnail" not in summary
