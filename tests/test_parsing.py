"""The safe expression parser: accepted grammar, refused constructs, limits."""

from __future__ import annotations

import pytest
import sympy as sp
from hypothesis import given, settings
from hypothesis import strategies as st

from derive.errors import DeriveError, ExpressionError, LimitError
from derive.parsing import (
    DEFAULT_LIMITS,
    FUNCTIONS,
    Limits,
    expression_names,
    name_problem,
    parse_expression,
)

t = sp.Symbol("t", real=True)
a = sp.Symbol("a", real=True)
b = sp.Symbol("b", real=True)
k = sp.Symbol("k", positive=True)
SYMBOLS = {"t": t, "a": a, "b": b, "k": k}


def parse(text: str | int | float, **kw: object) -> sp.Expr:
    return parse_expression(text, symbols=SYMBOLS, **kw)[0]


# --- accepted grammar -------------------------------------------------------

ACCEPTED = [
    ("2t", 2 * t),
    ("3 sin(t)", 3 * sp.sin(t)),
    ("2(t+1)", 2 * (t + 1)),
    ("(a+b)(a-b)", (a + b) * (a - b)),
    ("2 pi", 2 * sp.pi),
    ("2 pi t", 2 * sp.pi * t),
    ("a b", a * b),
    ("k*(t - 1)", k * (t - 1)),
    ("k*(t - 1)(t + 1)", k * (t - 1) * (t + 1)),
    ("k (t - 1)", k * (t - 1)),  # a space before "(": a product, as typeset
    ("(t+1)t", (t + 1) * t),
    ("t^2", t**2),
    ("t**2", t**2),
    ("2^3^2", sp.Integer(2) ** 9),  # right-associative like the written power
    ("-t^2", -(t**2)),
    ("--t", t),
    ("+t", t),
    ("-(a - b)", b - a),
    ("1/(2k)", 1 / (2 * k)),
    ("e^(-t/2)", sp.exp(-t / 2)),
    ("e", sp.E),
    ("pi", sp.pi),
    ("exp(-2t)", sp.exp(-2 * t)),
    ("cos(3t) + sinh(t) - cosh(t) + tanh(t) + tan(t)", sp.cos(3 * t) + sp.sinh(t) - sp.cosh(t) + sp.tanh(t) + sp.tan(t)),
    ("sqrt(k)", sp.sqrt(k)),
    ("log(k) + ln(k)", 2 * sp.log(k)),
    ("abs(t)", sp.Abs(t)),
    ("step(t - 1)", sp.Heaviside(t - 1)),
    ("step(t, 2)", sp.Heaviside(t - 2)),
    ("pulse(t, 1, 3)", sp.Heaviside(t - 1) - sp.Heaviside(t - 3)),
    ("ramp(t - 2)", (t - 2) * sp.Heaviside(t - 2)),
    ("ramp(t, 2)", (t - 2) * sp.Heaviside(t - 2)),
    ("impulse(t - 1)", sp.DiracDelta(t - 1)),
    ("delta(t, 4)", sp.DiracDelta(t - 4)),
    ("t + t + t", 3 * t),
    ("  t\t+ 1 ", t + 1),
    ("2e3", sp.Integer(2000)),
    ("2e", 2 * sp.E),  # no digits after e: the constant, not an exponent
]


@pytest.mark.parametrize(("text", "expected"), ACCEPTED)
def test_accepted(text: str, expected: sp.Expr) -> None:
    got = parse(text)
    assert sp.simplify(got - expected) == 0, (text, got)


def test_float_literal_becomes_rational_with_notice() -> None:
    expr, notices = parse_expression("0.1*t", symbols=SYMBOLS, key="system.matrix[0][1]")
    assert expr == sp.Rational(1, 10) * t
    assert notices == ("system.matrix[0][1]: 0.1 read as the exact value 1/10",)


def test_scientific_literal_is_exact() -> None:
    expr, notices = parse_expression("1.5e-3", symbols={})
    assert expr == sp.Rational(3, 2000)
    assert notices == ("1.5e-3 read as the exact value 3/2000",)


def test_integer_literal_has_no_notice() -> None:
    assert parse_expression("12", symbols={}) == (sp.Integer(12), ())


@pytest.mark.parametrize(("value", "expected"), [(3, sp.Integer(3)), (0.25, sp.Rational(1, 4)), (-0.1, sp.Rational(-1, 10))])
def test_python_numbers(value: int | float, expected: sp.Expr) -> None:
    expr, notices = parse_expression(value, symbols={}, key="initial.values[0]")
    assert expr == expected and isinstance(expr, sp.Rational)
    assert bool(notices) == isinstance(value, float)
    if notices:
        assert notices[0] == f"initial.values[0]: {value!r} read as the exact value {expected}"


