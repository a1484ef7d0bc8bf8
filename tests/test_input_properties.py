"""Property tests of the input layer: any text gives a result or a DeriveError.

Generated expression strings (with states and the independent variable
known, so the call and helper checks run), generated case files (valid
skeletons with random keys, random TOML types and random expressions),
mutated valid case files, equation lists and parameter relations.  Whatever
comes in, what comes out is a ``Case`` / an expression, or a ``DeriveError``
with exit code 2 that names a key or the file; never any other exception.
"""

from __future__ import annotations

import datetime as dt
import json
import math
import os
from typing import Any

import sympy as sp
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from derive.casefile import loads_case
from derive.equations import parse_equations
from derive.errors import DeriveError
from derive.model import Case
from derive.parsing import parse_expression
from derive.relations import parse_relations, split_assumptions

# About a minute in CI on a shared machine; raise it to hunt (DERIVE_PROPERTY_EXAMPLES=3000).
EXAMPLES = int(os.environ.get("DERIVE_PROPERTY_EXAMPLES", "150"))
FAST = settings(max_examples=EXAMPLES, deadline=None, suppress_health_check=[HealthCheck.too_slow])

t = sp.Symbol("t", real=True)
x = sp.Symbol("x", real=True)
k = sp.Symbol("k", positive=True)
m = sp.Symbol("m", positive=True)
c = sp.Symbol("c", real=True)
TABLE = {"t": t, "x": x, "k": k, "m": m, "c": c}

PIECES = st.sampled_from(
    [
        "x", "k", "m", "c", "t", "u", "e", "pi", "2", "0", "1.5", "3e2", "10" * 30, "1e999",
        "+", "-", "*", "/", "^", "**", "(", ")", ",", " ", "'", "%", "|", "!", "=", "<",
        "sin", "exp", "step", "ramp", "pulse", "impulse", "delta", "sqrt", "log", "lambda", "if",
        "\u2212", "\u00b2", "\u03bb", "\u00a0", "__class__", ".", "[", "]", "{", "}", ";", "#",
    ]
)
SOUP = st.lists(PIECES, max_size=18).map("".join)


def _expected_failure(err: DeriveError) -> None:
    assert err.exit_code == 2
    assert err.key or err.file, err
    assert str(err)


@FAST
@given(SOUP)
def test_expressions_with_roles_give_an_expression_or_a_derive_error(text: str) -> None:
    try:
        expr, notices = parse_expression(text, symbols=TABLE, key="system.forcing[0]", states=("x",), t=t)
    except DeriveError as err:
        _expected_failure(err)
    else:
        assert isinstance(expr, sp.Expr) and isinstance(notices, tuple)


@FAST
@given(st.lists(st.one_of(SOUP.map(lambda r: "x' = " + r), SOUP, st.integers(), st.none()), min_size=0, max_size=3))
def test_equation_lists_give_a_system_or_a_derive_error(lines: list[Any]) -> None:
    try:
        states, A, f, _ = parse_equations(lines, symbols={"k": k, "m": m}, t=t)
    except DeriveError as err:
        _expected_failure(err)
    else:
        assert A.shape == (len(states), len(states)) and f.shape == (len(states), 1)


# Relations: short polynomial texts, so sympy's solver stays quick.
REL_PIECES = st.sampled_from(["k", "m", "c", "2", "4", "0", "+", "-", "*", "^", "(", ")", "=", "<", ">", "sqrt("])


@FAST
@given(st.lists(st.lists(REL_PIECES, max_size=9).map("".join), max_size=2))
def test_relations_give_substitutions_or_a_derive_error(items: list[str]) -> None:
    try:
        rest, regimes = split_assumptions(items, symbols={"k": k, "m": m, "c": c})
        relations = parse_relations(rest, symbols={"k": k, "m": m, "c": c})
    except DeriveError as err:
        _expected_failure(err)
    else:
        assert all(isinstance(s, sp.Symbol) and not v.has(s) for s, v in relations)
        assert all(sign in (-1, 1) for _, sign in regimes)


# ---------------------------------------------------------------------------
# Case files
# ---------------------------------------------------------------------------


def toml_value(value: Any) -> str:
    """A TOML literal for the generated values (inline tables and arrays)."""
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, int):
        return str(value)
    if isinstance(value, float):
        if math.isnan(value):
            return "nan"
        if math.isinf(value):
            return "inf" if value > 0 else "-inf"
        return repr(value)
    if isinstance(value, str):
        return json.dumps(value)  # JSON string escapes are valid TOML
    if isinstance(value, dt.date):
        return value.isoformat()
    if isinstance(value, list):
        return "[" + ", ".join(toml_value(v) for v in value) + "]"
    if isinstance(value, dict):
        return "{" + ", ".join(f"{json.dumps(str(k_))} = {toml_value(v)}" for k_, v in value.items()) + "}"
    raise TypeError(type(value))


