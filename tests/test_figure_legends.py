"""Figure legends name the curves in the sheet's mathematics (T_1, q_1'), in LaTeX and in SVG."""

from __future__ import annotations

import re

import pytest
import sympy as sp

from derive.casefile import loads_case
from derive.documents.blocks import Figure, N, Series
from derive.pipeline import solve_case
from derive.render import render
from derive.render.latex_blocks import figure_latex
from derive.render.siunits import axis_label
from derive.render.svg import figure_svg

from test_frequency_plot import figures as frequency_figures, lag

CURVE = ((0.0, 1.0), (1.0, 0.5))

# a two-mass chain of our own, written as one second-order equation per mass
SPRING_CASE = """
[sheet]
title = "Two carts on springs"
[system]
equations = ["q1'' = -3*q1 + q2", "q2'' = q1 - 3*q2"]
[initial]
t0 = 0
values = [1, 0, 0, 0]
"""


def legend_entries(tex: str) -> list[str]:
    return re.findall(r"\\addlegendentry\{(.*?)\}%?$", tex, flags=re.M)


def test_a_curve_with_its_symbol_has_a_math_legend_in_latex() -> None:
    fig = Figure("f", N("t"), N("x"), (
        Series("q1'", CURVE, "line", "q1'", sp.Symbol("q1'")),
        Series("numeric check", CURVE, "marks", "q1'"),
    ))
    assert legend_entries(figure_latex(fig)) == ["$q_{1}'$", "numeric check"]


def test_a_band_with_its_symbol_has_a_math_legend_in_latex() -> None:
    fig = Figure("f", N("t"), N("x"), (Series("T1", CURVE + ((1.0, 0.2),), "band", "T1", sp.Symbol("T1")),))
    assert r"\addlegendentry{$T_{1}$}" in figure_latex(fig)


def test_a_curve_without_a_symbol_keeps_its_escaped_text_label() -> None:
    fig = Figure("f", N("t"), N("x"), (Series("50% line", CURVE),))
    assert legend_entries(figure_latex(fig)) == [r"50\% line"]


def test_the_sheet_of_a_reduced_system_names_its_states_in_the_legend() -> None:
    case = loads_case(SPRING_CASE, name="carts", source="test")
    tex = render(solve_case(case), "latex")
    entries = legend_entries(tex)
    assert {"$q_{1}$", "$q_{1}'$", "$q_{2}$", "$q_{2}'$"} <= set(entries)
    assert "q1'" not in entries


def svg_texts(svg: bytes) -> list[str]:
    # matplotlib writes each text of the drawing as a comment before its paths
    return re.findall(r"<!-- (.*?) -->", svg.decode())


def test_an_svg_legend_and_axis_labels_are_mathtext() -> None:
    pytest.importorskip("matplotlib")
    fig = Figure("f", N("t"), N("x_i(t)"), (
        Series("q1'", CURVE, "line", "q1'", sp.Symbol("q1'")),
        Series("numeric check", CURVE, "marks", "q1'"),
    ))
    svg = figure_svg(fig)
    assert svg is not None
    texts = svg_texts(svg)
    assert "$q_{1}'$" in texts and "numeric check" in texts and "$x_i(t)$" in texts
    assert "q1'" not in texts


def test_svg_falls_back_to_plain_text_where_mathtext_cannot_set_the_latex() -> None:
    pytest.importorskip("matplotlib")
    # a unit set by siunitx has no mathtext form: the axis says it in plain text
    fig = Figure("f", axis_label("t", "t", "h"), N("x"), (Series("T1", CURVE, "line", "T1", sp.Symbol("T1")),))
    svg = figure_svg(fig)
    assert svg is not None
    texts = svg_texts(svg)
    assert "t / h" in texts and "$T_{1}$" in texts


def test_frequency_curves_of_one_input_name_their_state_in_mathematics() -> None:
    drawn = frequency_figures(lag())
    assert drawn
    for fig in drawn.values():
        assert [s.symbol for s in fig.series] == [sp.Symbol("T")]
        assert legend_entries(figure_latex(fig)) == ["$T$"]
