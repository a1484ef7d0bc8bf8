"""Equations of higher order: reduced to first order, solved, and refused where they cannot be."""

from __future__ import annotations

import pytest
import sympy as sp

import derive
from derive.casefile import loads_case
from derive.equations import parse_equations
from derive.errors import ExpressionError, LimitError
from derive.parsing import Limits
from derive.reduction import derivative_symbol, has_higher_order, reduce_order, reduction_of

t = sp.Symbol("t", real=True)
zeta, wn = sp.symbols("zeta wn", positive=True)
u = sp.Symbol("u", real=True)
PARAMS = {"zeta": zeta, "wn": wn, "u": u}


def read(lines: list[str], **kw: object):  # type: ignore[no-untyped-def]
    return parse_equations(lines, symbols=PARAMS, t=t, file="case.toml", **kw)


def test_damped_oscillator_becomes_companion_form() -> None:
    states, A, f, notices = read(["y'' + 2*zeta*wn*y' + wn^2*y = wn^2*u"])
    y, yd = states
    assert (y.name, yd.name) == ("y", "y'")
    assert yd == derivative_symbol("y", 1) and yd.is_real
    assert A == sp.Matrix([[0, 1], [-(wn**2), -2 * zeta * wn]])
    assert f == sp.Matrix([0, wn**2 * u])
    assert "reduced to first order" in notices[0] and "y, y'" in notices[0]


def test_leading_coefficient_is_divided_out() -> None:
    m, c, k = sp.symbols("m c k", positive=True)
    states, A, f, _ = parse_equations(["m*y'' + c*y' + k*y = sin(t)"], symbols={"m": m, "c": c, "k": k}, t=t)
    assert A == sp.Matrix([[0, 1], [-k / m, -c / m]])
    assert sp.simplify(f[1] - sp.sin(t) / m) == 0


def test_mixed_orders_couple_in_equation_order() -> None:
    states, A, f, _ = read(["x1'' = -2*x1 + x2", "x2' = x1 - x2"])
    assert [s.name for s in states] == ["x1", "x1'", "x2"]
    assert A == sp.Matrix([[0, 1, 0], [-2, 0, 1], [1, 0, -1]])
    assert f == sp.zeros(3, 1)


@pytest.mark.parametrize("line", ["d2y/dt2 = -4*y", "d^2y/dt^2 = -4*y", "d2y / dt2 + 4*y = 0", "y'' + 4 y = 0"])
def test_notations_agree(line: str) -> None:
    states, A, _, _ = read([line])
    assert [s.name for s in states] == ["y", "y'"]
    assert A == sp.Matrix([[0, 1], [-4, 0]])


def test_first_order_lines_keep_their_old_path() -> None:
    assert not has_higher_order(["x' = -x", "dy/dt = x"], t_name="t")
    assert has_higher_order(["x' = -x", "d3y/dt3 = x"], t_name="t")
    _, _, _, notices = read(["x' = -x"])
    assert notices == ()


def test_third_order_matches_dsolve() -> None:
    """Reference: sympy's dsolve of the scalar ODE (an independent library routine)."""
    case = loads_case(
        "[system]\nequations = [\"y''' + 3*y'' + 3*y' + y = exp(-t)\"]\n"
        "[initial]\ny = 1\n\"y'\" = 0\n\"y''\" = -1\n"
    )
    sol = derive.solve_case(case)
    assert sol.ok
    assert [s.name for s in case.system.states] == ["y", "y'", "y''"]
    tt = sol.t
    Y = sp.Function("Y")
    ode = sp.Eq(Y(tt).diff(tt, 3) + 3 * Y(tt).diff(tt, 2) + 3 * Y(tt).diff(tt) + Y(tt), sp.exp(-tt))
    ref = sp.dsolve(ode, ics={Y(0): 1, Y(tt).diff(tt).subs(tt, 0): 0, Y(tt).diff(tt, 2).subs(tt, 0): -1}).rhs
    assert sp.simplify(sol.x[0] - ref) == 0
    assert sp.simplify(sol.x[1] - ref.diff(tt)) == 0
    assert sp.simplify(sol.x[2] - ref.diff(tt, 2)) == 0


def test_coupled_mixed_order_ivp_satisfies_the_written_equations() -> None:
    case = loads_case("[system]\nequations = [\"x1'' = -2*x1 + x2\", \"x2' = x1 - x2\"]\n[initial]\nvalues = [1, 0, 0]\n")
    sol = derive.solve_case(case)
    x1, x2 = sol.x[0], sol.x[2]
    tt = sol.t
    # Substitution into the equations as written (independent of the program's own check);
    # the eigenvalues are roots of a cubic, so the residuals are evaluated to 40 digits.
    residuals = (x1.diff(tt, 2) + 2 * x1 - x2, x2.diff(tt) - x1 + x2, sol.x[1] - x1.diff(tt))
    for r in residuals:
        for at in (0, sp.Rational(3, 10), 2):
            assert abs(sp.N(r.subs(tt, at), 40)) < 1e-30
    starts = (x1.subs(tt, 0), x1.diff(tt).subs(tt, 0), x2.subs(tt, 0))
    assert [abs(sp.N(v - w, 40)) < 1e-30 for v, w in zip(starts, (1, 0, 0))] == [True] * 3


