"""Outputs y = C x + D u: [outputs] (expressions or matrices C, D), outputs= in the API, the sheet, the refusals.

Each output must equal C x + D u exactly, decided by the zero engine
(derive.verify.zero) and by sympy here.  The systems are scenarios made up
for this file.
"""

from __future__ import annotations

from pathlib import Path

import pytest
import sympy as sp
from click.testing import CliRunner

import derive
from derive.casefile import loads_case
from derive.cli import cli
from derive.verify.zero import decide

k, m = sp.symbols("k m", positive=True)
t = sp.Symbol("t")

# two carts joined by a spring, rolling freely
TWO_CARTS = """
[system]
equations = ["x1' = v1", "v1' = -k*(x1 - x2)", "x2' = v2", "v2' = k*(x1 - x2)"]
[initial]
values = [1, 0, 0, 0]
[parameters.k]
assume = ["positive"]
value = 2
"""

# a room warmed by a heater whose power u is a declared input
ROOM = """
[system]
equations = ["T' = -T/4 + u/2"]
[inputs]
u = "3*step(t)"
[initial]
values = [0]
"""


def run(args):
    return CliRunner().invoke(cli, args, catch_exceptions=False)


def _equals_cx_du(sol: derive.Solution) -> None:
    o = sol.outputs
    assert o is not None and o.verified
    want = o.C * sol.x + o.D * o.u
    for i in range(len(o.names)):
        assert decide(o.y[i] - want[i], t=sol.t).zero
        assert sp.simplify(o.y[i] - want[i]) == 0


def test_api_outputs_are_c_x_and_verified() -> None:
    sol = derive.solve(
        [[-1, 0], [0, -2]], x0=[1, 1], params={k: 3}, outputs={"spring": "k*(x_1 - x_2)", "total": "x_1 + x_2"}
    )
    o = sol.outputs
    assert o.names == ("spring", "total")
    assert o.C == sp.Matrix([[k, -k], [1, 1]]) and o.D == sp.zeros(2, 2)
    assert sp.simplify(o["spring"] - k * (sp.exp(-t) - sp.exp(-2 * t))) == 0
    _equals_cx_du(sol)
    assert sol.steps[-1].kind == "outputs"
    assert any("Outputs y = C x + D u" in n for n in sol.verification.notes)


def test_case_outputs_with_a_declared_input_fill_d() -> None:
    case = loads_case(ROOM + '[outputs]\nheat_in = "u/2"\nlag = "u/2 - T/4"\n', name="room")
    sol = derive.solve_case(case)
    o = sol.outputs
    assert [s.name for s in o.u_names] == ["u"] and o.u == sp.Matrix([3 * sp.Heaviside(t, sp.Rational(1, 2))]).xreplace({t: sol.t})
    assert o.C == sp.Matrix([[0], [-sp.Rational(1, 4)]]) and o.D == sp.Matrix([[sp.Rational(1, 2)], [sp.Rational(1, 2)]])
    _equals_cx_du(sol)
    # the lag is T' itself: it equals the derivative of the state for t > 0, where u = 3
    on = {h: 1 for h in o["lag"].atoms(sp.Heaviside)}
    assert decide(o["lag"].xreplace(on) - sp.diff(sol.x[0], sol.t), t=sol.t).zero


def test_matrix_form_with_names_and_the_spring_force_of_two_carts() -> None:
    case = loads_case(TWO_CARTS + '[outputs]\nC = [["k", 0, "-k", 0]]\nnames = ["pull"]\n', name="carts")
    sol = derive.solve_case(case)
    o = sol.outputs
    assert o.names == ("pull",) and o.D.shape == (1, 4)
    _equals_cx_du(sol)
    by_text = derive.solve_case(loads_case(TWO_CARTS, name="carts"), outputs={"pull": "k*(x1 - x2)"})
    assert sp.simplify(by_text.outputs["pull"] - o["pull"]) == 0


