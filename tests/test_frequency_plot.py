"""The frequency-response figure on request ([plot] frequency_response): data, wording, formats, PDF."""

from __future__ import annotations

import math
import re
import shutil
from pathlib import Path

import numpy as np
import pytest
import sympy as sp

from derive.casefile import loads_case
from derive.documents.blocks import Figure, Para
from derive.documents.frequency_blocks import frequency_range
from derive.errors import CaseFileError
from derive.laplace import frequency_response
from derive.model import Solution
from derive.output import write_outputs
from derive.pipeline import solve_case
from derive.render import render
from derive.render.base import as_document
from derive.render.printing import MathStyle
from derive.render.svg import plots_available
from test_siunits import compile_tex

needs_tex = pytest.mark.skipif(shutil.which("latexmk") is None, reason="latexmk is not on the PATH")

LAG = """
[sheet]
title = "Tank temperature, first-order lag"
[parameters.tau]
assume = ["positive"]
value = 2
unit = "h"
[parameters.K]
value = 3
unit = "K/kW"
[parameters.P]
value = 1
unit = "kW"
[units]
T = "K"
[system]
time_unit = "h"
equations = ["{equation}"]
[initial]
values = [0]
[plot]
{plot}
"""


def lag(equation: str = "T' = (K*P - T)/tau", plot: str = "frequency_response = true\nfrequencies = [0.01, 10]") -> Solution:
    return solve_case(loads_case(LAG.format(equation=equation, plot=plot), source="lag.toml"))


def blocks(solution: Solution) -> tuple:
    return as_document(solution).layout(style=MathStyle()).blocks


def figures(solution: Solution) -> dict[str, Figure]:
    return {b.name: b for b in blocks(solution) if isinstance(b, Figure) and b.name.startswith("frequency")}


def words(solution: Solution) -> str:
    return " ".join(p for b in blocks(solution) if isinstance(b, Para) for p in b.parts if isinstance(p, str))


def test_first_order_lag_is_3_db_down_and_45_degrees_behind_at_its_corner() -> None:
    """G = 1/(tau s + 1): |G(i/tau)| = 1/sqrt(2), i.e. -3.01 dB, and arg G(i/tau) = -45 deg (common practice)."""
    tau, s = sp.Symbol("tau", positive=True), sp.Symbol("s")
    r = frequency_response(1 / (tau * s + 1), s, values={tau: 2}, omega_min=0.5, omega_max=0.5, points=1)
    assert 20 * math.log10(r.magnitude[0]) == pytest.approx(-10 * math.log10(2), abs=1e-12)
    assert 20 * math.log10(r.magnitude[0]) == pytest.approx(-3.0103, abs=1e-4)
    assert r.phase_degrees[0] == pytest.approx(-45.0, abs=1e-12)


def test_the_sheet_figure_of_a_lag_matches_scipy_freqresp() -> None:
    """Reference: scipy.signal.freqresp of the lag K/(tau s + 1), K = 3, tau = 2 (SciPy, signal processing module)."""
    from scipy import signal

    figs = figures(lag())
    assert set(figs) == {"frequency-magnitude", "frequency-phase"}
    mag, phase = figs["frequency-magnitude"], figs["frequency-phase"]
    assert mag.xmode == phase.xmode == "log"
    assert [s.label for s in mag.series] == ["T"]
    omega = np.array([w for w, _ in mag.series[0].points])
    assert omega[0] == pytest.approx(0.01) and omega[-1] == pytest.approx(10)
    _, H = signal.freqresp(signal.lti([3], [2, 1]), w=omega)
    assert np.allclose([db for _, db in mag.series[0].points], 20 * np.log10(np.abs(H)), atol=1e-9)
    assert np.allclose([ph for _, ph in phase.series[0].points], np.degrees(np.unwrap(np.angle(H))), atol=1e-9)
    # the static gain K = 3 (9.54 dB) at the low end, -20 dB per decade well above the corner 1/tau
    assert mag.series[0].points[0][1] == pytest.approx(20 * math.log10(3), abs=1e-2)
    # time in hours: the frequency axis is in rad/h
    assert mag.xlabel.plain == "omega / (rad/h)"
    assert "not a steady state" not in words(lag())


def test_range_from_the_modes_when_no_frequencies_are_given() -> None:
    figs = figures(lag(plot="frequency_response = true"))
    pts = figs["frequency-magnitude"].series[0].points
    # the one eigenvalue -1/2: from a decade below to a decade above
    assert (pts[0][0], pts[-1][0]) == pytest.approx((0.01, 10.0))
    assert frequency_range([-0.5 + 0j]) == (0.01, 10.0)
    assert frequency_range([-3 + 40j, -0.02 + 0j]) == (0.001, 1000.0)