def test_bool_rejected() -> None:
    with pytest.raises(ExpressionError, match="boolean"):
        parse_expression(True, symbols={}, key="x")


@pytest.mark.parametrize("value", [float("inf"), float("nan")])
def test_non_finite_float_rejected(value: float) -> None:
    with pytest.raises(ExpressionError, match="finite"):
        parse_expression(value, symbols={})


def test_declared_symbol_named_e_wins() -> None:
    e = sp.Symbol("e", real=True)
    assert parse_expression("2e", symbols={"e": e})[0] == 2 * e
    pi = sp.Symbol("pi")
    assert parse_expression("pi", symbols={"pi": pi})[0] == pi


def test_result_uses_the_given_symbols() -> None:
    expr = parse("k t")
    assert expr.free_symbols == {k, t}
    assert all(s.is_real for s in expr.free_symbols)


# --- refused constructs -----------------------------------------------------

REFUSED = [
    ("().__class__", "attribute"),
    ("t.real", "attribute"),
    ("__import__('os')", "double underscores"),
    ("__class__", "double underscores"),
    ("lambda x: x", "lambda"),
    ("[x for x in t]", "comprehension"),
    ("{x for x in t}", "comprehension"),
    ("(x for x in t)", "generator"),
    ("t[0]", "indexing"),
    ("open('f')", "not an available function"),
    ("foo(t)", "not an available function"),
    ("sin(t, 2)", "takes 1 argument"),
    ("pulse(t, 1)", "takes 3 arguments"),
    ("step()", "takes 1 or 2 arguments"),
    ("exp(x=1)", "keyword arguments"),
    ("exp(*t)", "unpacking"),
    ("'text'", "string literal"),
    ("b'x'", "cannot be read"),  # the prefix is split off as a name: a syntax error
    ("f'{t}'", "cannot be read"),
    ("t < 1", "comparison"),
    ("a and b", "'and'/'or'"),
    ("not t", "'not'"),
    ("~t", "'~'"),
    ("a if b else t", "conditional"),
    ("t % 2", "remainder"),
    ("t @ t", "matrix product"),
    ("t | a", "'|'"),
    ("t, a", "tuple"),
    ("[t]", "list"),
    ("{1: 2}", "dict"),
    ("True", "not a number"),
    ("None", "not a number"),
    ("sin", "needs parentheses"),
    ("1/0", "no finite value"),
    ("log(0)", "no finite value"),
    ("sqrt(-1)", "not real"),
    ("t\u00e9", "U+00E9"),
    ("\uff45xp(t)", "not allowed"),  # fullwidth letter that NFKC would fold to 'e'
    ("", "empty"),
    ("   ", "empty"),
    ("sin t", "needs its argument in parentheses"),
    ("(t + 1", "cannot be read"),
]


@pytest.mark.parametrize(("text", "needle"), REFUSED)
def test_refused(text: str, needle: str) -> None:
    with pytest.raises(ExpressionError) as info:
        parse_expression(text, symbols=SYMBOLS, key="system.forcing[0]", file="case.toml")
    err = info.value
    assert needle in err.message
    assert err.key == "system.forcing[0]" and err.file == "case.toml"
    assert err.exit_code == 2


def test_syntax_error_gives_column() -> None:
    with pytest.raises(ExpressionError) as info:
        parse_expression("t + * 2", symbols=SYMBOLS)
    assert info.value.column == 5
    assert "column 5" in info.value.message


def test_unknown_name_suggests_nearest_and_lists_declared() -> None:
    with pytest.raises(ExpressionError) as info:
        parse_expression("kk*t", symbols=SYMBOLS, key="system.matrix[0][0]")
    err = info.value
    assert "'kk'" in err.message
    assert "a, b, k, t" in err.message
    assert err.hint is not None and "'k'" in err.hint


def test_unknown_function_suggests_nearest() -> None:
    with pytest.raises(ExpressionError) as info:
        parse("sinn(t)")
    assert info.value.hint is not None and "'sin'" in info.value.hint


def test_non_string_non_number_rejected() -> None:
    with pytest.raises(ExpressionError, match="type list"):
        parse_expression([1, 2], symbols={}, key="k")  # type: ignore[arg-type]


# --- limits -----------------------------------------------------------------

