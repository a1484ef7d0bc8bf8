"""TOML case files -> Case: the schema and every validation rule."""

from __future__ import annotations

import hashlib
from importlib import resources
from pathlib import Path

import pytest
import sympy as sp

from derive.casefile import case_name, load_case, loads_case
from derive.errors import CaseFileError, ExpressionError, InputError, LimitError
from derive.model import Case
from derive.parsing import Limits

FULL = """
[sheet]
title = "Two-zone heat balance"
project = "Depot annex"
calc_number = "C-017"
revision = "B"
subject = "Warm-up after a heating fault"
prepared_by = "AB"
checked_by = "CD"
date = "2026-12-02"
purpose = "Zone temperatures after the heater restarts."
assumptions = ["Well-mixed zones", "Constant conductances"]
references = ["Site survey, rev 2"]
notes = "Draft."

[sheet.states]
T1 = "zone 1 air temperature, degC"
T2 = "zone 2 air temperature, degC"

[system]
t = "t"
states = ["T1", "T2"]
matrix = [["-1/5", "1/5"], ["1/8", -0.25]]
forcing = ["q/2", 0]

[initial]
t0 = "1/2"
values = [20, 15]

[parameters.q]
assume = ["positive"]
value = 3
unit = "kW"
description = "heating power"
"""


def load(text: str) -> Case:
    return loads_case(text, name="c", source="c.toml")


def fails(text: str, cls: type[InputError] = CaseFileError) -> InputError:
    with pytest.raises(cls) as info:
        load(text)
    err = info.value
    assert err.file == "c.toml"
    assert err.exit_code == 2
    return err


def test_full_case() -> None:
    case = load(FULL)
    s = case.system
    T1, T2 = s.states
    q = s.params[0].symbol
    assert (T1.name, T2.name, s.t.name) == ("T1", "T2", "t")
    assert s.A == sp.Matrix([[sp.Rational(-1, 5), sp.Rational(1, 5)], [sp.Rational(1, 8), sp.Rational(-1, 4)]])
    assert s.f == sp.Matrix([q / 2, 0])
    assert s.x0 == sp.Matrix([20, 15]) and s.t0 == sp.Rational(1, 2)
    assert q.is_positive and s.t.is_real
    p = s.params[0]
    assert (p.value, p.unit, p.description) == (3, "kW", "heating power")
    m = case.meta
    assert (m.title, m.calc_number, m.revision, m.date) == ("Two-zone heat balance", "C-017", "B", "2026-12-02")
    assert m.assumptions == ("Well-mixed zones", "Constant conductances")
    assert m.references == ("Site survey, rev 2",)
    assert m.state_descriptions == (("T1", "zone 1 air temperature, degC"), ("T2", "zone 2 air temperature, degC"))
    assert case.notices == ("system.matrix[1][1]: -0.25 read as the exact value -1/4",)
    assert case.name == "c" and case.source == "c.toml"
    assert case.source_hash == hashlib.sha256(FULL.encode()).hexdigest()
    assert s.equations == ()


def test_minimal_case_defaults() -> None:
    case = load('[system]\nmatrix = [[0, 1], [-2, -3]]')
    s = case.system
    assert [x.name for x in s.states] == ["x1", "x2"]
    assert s.f == sp.zeros(2, 1) and s.x0 is None and s.t0 == 0 and s.params == ()
    assert case.meta.revision == "A" and case.notices == ()


def test_equations_form_keeps_the_strings() -> None:
    text = """
[system]
equations = ["T1' = -(T1 - T2)/5 + q/2", "T2' = (T1 - T2)/8 - T2/8"]
[initial]
values = {T2 = 15, T1 = 20}
[parameters.q]
"""
    s = load(text).system
    assert s.equations == ("T1' = -(T1 - T2)/5 + q/2", "T2' = (T1 - T2)/8 - T2/8")
    assert [x.name for x in s.states] == ["T1", "T2"]
    assert s.x0 == sp.Matrix([20, 15])  # table order does not matter: state order does
    assert s.A[1, 1] == sp.Rational(-1, 4)


def test_toml_date_is_accepted() -> None:
    case = load('[sheet]\ndate = 2026-12-02\n[system]\nmatrix = [[-1]]')
    assert case.meta.date == "2026-12-02"


