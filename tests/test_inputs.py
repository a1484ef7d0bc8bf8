"""Named inputs: [inputs] u = "formula in t", used as u or u(t) in the equations and the forcing."""

from __future__ import annotations

import pytest
import sympy as sp

import derive
from derive.casefile import loads_case
from derive.errors import CaseFileError, ExpressionError


def case(body: str, inputs: str = 'u = "5*sin(2*pi*t/24)"') -> derive.Case:
    return loads_case(f"[inputs]\n{inputs}\n{body}", source="room.toml")


def test_input_in_equations_as_name_and_as_call() -> None:
    a = case('[system]\nequations = ["T\' = (u - T)/2"]\n')
    b = case('[system]\nequations = ["T\' = (u(t) - T)/2"]\n')
    t = a.system.t
    assert a.system.f == b.system.f == sp.Matrix([5 * sp.sin(sp.pi * t / 12) / 2])
    assert a.system.A == sp.Matrix([[sp.Rational(-1, 2)]])
    assert any(n.startswith("inputs.u: u(t) = 5*sin(2*pi*t/24)") for n in a.notices)


def test_input_in_matrix_forcing_and_in_force_vector() -> None:
    m = case('[system]\nmatrix = [[-1]]\nforcing = ["2*u(t)"]\n', 'u = "step(t - 1)"')
    t = m.system.t
    assert m.system.f == sp.Matrix([2 * sp.Heaviside(t - 1, sp.Rational(1, 2))])
    s = case('[system]\nmass = [[2]]\nstiffness = [[8]]\nforce = ["F"]\n', 'F = "sin(t)"')
    assert s.system.f == sp.Matrix([0, sp.sin(t) / 2])


def test_input_of_higher_order_equation_solves() -> None:
    c = case(
        "[parameters.wn]\nassume = [\"positive\"]\n[system]\nequations = [\"y'' + wn^2*y = wn^2*u(t)\"]\n"
        "[initial]\ny = 0\n\"y'\" = 0\n",
        'u = "1"',
    )
    sol = derive.solve_case(c)
    wn = c.system.params[0].symbol
    assert sp.simplify(sol.x[0] - (1 - sp.cos(wn * sol.t))) == 0


def test_same_answer_as_the_formula_written_inline() -> None:
    named = case('[system]\nequations = ["x\' = -x + u"]\n', 'u = "exp(-2*t)"')
    inline = loads_case('[system]\nequations = ["x\' = -x + exp(-2*t)"]\n')
    assert named.system.f == inline.system.f


@pytest.mark.parametrize(
    ("body", "inputs", "key", "says"),
    [
        ('[system]\nequations = ["x\' = -u*x"]\n', 'u = "step(t)"', "system.equations", "multiplies a state"),
        ('[system]\nequations = ["x\' = -x + u(t - 1)"]\n', 'u = "step(t)"', "system.equations[0]", "current time only"),
        ('[system]\nequations = ["x\' = -x + u"]\n', 'u = "x"', "inputs.u", "unknown name 'x'"),
        ('[system]\nequations = ["u\' = -u"]\n', 'u = "1"', "system.equations[0]", "the input 'u' has the same name as a state"),
        ('[parameters.u]\n[system]\nmatrix = [[-1]]\n', 'u = "1"', "inputs.u", "has the name of a parameter"),
        ('[system]\nmatrix = [[-1]]\n', 'u = true', "inputs.u", "expected a formula in t"),
        ('[system]\nmatrix = [[-1]]\n', 'lambda = "1"', "inputs.lambda", "reserved"),
        ("[system]\nequations = [\"y'' = -y + u'\"]\n", 'u = "t"', "system.equations[0]", "not a state"),
    ],
)
def test_input_refusals(body: str, inputs: str, key: str, says: str) -> None:
    with pytest.raises((CaseFileError, ExpressionError)) as err:
        case(body, inputs)
    assert err.value.key == key and err.value.file == "room.toml"
    assert says in err.value.message, err.value.message


def test_undeclared_call_is_still_refused() -> None:
    with pytest.raises(ExpressionError) as err:
        loads_case('[parameters.u]\n[system]\nequations = ["x\' = -x + u(t)"]\n')
    assert "write u for a constant input" in (err.value.hint or "")


SWEPT_INPUT = """
[parameters.a]
assume = ["positive"]
[inputs]
u = "step(t)"
[system]
equations = ["x' = -a*x + 2*u"]
[initial]
values = [0]
[sweep]
a = [1, 2]
u = ["step(t)", "sin(2*t)"]
"""


def test_a_sweep_varies_an_input() -> None:
    from derive.casefile import loads_cases

    cases = loads_cases(SWEPT_INPUT, name="lag")
    assert [c.name for c in cases] == ["lag-a_1-u_stept", "lag-a_1-u_sin2t", "lag-a_2-u_stept", "lag-a_2-u_sin2t"]
    t = cases[0].system.t
    assert [c.system.f[0] for c in cases] == [2 * sp.Heaviside(t), 2 * sp.sin(2 * t)] * 2
    assert [c.system.A[0] for c in cases] == [-1, -1, -2, -2]
    assert "u = sin(2*t)" in cases[1].meta.notes
    sol = derive.solve_case(cases[3])
    x = sol.x[0]
    # by substitution: x' + 2 x = 2 sin(2t), x(0) = 0
    assert sp.simplify(x.diff(t) + 2 * x - 2 * sp.sin(2 * t)) == 0 and x.subs(t, 0) == 0


def test_a_swept_input_formula_is_checked_where_it_is_written() -> None:
    from derive.casefile import loads_cases

    with pytest.raises(ExpressionError) as err:
        loads_cases(SWEPT_INPUT.replace('"sin(2*t)"', '"sin(2*t"'), name="lag")
    assert err.value.key == "sweep.u[1]"
    with pytest.raises(derive.CaseFileError) as err:
        loads_cases(SWEPT_INPUT.replace('u = ["step(t)", "sin(2*t)"]', 'v = ["step(t)"]'), name="lag")
    assert err.value.key == "sweep.v" and "not a declared parameter" in err.value.message