LIMITED = [
    ("9^9^9^9", "exponent"),
    ("10**10**10", "exponent"),
    ("2^201", "exponent"),
    ("t^(-201)", "exponent"),
    ("(t^200)^2", "combined exponent"),
    ("((t^20)^20)^20", "combined exponent"),
    ("t" + "*t" * 250, "combined exponent"),
    ("(10^40)^30", "digits"),
    ("1" * 41, "digits"),
    ("1." + "0" * 45, "digits"),
    ("1e999999", "decimal exponent"),
    ("(" * 41 + "t" + ")" * 41, "nested"),
    ("-" * 50 + "t", "nested"),
    ("sin(" * 41 + "t" + ")" * 41, "nested"),
    ("t" * 2001, "characters"),
    ("exp(10^40 log(2))", "exp of a logarithm"),
    ("e^(10^8 ln(2))", "exp of a logarithm"),
    ("2^(10^5 log(3)/log(2))", "exponent"),
    ("sqrt(10^50 + 1)", "root"),
    ("(10^60 + 7)^(1/3)", "root"),
]


@pytest.mark.parametrize(("text", "needle"), LIMITED, ids=[x[:20] for x, _ in LIMITED])
def test_limits(text: str, needle: str) -> None:
    with pytest.raises(LimitError) as info:
        parse_expression(text, symbols=SYMBOLS, key="system.forcing[1]")
    assert needle in info.value.message
    assert info.value.key == "system.forcing[1]"


def test_just_inside_the_limits() -> None:
    assert parse("2^200") == sp.Integer(2) ** 200
    assert parse("t^200") == t**200
    assert parse("1" * 40) == sp.Integer("1" * 40)
    assert parse("(" * 40 + "t" + ")" * 40) == t
    assert parse("e^(-300)") == sp.exp(-300)  # e^x is exp(x): no power is computed


def test_long_sums_are_not_deep_nesting() -> None:
    # 600 terms: flattening keeps the depth limit about parentheses and powers.
    assert parse("+".join(["t"] * 600)) == 600 * t


def test_custom_limits() -> None:
    tight = Limits(max_length=10, max_exponent=3)
    with pytest.raises(LimitError):
        parse_expression("t^4", symbols=SYMBOLS, limits=tight)
    with pytest.raises(LimitError):
        parse_expression("t + t + t + t", symbols=SYMBOLS, limits=tight)
    assert parse_expression("t^3", symbols=SYMBOLS, limits=tight)[0] == t**3


def test_huge_python_int_rejected() -> None:
    with pytest.raises(LimitError, match="digits"):
        parse_expression(10**60, symbols={}, key="initial.values[0]")


# --- helpers ----------------------------------------------------------------


def test_expression_names() -> None:
    assert expression_names("3 sin(w t) + k*x") == ("w", "t", "k", "x")
    assert expression_names(3) == ()


@pytest.mark.parametrize(("name", "ok"), [("T1", True), ("x_2", True), ("exp", False), ("pi", False), ("e", False), ("lambda", False), ("1x", False), ("_x", False), ("a-b", False)])
def test_name_problem(name: str, ok: bool) -> None:
    assert (name_problem(name) is None) == ok


def test_function_table_is_fixed() -> None:
    assert {"exp", "sin", "cos", "step", "pulse", "ramp", "impulse", "delta"} <= set(FUNCTIONS)
    with pytest.raises(TypeError):
        FUNCTIONS["eval"] = FUNCTIONS["exp"]  # type: ignore[index]


# --- property: nothing but DeriveError ever leaves --------------------------

TOKENS = st.sampled_from(
    ["(", ")", "^", "*", "**", "+", "-", "/", ",", ".", "0", "1", "9", "2.5", "1e3", "e", "pi", "t", "a", "k",
     "sin", "exp", "sqrt", "log", "step", "pulse", ".__class__", "__import__", "lambda", "[", "]", "'", "x", " "]
)


def _only_derive_errors(text: str) -> None:
    try:
        expr, notices = parse_expression(text, symbols=SYMBOLS, key="k")
    except DeriveError as err:
        assert err.exit_code == 2
        assert err.key == "k"
    else:
        assert isinstance(expr, sp.Basic)
        assert isinstance(notices, tuple)


@settings(max_examples=300, deadline=None)
@given(st.text(max_size=60))
def test_random_text_only_raises_derive_errors(text: str) -> None:
    _only_derive_errors(text)


@settings(max_examples=400, deadline=None)
@given(st.lists(TOKENS, max_size=25).map("".join))
def test_random_token_soup_only_raises_derive_errors(text: str) -> None:
    _only_derive_errors(text)