def test_outputs_follow_substitution_and_relations() -> None:
    case = loads_case(TWO_CARTS + '[outputs]\npull = "k*(x1 - x2)"\n[solve]\nvalues = "substitute"\n', name="carts")
    sol = derive.solve_case(case)
    assert sol.outputs.C == sp.Matrix([[2, 0, -2, 0]])
    assert not sol.outputs.y.free_symbols - {sol.t}
    _equals_cx_du(sol)


def test_outputs_on_every_sheet_format(tmp_path: Path) -> None:
    path = tmp_path / "carts.toml"
    path.write_text(TWO_CARTS + '[outputs]\nspring_force = "k*(x1 - x2)"\n')
    res = run(["solve", str(path), "-o", str(tmp_path), "--no-pdf", "--format", "text", "--format", "markdown",
               "--format", "latex", "--format", "json"])
    assert res.exit_code == 0, res.output
    assert "output spring_force(t) = " in res.output
    text = (tmp_path / "carts.txt").read_text()
    result = text[text.index("RESULT"):text.index("VERIFICATION")]
    assert "spring_force(t) =" in result
    assert "spring_force = k (x1 - x2)" in text or "spring_force = k x1 - k x2" in text
    assert "Outputs" in (tmp_path / "carts.md").read_text()
    tex = (tmp_path / "carts.tex").read_text()
    assert tex.count(r"{\mathit{spring}_{\mathrm{force}}}(t)") >= 2  # the derivation step and the Result
    import json

    record = json.loads((tmp_path / "carts.json").read_text())
    assert record["steps"][-1]["kind"] == "outputs"
    assert record["outputs"]["names"] == ["spring_force"] and record["outputs"]["verified"] is True


BAD = [
    ("nonlinear", 'f = "x1*x2"', "outputs.f", "not linear in x1"),
    ("unknown name", 'f = "k*z"', "outputs.f", "z"),
    ("constant term", 'f = "x1 + 1"', "outputs.f", "multiplies no state or input"),
    ("time itself", 'f = "t*x1"', "outputs.f", "depends on t itself"),
    ("name of a state", 'x1 = "x2"', "outputs.x1", "has the name of a state"),
    ("matrix shape", 'C = [[1, 0]]', "outputs.C", "expected"),
    ("matrix and text", 'C = [[1, 0, 0, 0]]\ng = "x1"', "outputs.g", "either name"),
]


@pytest.mark.parametrize(("label", "table", "key", "says"), BAD, ids=[b[0] for b in BAD])
def test_bad_outputs_are_exit_2_naming_file_section_key_and_expectation(
    label: str, table: str, key: str, says: str, tmp_path: Path
) -> None:
    path = tmp_path / "carts.toml"
    path.write_text(TWO_CARTS + "[outputs]\n" + table + "\n")
    out = tmp_path / "out"
    res = run(["solve", str(path), "-o", str(out), "--no-pdf"])
    assert res.exit_code == 2, res.output
    assert str(path) in res.output and key in res.output and says in res.output
    assert "[outputs]" in res.output or "outputs." in res.output
    assert "expected" in res.output
    assert not out.exists()


def test_bad_api_outputs_name_the_key() -> None:
    with pytest.raises(derive.InputError) as err:
        derive.solve([[-1]], x0=[1], outputs={"sq": "x_1^2"})
    assert err.value.key == "outputs[sq]" and "not linear" in str(err.value)


def test_a_sweep_puts_its_values_into_the_outputs_too() -> None:
    from derive.casefile import loads_cases

    text = TWO_CARTS.replace("value = 2\n", "") + '[outputs]\npull = "k*(x1 - x2)"\n[sweep]\nk = [2, 8]\n'
    cases = loads_cases(text, name="carts")
    pulls = []
    for case, value in zip(cases, (2, 8)):
        sol = derive.solve_case(case)
        assert sol.outputs.C == sp.Matrix([[value, 0, -value, 0]])
        _equals_cx_du(sol)
        pulls.append(sol.outputs["pull"].subs(sol.t, 0))
    # the stiffer spring pulls at t = 0 with the same stretch (1) but four times the force
    assert pulls == [2, 8]
