"""The reading's tables show the units the case declares: per value for states, in the heading for times and rates."""

from __future__ import annotations

import re
import shutil
from pathlib import Path

import pytest

from derive.casefile import loads_case
from derive.documents.blocks import Table, Unit
from derive.documents.reading_numbers import state_units
from derive.documents.reading_section import reading_blocks
from derive.model import Solution
from derive.output import write_outputs
from derive.pipeline import solve_case
from derive.render import render
from derive.render.siunits import unit_latex

from test_siunits import compile_tex

# a pump skid of our own on a spring mount, shaken by its running imbalance
MOUNT = """
[sheet]
title = "Pump skid on a spring mount"
[parameters.k]
unit = "N/m"
value = 8
[parameters.m]
unit = "kg"
value = 2
[parameters.c]
unit = "N*s/m"
value = 2
[parameters.F]
unit = "N"
value = 3
[units]
y = "m"
[system]
time_unit = "s"
equations = ["m*y'' + c*y' + k*y = F*sin(2*t)"]
[initial]
values = [0, 0]
[solve]
values = "substitute"
"""

# the same mount without units: the tables stay as they were
BARE = "\n".join(line for line in MOUNT.splitlines() if not line.startswith(("unit", "y =", "[units]", "time_unit")))


@pytest.fixture(scope="module")
def mount() -> Solution:
    return solve_case(loads_case(MOUNT, name="mount", source="test"))


def tables(solution: Solution) -> list[Table]:
    return [b for b in reading_blocks(solution) if isinstance(b, Table)]


def test_a_derivative_state_has_its_base_unit_per_unit_of_time(mount: Solution) -> None:
    assert state_units(mount.system) == {"y": "m", "y'": "m/s"}


def test_the_text_tables_carry_the_declared_units(mount: Solution) -> None:
    text = render(mount, "text")
    text = text[text.index("RESPONSE AT A GLANCE"):text.index("ASSUMPTIONS")]
    assert "Peak time (s)" in text and "Settling 2 % (s)" in text and "Rise 10-90 % (s)" in text
    assert re.search(r"λ \(1/s\)\s+τ \(s\)\s+ω_n \(rad/s\)\s+ζ\s+ω_d \(rad/s\)", text)
    y_rows = [line for line in text.splitlines() if line.startswith("y  ")]
    dy_rows = [line for line in text.splitlines() if line.startswith("y'  ")]
    # the states table (initial, peak) and the sinusoid table (amplitude, offset)
    assert len(y_rows) == 2 and len(dy_rows) == 2
    assert all(line.count(" m ") + line.endswith(" m") >= 2 for line in y_rows)
    assert all(line.count(" m/s") >= 2 for line in dy_rows)
    assert "ω = 2 rad/s" in " ".join(text.split())


def test_an_undefined_figure_has_no_unit(mount: Solution) -> None:
    states = next(t for t in tables(mount) if t.header[0] == "State" and len(t.header) == 8)
    final = [row[2] for row in states.rows]
    # the forced mount has no final value: a dash, never "-- m"
    assert final == [("--",), ("--",)]


def test_the_latex_sets_each_unit_with_siunitx(mount: Solution) -> None:
    tex = render(mount, "latex")
    section = tex[tex.index("Response at a glance"):]
    for unit in ("m", "m/s", "s", "1/s", "rad/s"):
        assert unit_latex(unit) in section, unit
    assert "Peak time (" + unit_latex("s") + ")" in section


def test_the_markdown_tables_write_units_as_text(mount: Solution) -> None:
    md = render(mount, "markdown")
    assert "| Peak time (s) |" in md
    assert re.search(r"\| \$y'\$ \| \$0\$ m/s \|", md)


def test_a_case_without_units_keeps_bare_figures() -> None:
    bare = solve_case(loads_case(BARE, name="bare", source="test"))
    assert bare.system.units == () and bare.system.time_unit == ""
    assert state_units(bare.system) == {}
    for table in tables(bare):
        cells = [part for row in table.rows for cell in row for part in cell]
        assert not any(isinstance(part, Unit) for part in cells)
        assert not any("(" in h for h in table.header if isinstance(h, str) and h != "Phase (rad)")


@pytest.mark.tex
@pytest.mark.skipif(shutil.which("latexmk") is None, reason="latexmk is not on the PATH")
def test_the_sheet_with_units_in_its_tables_compiles_and_fits(mount: Solution, tmp_path: Path) -> None:
    write_outputs(mount, tmp_path, stem="mount", formats=("latex",), pdf=False)
    code, log = compile_tex(tmp_path, "mount.tex")
    assert code == 0, [line for line in log.splitlines() if line.startswith("!")][:5]
    assert "siunitx.sty" in log
    wide = [float(w) for w in re.findall(r"Overfull \\hbox \(([0-9.]+)pt too wide\)", log)]
    assert not wide, wide


def test_the_slowest_time_constant_is_said_with_the_time_unit(mount: Solution) -> None:
    from derive.reading.stability import classify

    # c/m = 1, k/m = 4: lambda = -1/2 +- i sqrt(15)/2, so the time constant is 2 (s); without units it is bare
    assert "the slowest mode has the time constant 2 s)" in classify(mount, {}).reason
    bare = solve_case(loads_case(BARE, name="bare", source="test"))
    assert "the slowest mode has the time constant 2)" in classify(bare, {}).reason
