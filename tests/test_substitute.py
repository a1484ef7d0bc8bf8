"""Values into the algebra on request: [solve] values = "substitute", --substitute, substitute=True.

The check is internal: the numeric derivation must equal the symbolic result
with the same values put in afterwards, exactly (sympy), and both verify.
The systems are small scenarios made up for this file.
"""

from __future__ import annotations

import json
from pathlib import Path

import pytest
import sympy as sp
from click.testing import CliRunner

import derive
from derive.casefile import loads_case
from derive.cli import cli

a, b, F = sp.symbols("a b F", positive=True)
k, m, c = sp.symbols("k m c", positive=True)

# a heated block (x1) fed by a heater element (x2) whose power is switched on at t = 0
CHAIN = dict(A=[[-a, 1], [0, -b]], f=[0, F], x0=[1, 0])
CHAIN_VALUES = {a: 1, b: 3, F: 2}

CASE = """
[sheet]
title = "Instrument mount"
[system]
equations = ["x' = v", "v' = -(k*x + c*v)/m + P/m"]
[initial]
values = [0, 0]
[parameters.k]
assume = ["positive"]
value = 8
unit = "N/m"
[parameters.m]
assume = ["positive"]
value = 2
unit = "kg"
[parameters.c]
assume = ["positive"]
value = 4
unit = "N s/m"
[parameters.P]
value = "1/2"
unit = "N"
"""


def run(args):
    return CliRunner().invoke(cli, args, catch_exceptions=False)


def _same(x: sp.MatrixBase, y: sp.MatrixBase) -> bool:
    return all(sp.simplify(sp.expand_complex(p - q)) == 0 for p, q in zip(x, y))


def test_substituted_result_equals_the_symbolic_one_with_the_values_put_in_afterwards() -> None:
    sym = derive.solve(**CHAIN, params=CHAIN_VALUES)
    num = derive.solve(**CHAIN, params=CHAIN_VALUES, substitute=True)
    assert sym.ok and num.ok
    assert _same(sym.x.xreplace(CHAIN_VALUES), num.x)
    assert num.system.substituted and not sym.system.substituted
    # a numeric derivation: no parameter left anywhere in the algebra
    assert not num.system.A.free_symbols and not num.x.free_symbols - {num.t}
    assert set(num.eigenvalues) == {-1, -3}
    # the parameters stay listed, with their values
    assert {p.name: p.value for p in num.system.params} == {"a": 1, "b": 3, "F": 2}
    kinds = [s.kind for s in num.steps]
    assert kinds[0] == "values" and "values" not in [s.kind for s in sym.steps]
    step = num.steps[0]
    assert step.A_symbolic == sp.Matrix([[-a, 1], [0, -b]]) and step.A == sp.Matrix([[-1, 1], [0, -3]])


def test_case_key_and_override_both_work() -> None:
    base = loads_case(CASE, name="mount")
    keyed = loads_case(CASE + '[solve]\nvalues = "substitute"\n', name="mount")
    assert base.options is None and keyed.options is not None and keyed.options.substitute
    by_key = derive.solve_case(keyed)
    by_api = derive.solve_case(base, substitute=True)
    symbolic = derive.solve_case(keyed, substitute=False)
    assert by_key.ok and by_api.ok and symbolic.ok
    assert by_key.x == by_api.x
    values = {p.symbol: p.value for p in base.system.params}
    assert _same(symbolic.x.xreplace(values), by_key.x)
    assert by_key.system.substituted and not symbolic.system.substituted
    # the equations step keeps A as read off the equations, with the parameters
    eq = by_key.steps[0]
    assert eq.kind == "equations" and eq.A.free_symbols and by_key.steps[1].kind == "values"