def test_default_limits_values() -> None:
    assert (DEFAULT_LIMITS.max_length, DEFAULT_LIMITS.max_depth, DEFAULT_LIMITS.max_int_digits,
            DEFAULT_LIMITS.max_exponent, DEFAULT_LIMITS.max_dimension) == (2000, 40, 40, 200, 12)


# --- a declared name followed by "(" is a call, never an implied product ------

VALUE_CALLS = [
    ("k(t - 1)", "k is a declared name", "write k*(t - 1) for a product"),
    ("2 a(b)", "a is a declared name", "write a*b for a product"),
    ("e(t)", "the constant e", "exp(t) for the exponential"),
    ("pi(t + 1)", "the constant pi", "write pi*(t + 1) for a product"),
]


@pytest.mark.parametrize(("text", "message", "hint"), VALUE_CALLS)
def test_declared_name_before_parenthesis_is_refused(text: str, message: str, hint: str) -> None:
    with pytest.raises(ExpressionError) as info:
        parse_expression(text, symbols=SYMBOLS, key="system.forcing[0]", file="c.toml")
    err = info.value
    assert message in err.message and hint in (err.hint or "")
    assert err.key == "system.forcing[0]" and err.file == "c.toml" and err.column is not None


def test_roles_sharpen_the_call_messages() -> None:
    x = sp.Symbol("x", real=True)
    table = {**SYMBOLS, "x": x}
    with pytest.raises(ExpressionError) as state:
        parse_expression("-x(t)", symbols=table, states=("x",), t=t)
    assert state.value.hint == "write the state as x (it stands for x(t))"
    with pytest.raises(ExpressionError) as delay:
        parse_expression("-x(t - 1)", symbols=table, states=("x",), t=t)
    assert "delay differential equation" in delay.value.message and delay.value.column == 2
    with pytest.raises(ExpressionError) as call:
        parse_expression("(k(t) - x)/2", symbols=table, states=("x",), t=t)
    assert "write k for a constant input" in (call.value.hint or "") and call.value.column == 2
    with pytest.raises(ExpressionError) as time:
        parse_expression("t(t + 1)", symbols=table, t=t)
    assert "independent variable" in time.value.message


def test_a_renamed_time_variable_is_named_when_t_is_used() -> None:
    tau = sp.Symbol("tau", real=True)
    with pytest.raises(ExpressionError) as info:
        parse_expression("sin(t)", symbols={"tau": tau}, t=tau, key="system.forcing[0]")
    assert "'tau' (system.t)" in info.value.message and "write tau instead of t" in (info.value.hint or "")


# --- switching helpers: arguments that are well-formed but mean nothing -------

HELPER_ARGS = [
    ("pulse(t, 3, 1)", 13, "comes before its start", "pulse(t, 1, 3)"),
    ("pulse(t, 2, 2)", 13, "ends where it starts", "start a before the end b"),
    ("pulse(t, a, b)", 13, "cannot be decided", "positive"),
    ("pulse(t, k, k - 1)", 13, "comes before its start", "pulse(t, k - 1, k)"),
    ("impulse(0*t)", 9, "zero time scale", "impulse(t - a)"),
    ("delta(t, t)", 7, "zero time scale", "impulse(t - a)"),
    ("step(k)", 6, "does not depend on t", "step(t - a)"),
    ("ramp(a, 1)", 6, "does not depend on t", "ramp(t - a)"),
    ("pulse(a, 1, 2)", 7, "does not depend on t", "pulse(t, a, b)"),
]


@pytest.mark.parametrize(("text", "column", "message", "hint"), HELPER_ARGS)
def test_helper_arguments_are_checked(text: str, column: int, message: str, hint: str) -> None:
    with pytest.raises(ExpressionError) as info:
        parse_expression(text, symbols=SYMBOLS, t=t, key="system.forcing[1]")
    err = info.value
    assert message in err.message and hint in (err.hint or ""), (err.message, err.hint)
    assert err.column == column and err.key == "system.forcing[1]"


def test_pulse_with_an_ordered_symbolic_end_is_accepted() -> None:
    w = sp.Symbol("w", positive=True)
    expr, _ = parse_expression("pulse(t, a, a + w)", symbols={**SYMBOLS, "w": w}, t=t)
    assert expr == sp.Heaviside(t - a) - sp.Heaviside(t - a - w)


def test_a_switch_whose_time_is_in_the_second_argument_is_accepted() -> None:
    # step(1, t) = H(1 - t): on until t = 1, then off
    assert parse_expression("step(1, t)", symbols=SYMBOLS, t=t)[0] == sp.Heaviside(1 - t)
    with pytest.raises(ExpressionError, match="sign of 0"):
        parse_expression("step(t, t)", symbols=SYMBOLS, t=t)