def test_symbolic_initial_values_and_other_t() -> None:
    case = load('[system]\nt = "s"\nmatrix = [["-k"]]\nforcing = ["exp(-s)"]\n[initial]\nvalues = ["2k"]\n[parameters.k]\nassume = ["positive"]')
    s = case.system
    k = s.params[0].symbol
    assert s.t.name == "s" and s.x0 == sp.Matrix([2 * k]) and s.f == sp.Matrix([sp.exp(-s.t)])


def test_unused_parameter_gives_notice() -> None:
    case = load('[system]\nmatrix = [[-1]]\n[parameters.k]')
    assert case.notices == ("parameters.k: declared but not used in the system",)


def test_load_case_from_file(tmp_path: Path) -> None:
    path = tmp_path / "two zone (rev B).toml"
    path.write_text(FULL, encoding="utf-8")
    case = load_case(path)
    assert case.name == "two_zone__rev_B_"
    assert case.source == str(path)
    assert case.source_hash == hashlib.sha256(path.read_bytes()).hexdigest()


def test_template_loads() -> None:
    text = resources.files("derive.data").joinpath("template.toml").read_text(encoding="utf-8")
    case = loads_case(text, name="template")
    s = case.system
    assert [x.name for x in s.states] == ["h1", "h2"] and s.is_ivp
    # The commented-out equations in the template describe the same system.
    lines = [ln.lstrip("# ").rstrip(",").strip('"') for ln in text.splitlines() if ln.startswith('#     "')]
    assert len(lines) == 2
    from derive.equations import parse_equations

    states, A, f, _ = parse_equations(lines, symbols={p.name: p.symbol for p in s.params}, t=s.t)
    assert A == s.A and f == s.f and [x.name for x in states] == [x.name for x in s.states]


# --- validation rules ------------------------------------------------------