def toml_document(data: dict[str, Any]) -> str:
    lines = []
    for name, value in data.items():
        if isinstance(value, dict):
            lines.append(f"[{json.dumps(name)}]")
            lines.extend(f"{json.dumps(str(k_))} = {toml_value(v)}" for k_, v in value.items())
        else:
            lines.insert(0, f"{json.dumps(name)} = {toml_value(value)}")
    return "\n".join(lines) + "\n"


SCALARS = st.one_of(
    SOUP,
    st.sampled_from(["-k", "1/2", "sin(t)", "x1", "k*t", "pulse(t, 1, 2)", "u(t)", "-1", "0.25", "x1' = -x1"]),
    st.integers(min_value=-(10**50), max_value=10**50),
    st.floats(allow_nan=True, allow_infinity=True),
    st.booleans(),
    st.dates(min_value=dt.date(2000, 1, 1), max_value=dt.date(2030, 1, 1)),
)
TABLE_KEYS = st.sampled_from(["value", "assume", "piecewise", "x1", "junk"])
VALUES = st.recursive(
    SCALARS,
    lambda inner: st.one_of(st.lists(inner, max_size=3), st.dictionaries(TABLE_KEYS, inner, max_size=2)),
    max_leaves=8,
)
ASSUMED = st.sampled_from(["positive", "real", "negative", "big"])
KEYS = {
    "sheet": ["title", "project", "date", "states", "assumptions"],
    "system": ["t", "states", "forcing", "forcing", "equations"],
    "initial": ["t0", "values", "values"],
}
TYPOS = {"sheet": "titel", "system": "matrx", "initial": "value"}


@st.composite
def case_documents(draw: st.DrawFn) -> str:
    n = draw(st.integers(min_value=1, max_value=3))
    matrix = [[draw(st.sampled_from(["-1", "k", "0", "-m", "1/2"])) for _ in range(n)] for _ in range(n)]
    data: dict[str, Any] = {"system": {"matrix": matrix}}
    for table, keys in KEYS.items():
        for key in draw(st.lists(st.sampled_from(keys), max_size=3, unique=True)):
            data.setdefault(table, {})[key] = draw(VALUES)
        if draw(st.integers(min_value=0, max_value=9)) == 7:
            data.setdefault(table, {})[TYPOS[table]] = draw(VALUES)
    for name in draw(st.lists(st.sampled_from(["k", "m", "exp", "x1", "t", "a b"]), max_size=2, unique=True)):
        data.setdefault("parameters", {})[name] = draw(
            st.one_of(VALUES, st.fixed_dictionaries({"assume": st.lists(ASSUMED, max_size=2)}))
        )
    if draw(st.integers(min_value=0, max_value=9)) == 7:
        data["junk"] = draw(VALUES)
    return toml_document(data)


def _loads(text: str) -> None:
    try:
        case = loads_case(text, name="gen", source="gen.toml")
    except DeriveError as err:
        _expected_failure(err)
        assert err.file == "gen.toml"
    else:
        assert isinstance(case, Case)


@FAST
@given(case_documents())
def test_generated_case_files_give_a_case_or_a_derive_error(text: str) -> None:
    _loads(text)


VALID = """\
[sheet]
title = "Two tanks"
[parameters.k]
assume = ["positive"]
value = 2
[system]
equations = ["h1' = -k*h1 + pulse(t, 1, 3)", "h2' = k*h1 - h2/2"]
[initial]
values = [1, "1/3"]
"""


@FAST
@given(st.data())
def test_mutated_valid_case_files_give_a_case_or_a_derive_error(data: st.DataObject) -> None:
    text = VALID
    for _ in range(data.draw(st.integers(min_value=1, max_value=4))):
        at = data.draw(st.integers(min_value=0, max_value=len(text)))
        kind = data.draw(st.sampled_from(["delete", "insert", "truncate", "duplicate"]))
        if kind == "delete":
            text = text[:at] + text[at + 1 :]
        elif kind == "insert":
            text = text[:at] + data.draw(st.one_of(PIECES, st.characters())) + text[at:]
        elif kind == "truncate":
            text = text[:at]
        else:
            text = text[:at] + text[at : at + 12] + text[at:]
    _loads(text)


def test_the_valid_case_loads() -> None:
    case = loads_case(VALID, name="tanks", source="tanks.toml")
    assert case.system.A.shape == (2, 2)