def test_the_inputs_say_where_the_values_went(tmp_path: Path) -> None:
    path = tmp_path / "mount.toml"
    path.write_text(CASE)
    sub = run(["solve", str(path), "-o", str(tmp_path / "a"), "--no-pdf", "--format", "text", "--format", "latex", "--format", "json",
               "--substitute"])
    assert sub.exit_code == 0, sub.output
    text = (tmp_path / "a" / "mount.txt").read_text()
    assert "Parameters (values put into the algebra before the decomposition):" in text
    assert "k = 8 N/m" in text and "Parameter values put into the algebra" in text
    assert json.loads((tmp_path / "a" / "mount.json").read_text())["system"]["substituted"] is True
    tex = (tmp_path / "a" / "mount.tex").read_text()
    assert "the values are put into the algebra before the decomposition" in tex
    plain = run(["solve", str(path), "-o", str(tmp_path / "b"), "--no-pdf", "--format", "text"])
    assert plain.exit_code == 0, plain.output
    assert "kept as symbols in the algebra" in (tmp_path / "b" / "mount.txt").read_text()


def test_the_symbolic_flag_overrides_the_case_file(tmp_path: Path) -> None:
    path = tmp_path / "mount.toml"
    path.write_text(CASE + '[solve]\nvalues = "substitute"\n')
    res = run(["solve", str(path), "-o", str(tmp_path), "--no-pdf", "--format", "text", "--symbolic"])
    assert res.exit_code == 0, res.output
    assert "kept as symbols in the algebra" in (tmp_path / "mount.txt").read_text()


def test_a_missing_value_is_exit_2_naming_the_parameter_and_the_key(tmp_path: Path) -> None:
    path = tmp_path / "mount.toml"
    path.write_text(CASE.replace('value = 4\nunit = "N s/m"', 'unit = "N s/m"') + '[solve]\nvalues = "substitute"\n')
    res = run(["solve", str(path), "-o", str(tmp_path / "out"), "--no-pdf"])
    assert res.exit_code == 2
    assert "parameters.c.value" in res.output and str(path) in res.output
    assert "the parameter c has no value" in res.output
    assert not (tmp_path / "out").exists() or not list((tmp_path / "out").iterdir())
    # the same file without substitution solves symbolically in c
    assert run(["solve", str(path), "-o", str(tmp_path / "sym"), "--no-pdf", "--format", "text", "--symbolic"]).exit_code == 0


def test_a_missing_value_through_the_api_names_params() -> None:
    with pytest.raises(derive.InputError) as err:
        derive.solve([[-a]], x0=[1], params=[a], substitute=True)
    assert err.value.key == "params[a]" and err.value.exit_code == 2


def test_a_bad_solve_values_key_is_refused(tmp_path: Path) -> None:
    path = tmp_path / "mount.toml"
    path.write_text(CASE + '[solve]\nvalues = "numbers"\n')
    res = run(["solve", str(path), "-o", str(tmp_path / "out"), "--no-pdf"])
    assert res.exit_code == 2
    assert "solve.values" in res.output and '"substitute"' in res.output and str(path) in res.output


def test_a_relation_is_applied_before_the_values() -> None:
    # critical damping c^2 = 4 k m: k is eliminated, the values of c and m decide the rest
    A = [[0, 1], [-k / m, -c / m]]
    values = {k: 4, m: 1, c: 4}
    sol = derive.solve(A, [0, 1 / m], x0=[0, 0], params=values, assume=["c^2 = 4*k*m"], substitute=True)
    assert sol.ok and sol.eigenvalues == (-2, -2) and not sol.is_diagonalizable
    sym = derive.solve(A, [0, 1 / m], x0=[0, 0], params=values, assume=["c^2 = 4*k*m"])
    assert _same(sym.x.xreplace(values), sol.x)
    assert any("k is eliminated" in n for n in sol.notices)


def test_a_regime_is_decided_by_the_values_and_said_in_a_notice() -> None:
    A = [[0, 1], [-k / m, -c / m]]
    values = {k: 4, m: 1, c: 2}
    sol = derive.solve(A, [0, 1 / m], x0=[0, 0], params=values, assume=["c^2 < 4*k*m"], substitute=True)
    assert sol.ok
    said = [n for n in sol.notices if "regime" in n]
    assert said and "decided by the values" in said[0] and "it holds" in said[0]
    # no regime condition is stated: the values decided it
    assert not sol.conditions
    other = derive.solve(A, [0, 1 / m], x0=[0, 0], params={k: 1, m: 1, c: 4}, assume=["c^2 < 4*k*m"], substitute=True)
    assert any("it does not hold" in n for n in other.notices)
    assert all(e.is_real for e in other.eigenvalues)
