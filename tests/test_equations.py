"""Equations as text -> states, A, f; every refusal names the line."""

from __future__ import annotations

import pytest
import sympy as sp

from derive.equations import parse_equations, split_equation
from derive.errors import ExpressionError, InputError, LimitError
from derive.parsing import Limits

t = sp.Symbol("t", real=True)
q = sp.Symbol("q", positive=True)
k = sp.Symbol("k", positive=True)
PARAMS = {"q": q, "k": k}


def read(lines: list[str], **kw: object):  # type: ignore[no-untyped-def]
    return parse_equations(lines, symbols=PARAMS, t=t, file="case.toml", **kw)


def test_two_zone_heat_balance() -> None:
    states, A, f, notices = read(["T1' = -(T1 - T2)/5 + q/2", "T2' = (T1 - T2)/8 - T2/8"])
    T1, T2 = states
    assert [s.name for s in states] == ["T1", "T2"]
    assert all(s.is_real for s in states)
    assert A == sp.Matrix([[sp.Rational(-1, 5), sp.Rational(1, 5)], [sp.Rational(1, 8), sp.Rational(-1, 4)]])
    assert f == sp.Matrix([q / 2, 0])
    assert isinstance(A, sp.ImmutableMatrix) and isinstance(f, sp.ImmutableMatrix)
    assert notices == ()


def test_leibniz_form_and_other_t_name() -> None:
    tau = sp.Symbol("tau", real=True)
    states, A, f, _ = parse_equations(
        ["dx/dtau = -k x + exp(-tau)", "d y / d tau = x - y"], symbols=PARAMS, t=tau
    )
    x, y = states
    assert A == sp.Matrix([[-k, 0], [1, -1]])
    assert f == sp.Matrix([sp.exp(-tau), 0])


def test_state_order_is_left_side_order() -> None:
    states, A, _, _ = read(["b' = a", "a' = -b"])
    assert [s.name for s in states] == ["b", "a"]
    assert A == sp.Matrix([[0, 1], [-1, 0]])


def test_forcing_with_states_and_t_mixed() -> None:
    states, A, f, _ = read(["x' = k*(t - x) + step(t - 1)"])
    assert A == sp.Matrix([[-k]])
    assert sp.simplify(f[0] - (k * t + sp.Heaviside(t - 1))) == 0


def test_float_notice_names_the_line() -> None:
    _, A, _, notices = read(["x' = -0.5 x"])
    assert A == sp.Matrix([[sp.Rational(-1, 2)]])
    assert notices == ("system.equations[0]: 0.5 read as the exact value 1/2",)


def test_existing_state_symbol_is_reused() -> None:
    x = sp.Symbol("x", positive=True)
    states, _, _, _ = parse_equations(["x' = -x"], symbols={"x": x}, t=t)
    assert states == (x,)


def test_split_equation() -> None:
    assert split_equation("x' = -x", t_name="t") == ("x", "-x")
    assert split_equation("x = -x", t_name="t") is None
    assert split_equation("dx/ds = 1", t_name="t") is None


# --- refusals ---------------------------------------------------------------

REFUSALS = [
    (["T1 = -T1"], 0, "not a derivative"),
    (["T1' -T1"], 0, "exactly one '='"),
    (["T1' == -T1"], 0, "exactly one '='"),
    (["x' = -x", "x' = x"], 1, "duplicate state 'x'"),
    (["x' = -x + y"], 0, "'y' appears on the right side of equation 1 (x') but has no equation"),
    (["x' = -x", "y' = z"], 1, "has no equation of its own"),
    (["x' = x*y", "y' = -y"], 0, "not linear in the states"),
    (["x' = x^2"], 0, "not linear in the states"),
    (["x' = sin(x)"], 0, "not linear in the states"),
    (["x' = abs(x)"], 0, "not linear in the states"),
    (["x' = 1/x"], 0, "not linear in the states"),
    (["x' = -x", "y' = t*x - y"], 1, "A must be constant: the coefficient of x in equation 2 (y') depends on t"),
    (["x' = -step(t-1) x"], 0, "not a constant-coefficient system"),
    (["x' = -x + y'", "y' = x"], 0, "a derivative (y') appears on the right side"),
    (["x' = -x + dy/dt", "y' = x"], 0, "a derivative (dy/dt) appears on the right side"),
    (["exp' = 1"], 0, "reserved"),
    (["t' = 1"], 0, "independent variable"),
    (["x' = __import__('os')"], 0, "double underscores"),
]


@pytest.mark.parametrize(("lines", "index", "needle"), REFUSALS)
def test_refusals(lines: list[str], index: int, needle: str) -> None:
    with pytest.raises(ExpressionError) as info:
        read(lines)
    err = info.value
    assert needle in err.message
    assert err.key == f"system.equations[{index}]"
    assert err.file == "case.toml"
    assert err.exit_code == 2


def test_nonlinear_message_says_which_state() -> None:
    with pytest.raises(ExpressionError) as info:
        read(["x' = x*y", "y' = -y"])
    assert "coefficient of x is y" in info.value.message


def test_undeclared_parameter_hint() -> None:
    with pytest.raises(ExpressionError) as info:
        read(["x' = -kk x"])
    assert info.value.hint is not None and "'k'" in info.value.hint


@pytest.mark.parametrize("bad", ["x' = -x", [], [3]])
def test_wrong_shapes(bad: object) -> None:
    with pytest.raises(InputError):
        parse_equations(bad, symbols={}, t=t)  # type: ignore[arg-type]


def test_too_many_equations() -> None:
    lines = [f"x{i}' = -x{i}" for i in range(4)]
    with pytest.raises(LimitError, match="limit of 3"):
        parse_equations(lines, symbols={}, t=t, limits=Limits(max_dimension=3))


def test_limit_inside_an_equation() -> None:
    with pytest.raises(LimitError) as info:
        read(["x' = -x", "y' = 9^9^9^9"])
    assert info.value.key == "system.equations[1]"
