"""Units on the LaTeX sheet with siunitx (derive.render.siunits): pint's reading -> siunitx macros.

The macro names are siunitx v3's own (J. Wright, siunitx package manual,
v3.2, section "Units": \\kilo\\watt, \\metre\\per\\second\\squared,
\\degreeCelsius, \\ohm, \\farad, \\henry ...); the compile test asks TeX
whether every macro of the tables exists.
"""

from __future__ import annotations

import re
import shutil
import subprocess
from pathlib import Path

import pytest

from derive.casefile import loads_case
from derive.output import write_outputs
from derive.pipeline import solve_case
from derive.render import render
from derive.units import UnitError
from derive.render.siunits import SI_PREFIXES, SI_UNITS, UNIT_MACRO, axis_label, siunitx_unit, unit_latex

needs_tex = pytest.mark.skipif(shutil.which("latexmk") is None, reason="latexmk is not on the PATH")


def compile_tex(folder: Path, name: str) -> tuple[int, str]:
    """latexmk on ``folder/name`` (shell escape off): its exit code and the .log text."""
    run = subprocess.run(["latexmk", "-pdf", "-interaction=nonstopmode", "-halt-on-error", "-no-shell-escape", name],
                         cwd=folder, capture_output=True, text=True, timeout=600)
    return run.returncode, (folder / name).with_suffix(".log").read_text(errors="replace")


@pytest.mark.parametrize(("text", "macros"), [
    ("kW", r"\kilo\watt"),
    ("m/s^2", r"\metre\per\second\squared"),
    ("degC", r"\degreeCelsius"),
    ("degC/kW", r"\degreeCelsius\per\kilo\watt"),
    ("K", r"\kelvin"),
    ("h", r"\hour"),
    ("ohm", r"\ohm"),
    ("Ω", r"\ohm"),
    ("F", r"\farad"),
    ("H", r"\henry"),
    ("uF", r"\micro\farad"),
    ("kg*m^2", r"\kilo\gram\metre\squared"),
    ("W/(m*K)", r"\watt\per\metre\per\kelvin"),
    ("1/s", r"\per\second"),
    ("m^3/s", r"\metre\cubed\per\second"),
    ("m^0.5", r"\metre\tothe{0.5}"),
    ("L/min", r"\litre\per\minute"),
])
def test_units_become_siunitx_macros(text: str, macros: str) -> None:
    assert siunitx_unit(text) == UNIT_MACRO + macros + "}"
    assert unit_latex(text) == UNIT_MACRO + macros + "}"


@pytest.mark.parametrize(("text", "shown"), [
    ("rpm", "rpm"),  # pint reads it, siunitx has no macro: the user's text
    ("kWh/a", "kWh/a"),
    ("50 % RH", r"50 \% RH"),  # pint cannot read it: escaped text
    ("1", "1"),  # a pure number has no unit macro
])
def test_free_text_units_stay_escaped_text(text: str, shown: str) -> None:
    assert siunitx_unit(text) is None
    assert unit_latex(text) == shown


def test_axis_labels_read_quantity_over_unit() -> None:
    """ISO 80000-1 (common practice): an axis is labelled with the quantity divided by its unit."""
    assert axis_label("t", "t", "h").plain == "t / h"
    assert axis_label("t", "t", "h").latex == r"t \;/\; \text{" + UNIT_MACRO + r"\hour}}"
    assert axis_label(r"\omega", "omega", "rad/s").plain == "omega / (rad/s)"
    assert axis_label("t", "t", "").latex == "t"


UNIT_CASE = """
[parameters.UA]
value = 2
unit = "kW/K"
[parameters.C]
value = 10
unit = "kWh/K"
[parameters.Q]
value = 6
unit = "kW"
[units]
T = "K"
[system]
time_unit = "h"
equations = ["T' = (Q - UA*T)/C"]
[initial]
values = [0]
"""