RULES: list[tuple[str, str, str, type[InputError]]] = [
    # (text, key the error must name, text the message must contain, class)
    ("[system\nmatrix = 1", "", "not valid TOML", CaseFileError),
    ('[system]\nmatrix = [[-1]]\nmatirx = 2', "system.matirx", "unknown key 'matirx'", CaseFileError),
    ('[sytem]\nmatrix = [[-1]]', "sytem", "unknown key 'sytem'", CaseFileError),
    ('[sheet]\ntitel = "x"\n[system]\nmatrix = [[-1]]', "sheet.titel", "unknown key", CaseFileError),
    ('[system]\nmatrix = [[-1]]\n[parameters.k]\nasume = ["positive"]', "parameters.k.asume", "unknown key", CaseFileError),
    ('[sheet]\ntitle = 3\n[system]\nmatrix = [[-1]]', "sheet.title", "expected a string", CaseFileError),
    ('[sheet]\nassumptions = "one"\n[system]\nmatrix = [[-1]]', "sheet.assumptions", "expected a list of strings", CaseFileError),
    ('[sheet]\nreferences = [1]\n[system]\nmatrix = [[-1]]', "sheet.references[0]", "expected a string", CaseFileError),
    ('[system]\nmatrix = "A"', "system.matrix", "expected a list of rows", CaseFileError),
    ('[system]\nmatrix = []', "system.matrix", "empty", CaseFileError),
    ('[system]\nmatrix = [[1, 2], [3]]', "system.matrix[1]", "has 1 entries", CaseFileError),
    ('[system]\nmatrix = [[1, 2, 3], [4, 5, 6]]', "system.matrix[0]", "square", CaseFileError),
    ('[system]\nmatrix = [[1, [2]], [3, 4]]', "system.matrix[0][1]", "expected a number or an expression string", CaseFileError),
    ('[system]\nmatrix = [[true]]', "system.matrix[0][0]", "boolean", CaseFileError),
    ('[system]\nmatrix = [[-1, 0], [0, -1]]\nforcing = [1]', "system.forcing", "system.matrix is 2x2 but system.forcing has 1 entries", CaseFileError),
    ('[system]\nmatrix = [[-1, 0], [0, -1]]\n[initial]\nvalues = [1, 2, 3]', "initial.values", "system.matrix is 2x2 but initial.values has 3 entries", CaseFileError),
    ('[system]\nequations = ["x\' = -x"]\n[initial]\nvalues = [1, 2]', "initial.values", "system.equations has 1 equation but initial.values has 2 entries", CaseFileError),
    ('[system]\nmatrix = [[-1]]\n[initial]\nt0 = 0', "initial.values", "no values", CaseFileError),
    ('[system]\nmatrix = [[-1]]\n[initial]\nvalues = "1"', "initial.values", "expected a list in state order", CaseFileError),
    ('[system]\nmatrix = [[-1, 0], [0, -1]]\n[initial]\nvalues = {x1 = 1}', "initial.values", "no value for x2", CaseFileError),
    ('[system]\nmatrix = [[-1, 0], [0, -1]]\n[initial]\nvalues = {x1 = 1, x2 = 0, xx3 = 2}', "initial.values.xx3", "not a state", CaseFileError),
    ('[system]\nmatrix = [[-1]]\nequations = ["x\' = -x"]', "system", "both matrix and equations", CaseFileError),
    ('[system]\nt = "t"', "system", "neither matrix nor equations", CaseFileError),
    ('[sheet]\ntitle = "x"', "system", "no [system] table", CaseFileError),
    ('[system]\nmatrix = [["-t", 0], [0, -1]]', "system.matrix[0][0]", "A must be constant", CaseFileError),
    ('[system]\nmatrix = [["-exp(-t)"]]', "system.matrix[0][0]", "not a constant-coefficient system", CaseFileError),
    ('[system]\nmatrix = [[-1]]\n[initial]\nvalues = ["t"]', "initial.values[0]", "depends on t", CaseFileError),
    ('[system]\nmatrix = [[-1]]\n[initial]\nt0 = "a"\nvalues = [1]', "initial.t0", "must be a number", CaseFileError),
    ('[system]\nmatrix = [[-1]]\n[initial]\nt0 = [0]\nvalues = [1]', "initial.t0", "expected a number", CaseFileError),
    ('[system]\nmatrix = [["-k"]]', "system.matrix[0][0]", "unknown name 'k'", ExpressionError),
    ('[system]\nmatrix = [["-kk"]]\n[parameters.k]', "system.matrix[0][0]", "unknown name 'kk'", ExpressionError),
    ('[system]\nequations = ["x\' = -k x"]', "system.equations[0]", "not a declared parameter", ExpressionError),
    ('[system]\nstates = ["k"]\nmatrix = [["-1"]]\n[parameters.k]', "system.states[0]", "same name as a state", CaseFileError),
    ('[system]\nequations = ["k\' = -k"]\n[parameters.k]', "system.equations[0]", "same name as a state", CaseFileError),
    ('[system]\nmatrix = [["-1"]]\n[parameters.x1]', "parameters.x1", "same name as a state", CaseFileError),
    ('[system]\nmatrix = [["-1"]]\n[parameters.t]', "parameters.t", "independent variable", CaseFileError),
    ('[system]\nmatrix = [[-1]]\n[parameters.k]\nassume = ["postive"]', "parameters.k.assume[0]", "unknown assumption 'postive'", CaseFileError),
    ('[system]\nmatrix = [[-1]]\n[parameters.k]\nassume = "positive"', "parameters.k.assume", "expected a list of strings", CaseFileError),
    ('[system]\nmatrix = [[-1]]\n[parameters.k]\nassume = ["positive", "negative"]', "parameters.k.assume", "inconsistent assumptions", CaseFileError),
    ('[system]\nmatrix = [[-1]]\n[parameters.k]\nassume = ["negative", "nonnegative"]', "parameters.k.assume", "inconsistent assumptions", CaseFileError),
    ('[system]\nmatrix = [[-1]]\n[parameters.k]\nassume = ["positive"]\nvalue = -2', "parameters.k.value", "violates the assumption 'positive'", CaseFileError),
    ('[system]\nmatrix = [[-1]]\n[parameters.k]\nassume = ["nonzero"]\nvalue = "0"', "parameters.k.value", "violates the assumption 'nonzero'", CaseFileError),
    ('[system]\nmatrix = [[-1]]\n[parameters.k]\nvalue = "m/2"', "parameters.k.value", "exact number", CaseFileError),
    ('[system]\nmatrix = [[-1]]\n[parameters.k]\nunit = 3', "parameters.k.unit", "expected a string", CaseFileError),
    ('[system]\nmatrix = [[-1]]\n[parameters]\nk = 3', "parameters.k", "expected a table", CaseFileError),
    ('[system]\nmatrix = [[-1]]\n[parameters.exp]', "parameters.exp", "reserved", CaseFileError),
    ('[system]\nstates = ["a", "a"]\nmatrix = [[-1, 0], [0, -1]]', "system.states[1]", "duplicate state 'a'", CaseFileError),
    ('[system]\nstates = ["a"]\nmatrix = [[-1, 0], [0, -1]]', "system.states", "has 1 entries", CaseFileError),
    ('[system]\nstates = ["2x"]\nmatrix = [[-1]]', "system.states[0]", "not a valid name", CaseFileError),
    ('[system]\nstates = ["pi"]\nmatrix = [[-1]]', "system.states[0]", "reserved", CaseFileError),
    ('[system]\nstates = ["e"]\nmatrix = [[-1]]', "system.states[0]", "reserved", CaseFileError),
    ('[system]\nstates = ["sin"]\nmatrix = [[-1]]', "system.states[0]", "reserved", CaseFileError),
    ('[system]\nstates = ["t"]\nmatrix = [[-1]]', "system.states[0]", "independent variable", CaseFileError),
    ('[system]\nt = "exp"\nmatrix = [[-1]]', "system.t", "reserved", CaseFileError),
    ('[system]\nequations = ["x\' = -x"]\nstates = ["x"]', "system.states", "only used with system.matrix", CaseFileError),
    ('[system]\nequations = ["x\' = -x"]\nforcing = [1]', "system.forcing", "only used with system.matrix", CaseFileError),
    ('[system]\nequations = []', "system.equations", "empty", CaseFileError),
    ('[system]\nequations = ["x\' = x^2"]', "system.equations[0]", "not linear in the states", ExpressionError),
    ('[system]\nequations = ["x\' = -t x"]', "system.equations[0]", "not a constant-coefficient system", ExpressionError),
    ('[sheet.states]\nx9 = "?"\n[system]\nmatrix = [[-1]]', "sheet.states.x9", "not a state", CaseFileError),
    ('[sheet.states]\nx1 = 3\n[system]\nmatrix = [[-1]]', "sheet.states.x1", "expected a string", CaseFileError),
    ("[system]\nmatrix = [[-1]]\n[parameters.k]\n[parameters.k]", "", "not valid TOML", CaseFileError),
]