@pytest.mark.parametrize(("equation", "says"), [
    ("T' = (K*P + T)/tau", "The system is unstable: its free response does not die out, so this is not a steady state."),
])
def test_an_unstable_system_is_told_the_figure_is_no_steady_state(equation: str, says: str) -> None:
    sol = lag(equation=equation)
    assert figures(sol)  # still drawn
    assert says in words(sol)


def test_a_marginally_stable_oscillator_is_told_too() -> None:
    sol = solve_case(loads_case(
        '[system]\nequations = ["y\'\' + 4*y = 1"]\n[initial]\nvalues = [0, 0]\n[plot]\nfrequency_response = true'
    ))
    assert "only marginally stable" in words(sol) and "not a steady state" in words(sol)
    labels = [s.label for s in figures(sol)["frequency-magnitude"].series]
    assert labels == ["y", "y'"]


def test_not_asked_no_figure_and_a_parameter_without_value_is_named() -> None:
    assert not figures(lag(plot=""))
    text = LAG.format(equation="T' = (K*P - T)/tau", plot="frequency_response = true").replace("value = 2\n", "")
    sol = solve_case(loads_case(text))
    assert not figures(sol)
    assert "The frequency response was asked for but is not drawn: tau has no value." in words(sol)


@pytest.mark.parametrize(("plot", "key", "says"), [
    ('frequency_response = "yes"', "plot.frequency_response", "expected true or false"),
    ("frequencies = [10, 1]", "plot.frequencies", "two positive numbers, lowest first"),
    ("frequencies = [0, 1]", "plot.frequencies", "two positive numbers"),
    ("frequencies = 3", "plot.frequencies", "two positive numbers"),
    ("frequency_response = false\nfrequencies = [1, 10]", "plot.frequencies", "frequency_response = false"),
    ("frequency_responses = true", "plot.frequency_responses", "did you mean"),
])
def test_malformed_requests_are_refused_with_the_key(plot: str, key: str, says: str) -> None:
    with pytest.raises(CaseFileError) as err:
        loads_case(LAG.format(equation="T' = (K*P - T)/tau", plot=plot), source="lag.toml")
    assert err.value.key == key and says in str(err.value) and "lag.toml" in str(err.value)


def test_markdown_writes_both_figures_as_svg_and_text_names_them(tmp_path: Path) -> None:
    if not plots_available():
        pytest.skip("matplotlib (the extra plots) is not installed")
    sol = lag()
    write_outputs(sol, tmp_path, stem="lag", formats=("markdown",), pdf=False)
    md = (tmp_path / "lag.md").read_text()
    for name in ("lag-frequency-magnitude.svg", "lag-frequency-phase.svg"):
        assert f"({name})" in md and (tmp_path / name).read_bytes().startswith(b"<?xml")
        assert b"10^{-1}" in (tmp_path / name).read_bytes()  # matplotlib's tick label of a logarithmic axis
    assert "[Figure: frequency-phase, drawn in the PDF and Markdown outputs]" in render(sol, "text")


@pytest.mark.tex
@needs_tex
def test_the_sheet_with_the_figure_compiles_and_fits(tmp_path: Path) -> None:
    write_outputs(lag(), tmp_path, stem="lag", formats=("latex",), pdf=False)
    tex = (tmp_path / "lag.tex").read_text()
    assert tex.count("xmode=log") == 2 and r"\usepackage{pgfplots}" in tex and r"\usepackage{siunitx}" in tex
    code, log = compile_tex(tmp_path, "lag.tex")
    assert code == 0, [line for line in log.splitlines() if line.startswith("!")][:5]
    assert not re.findall(r"Overfull \\hbox", log)


def test_declared_outputs_are_drawn_instead_of_the_states() -> None:
    """A spring force k x1 of x'' + x' + k x = 1: G_y = k/(s^2 + s + k), static gain 1 (0 dB) (common practice)."""
    sol = solve_case(loads_case(
        '[parameters.k]\nvalue = 4\n[system]\nequations = ["x1\' = x2", "x2\' = -k*x1 - x2 + 1"]\n'
        '[initial]\nvalues = [0, 0]\n[outputs]\nspring = "k*x1"\n[plot]\nfrequency_response = true'
    ))
    mag = figures(sol)["frequency-magnitude"]
    assert [s.label for s in mag.series] == ["spring"]
    for w, db in mag.series[0].points[::20]:
        assert db == pytest.approx(20 * math.log10(4 / abs(complex(4 - w * w, w))), abs=1e-9)
    assert "for each output and input" in words(sol)