def test_sheet_sets_parameter_time_and_state_units_with_siunitx() -> None:
    case = loads_case(UNIT_CASE)
    assert case.system.time_unit == "h" and case.system.units == (("T", "K"),)
    sol = solve_case(case)
    tex = render(sol, "latex")
    assert r"\usepackage{siunitx}" in tex
    assert UNIT_MACRO + r"\kilo\watt\per\kelvin}" in tex  # UA in the parameter table
    assert "kWh/K" in tex  # no siunitx macro for kWh: the user's text
    assert r"(time, in " + UNIT_MACRO + r"\hour})" in tex
    assert r"\texttt{T} in " + UNIT_MACRO + r"\kelvin}" in tex
    assert r"t \;/\; \text{" + UNIT_MACRO + r"\hour}}" in tex  # the response figure's time axis
    fragment = render(sol, "latex", fragment=True)
    assert re.search(r"^% Packages the host must load: .*siunitx", fragment, re.M)
    # Markdown and text keep the units as written
    md = render(sol, "markdown")
    assert "kW/K" in md and "\\unit" not in md and "siunitx" not in md
    assert "\\unit" not in render(sol, "text")
    assert "times in h from" in render(sol, "text")  # the reading's times, in the case's time unit


def test_free_text_parameter_units_of_a_case_without_a_units_table_are_escaped() -> None:
    """Without [units] the parameters' units are labels, unchecked: pint-readable ones are still set by siunitx."""
    case = loads_case('[parameters.k]\nvalue = 1\nunit = "a made-up unit & more"\n[parameters.g]\nvalue = 2\nunit = "m/s^2"\n'
                      '[system]\nequations = ["x\' = -k*x + g"]\n[initial]\nvalues = [0]')
    tex = render(solve_case(case), "latex")
    assert r"& a made-up unit \& more &" in tex
    assert UNIT_MACRO + r"\metre\per\second\squared}" in tex and r"\usepackage{siunitx}" in tex


def test_a_sheet_without_units_does_not_load_siunitx() -> None:
    sol = solve_case(loads_case('[system]\nmatrix = [[-1]]\n[initial]\nvalues = [1]'))
    tex = render(sol, "latex")
    assert "siunitx" not in tex and "\\unit[" not in tex


@pytest.mark.tex
@needs_tex
def test_every_macro_of_the_tables_exists_in_siunitx(tmp_path: Path) -> None:
    """Asks TeX itself (siunitx from TeX Live's texlive-science): an unknown unit macro is an error."""
    units = " ".join(UNIT_MACRO + macro + "}" for macro in SI_UNITS.values())
    prefixed = " ".join(UNIT_MACRO + macro + r"\metre}" for macro in SI_PREFIXES.values() if macro)
    (tmp_path / "u.tex").write_text(
        "\\documentclass{article}\n\\usepackage{siunitx}\n\\begin{document}\n"
        f"{units}\n\n{prefixed}\n\n$" + UNIT_MACRO + r"\metre\per\second\squared}$" + "\n\\end{document}\n"
    )
    code, log = compile_tex(tmp_path, "u.tex")
    assert code == 0, [line for line in log.splitlines() if line.startswith("!")][:5]
    assert "Undefined control sequence" not in log
    assert "siunitx" in log and "Package siunitx Error" not in log


@pytest.mark.tex
@needs_tex
def test_a_sheet_with_units_compiles_with_siunitx_and_fits(tmp_path: Path) -> None:
    sol = solve_case(loads_case(UNIT_CASE))
    write_outputs(sol, tmp_path, stem="room", formats=("latex",), pdf=False)
    code, log = compile_tex(tmp_path, "room.tex")
    assert code == 0, [line for line in log.splitlines() if line.startswith("!")][:5]
    assert "siunitx.sty" in log
    wide = [float(w) for w in re.findall(r"Overfull \\hbox \(([0-9.]+)pt too wide\)", log)]
    assert not wide, wide


def test_a_state_in_degrees_celsius_per_minute_is_checked() -> None:
    """degC is an offset unit: pint refuses degC/min unless offsets become base units in products."""
    case = loads_case('[parameters.g]\nvalue = 2\nunit = "degC/kW"\n[parameters.Q]\nvalue = 1\nunit = "kW"\n'
                      '[parameters.tau]\nvalue = 5\nunit = "min"\n[units]\nT = "degC"\n[system]\ntime_unit = "min"\n'
                      'equations = ["T\' = (g*Q - T)/tau"]')
    assert any(n.startswith("units: every term") and "time in min" in n for n in case.notices)
    with pytest.raises(UnitError, match="the term"):
        loads_case('[parameters.g]\nvalue = 2\nunit = "degC/kW"\n[units]\nT = "degC"\n[system]\ntime_unit = "min"\n'
                   'equations = ["T\' = g - T"]')