@pytest.mark.parametrize(("text", "key", "needle", "cls"), RULES, ids=[r[1] or r[2] for r in RULES])
def test_rules(text: str, key: str, needle: str, cls: type[InputError]) -> None:
    err = fails(text, cls)
    assert needle in err.message, err.message
    if key:
        assert err.key == key
        assert key in str(err)


def test_unknown_key_suggests_nearest() -> None:
    err = fails('[system]\nmatrix = [[-1]]\nforcng = [1]')
    assert err.hint == "did you mean 'forcing'?"
    assert "t, states, matrix, forcing, equations" in err.message


def test_bad_toml_has_line_and_column() -> None:
    err = fails('[system]\nmatrix = [[-k]]\n')
    assert err.line is not None and err.column is not None
    assert str(err).startswith(f"c.toml:{err.line}:{err.column}")
    assert err.hint is not None and "quotes" in err.hint  # an unquoted expression


def test_dimension_limit() -> None:
    rows = ", ".join("[" + ", ".join(["0"] * 13) + "]" for _ in range(13))
    err = fails(f"[system]\nmatrix = [{rows}]", LimitError)
    assert err.key == "system.matrix" and "limit of 12" in err.message


def test_custom_limits_apply_to_files() -> None:
    with pytest.raises(LimitError):
        loads_case("[system]\nmatrix = [[-1, 0], [0, -1]]", limits=Limits(max_dimension=1))
    with pytest.raises(LimitError):
        loads_case("[system]\nmatrix = [[-1]]", limits=Limits(max_file_bytes=10))


@pytest.mark.parametrize("name", ["../up", "a/b", "..", "a\\b", "", "..."])
def test_case_name_refuses_paths(name: str) -> None:
    with pytest.raises(CaseFileError) as info:
        case_name(name)
    assert info.value.key == "name"


@pytest.mark.parametrize(("raw", "safe"), [("plain", "plain"), (".hidden", "hidden"), ("a b;c", "a_b_c"), ("v1.2-x", "v1.2-x")])
def test_case_name_sanitises(raw: str, safe: str) -> None:
    assert case_name(raw) == safe


def test_missing_file() -> None:
    with pytest.raises(CaseFileError, match="cannot read"):
        load_case("/nonexistent/case.toml")


def test_non_utf8_file(tmp_path: Path) -> None:
    path = tmp_path / "bin.toml"
    path.write_bytes(b"[system]\nmatrix = [[\xff]]\n")
    with pytest.raises(CaseFileError, match="not UTF-8") as info:
        load_case(path)
    assert info.value.line == 2