def test_initial_values_by_derivative_and_by_list() -> None:
    body = "[system]\nequations = [\"y'' + 3*y' + 2*y = 0\"]\n"
    by_name = loads_case(body + "[initial]\nt0 = 1\n\"y'\" = 2\ny = 5\n")
    by_list = loads_case(body + "[initial]\nt0 = 1\nvalues = [5, 2]\n")
    by_table = loads_case(body + "[initial]\nt0 = 1\nvalues = { y = 5, \"y'\" = 2 }\n")
    assert by_name.system.x0 == by_list.system.x0 == by_table.system.x0 == sp.Matrix([5, 2])
    assert by_name.system.t0 == 1


def test_initial_by_name_refusals() -> None:
    body = "[system]\nequations = [\"y'' = -y\"]\n"
    with pytest.raises(derive.CaseFileError) as err:
        loads_case(body + "[initial]\ny = 1\n", source="c.toml")
    assert err.value.key == "initial" and "y'" in err.value.message
    with pytest.raises(derive.CaseFileError) as err:
        loads_case(body + "[initial]\ny = 1\nvalues = [1, 0]\n")
    assert err.value.key == "initial.y" and "both" in err.value.message
    with pytest.raises(derive.CaseFileError) as err:
        loads_case(body + "[initial]\nyy = 1\n")
    assert err.value.key == "initial.yy" and "y'" in err.value.message


def test_reduction_record_is_recomputed_from_the_system() -> None:
    case = loads_case("[parameters.k]\nassume = [\"positive\"]\n[system]\nequations = [\"y'' = -k*y\"]\n")
    red = reduction_of(case.system)
    assert red is not None
    k = case.system.params[0].symbol
    y, yd = red.states
    assert red.order_by_state == (("y", 2),)
    assert red.new_states == (yd,)
    assert red.first_order_equations == ((y, yd), (yd, -k * y))
    assert red.original_equations == ("y'' = -k*y",)
    assert reduction_of(loads_case("[system]\nequations = [\"x' = -x\"]\n").system) is None


@pytest.mark.parametrize(
    ("lines", "says", "key"),
    [
        (["y'' + y = u'"], "a derivative of 'u'", "system.equations[0]"),
        (["y'' = -y", "y'' = y"], "given by two equations", "system.equations[1]"),
        (["y'' = -y + x''", "x'' = -x"], "as well as in its own", "system.equations[0]"),
        (["y''^2 = -y"], "not linear in its highest derivative", "system.equations[0]"),
        (["t*y'' = -y"], "not linear in its highest derivative", "system.equations[0]"),
        (["y'' + x'' = 0", "x' = y"], "several states", "system.equations[0]"),
        (["y'' = x'"], "x' appears but x has no equation", "system.equations"),
        (["y'' - y'' = y"], "cancels out", "system.equations[0]"),
        (["y'' = y*y'"], "not linear in the states", "system.equations[0]"),
        (["y'' = -y", "y' = 3"], "not the highest derivative of y", "system.equations[1]"),
        (["y'' = -y = 0"], "exactly one '='", "system.equations[0]"),
    ],
)
def test_irreducible_forms_are_refused(lines: list[str], says: str, key: str) -> None:
    with pytest.raises(ExpressionError) as err:
        read(lines)
    assert says in err.value.message, err.value.message
    assert err.value.key == key and err.value.file == "case.toml"


def test_parser_messages_show_derivatives_as_written() -> None:
    with pytest.raises(ExpressionError) as err:
        read(["y'' = -q*y'"])
    assert "'q'" in err.value.message and "y'" in err.value.message
    assert "_d1" not in err.value.message and "_d2" not in str(err.value)


def test_state_count_limit_covers_the_added_states() -> None:
    with pytest.raises(LimitError):
        read(["y'''' = -y"], limits=Limits(max_dimension=3))


def test_reduce_order_names_do_not_collide_with_user_names() -> None:
    y_d1 = sp.Symbol("y_d1", real=True)
    red = reduce_order(["y'' = -y + y_d1"], symbols={"y_d1": y_d1}, t=t)
    assert red.first_order_equations[1] == (derivative_symbol("y", 1), -derivative_symbol("y", 0) + y_d1)


def test_reduction_record_of_a_case_with_a_named_input() -> None:
    case = loads_case("[inputs]\nu = \"step(t)\"\n[system]\nequations = [\"y'' + y = u(t)\", \"x' = -x\"]\n")
    red = reduction_of(case.system)
    assert red is not None and red.order_by_state == (("y", 2), ("x", 1))
    y, yd, x = red.states
    assert red.first_order_equations[1] == (yd, sp.Symbol("u", real=True) - y)
    assert red.first_order_equations[2] == (x, -x)
