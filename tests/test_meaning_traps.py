"""Meaning traps: inputs that parse but would not mean what the user wrote.

Each row is a case file (and, for relations, a ``--case`` option) run through
``derive solve``.  Every one must end with exit code 2, a message naming the
file and the key, a hint that says what to write instead, and nothing in the
output folder.  The last tests check the readings that must stay accepted
(implied products such as ``2t`` and ``3 sin(t)``) against the exact values.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

import pytest
import sympy as sp
from click.testing import CliRunner

from derive.casefile import loads_case
from derive.cli import cli


@dataclass(frozen=True)
class Trap:
    id: str
    text: str  # the case file
    key: str  # the key the message must name
    says: str  # what the message must say
    hint: str  # what the user is told to write
    case: tuple[str, ...] = ()  # --case relations
    names_file: bool = True


def eqs(*lines: str, params: str = "") -> str:
    quoted = ", ".join('"' + line.replace('"', '\\"') + '"' for line in lines)
    return f"{params}[system]\nequations = [{quoted}]\n"


def forced(*entries: str, params: str = "", matrix: str = "[[-1]]", extra: str = "") -> str:
    quoted = ", ".join(f'"{e}"' for e in entries)
    return f"{params}[system]\n{extra}matrix = {matrix}\nforcing = [{quoted}]\n"


def param(*names: str, assume: str = "") -> str:
    body = f"assume = [\"{assume}\"]\n" if assume else ""
    return "".join(f"[parameters.{n}]\n{body}" for n in names)


SPRING = param("m", "c", "k", assume="positive") + eqs("x' = v", "v' = -(k*x + c*v)/m") + "[initial]\nvalues = [1, 0]\n"
EQ0, F0 = "system.equations[0]", "system.forcing[0]"

TRAPS: tuple[Trap, ...] = (
    # -- a declared name followed by "(" is a call, not a product
    Trap("input-as-call", eqs("v' = (u(t) - v)/2", params=param("u")), EQ0, "reads as a function of t", "write u for a constant input"),
    Trap("state-as-call", eqs("x1' = -x1(t)"), EQ0, "writes the state x1 as a call", "write the state as x1"),
    Trap("delayed-input", eqs("x' = -x + h(t - 1)", params=param("h")), EQ0, "a product h*(t - 1) is not assumed", "write h*(t - 1) for a product"),
    Trap("delayed-state", eqs("x' = -x(t - 1)"), EQ0, "delay differential equation", "write x for the state at the current time"),
    Trap("call-in-product", eqs("x' = -x + 2k(t+1)", params=param("k")), EQ0, "not assumed", "write k*(t+1) for a product"),
    Trap("forcing-call", forced("F0(t)", params=param("F0")), F0, "F0 is a parameter", "write F0 for a constant input"),
    Trap("constant-e-call", forced("e(t)"), F0, "the constant e", "exp(t) for the exponential"),
    # -- switching helpers with arguments that mean nothing or something else
    # -- an imaginary unit in a case file: refused with where complex data are accepted
    Trap("imaginary-unit", forced("0", matrix='[["I", 1], [0, -1]]').replace('forcing = ["0"]\n', ""), "system.matrix[0][0]",
         "unknown name 'I'", "accepted through the Python interface"),
    Trap("reversed-pulse", forced("pulse(t, 3, 1)"), F0, "comes before its start", "pulse(t, 1, 3)"),
    Trap("empty-pulse", forced("pulse(t, 2, 2)"), F0, "ends where it starts", "start a before the end b"),
    Trap("unordered-pulse", forced("pulse(t, a, b)", params=param("a", "b")), F0, "cannot be decided", "positive"),
    Trap("impulse-of-constant", forced("impulse(2)"), F0, "zero time scale", "impulse(t - a)"),
    Trap("step-of-parameter", forced("step(T)", params=param("T")), F0, "does not depend on t", "step(t - a)"),
    Trap("step-three-arguments", forced("step(t, 1, 2)"), F0, "found 3", "step(t - a) or step(t, a)"),
    Trap("ramp-no-argument", forced("ramp()"), F0, "found 0", "ramp(t - a)"),
    # -- states where the matrix form expects coefficients or inputs
    Trap("state-in-forcing", forced("x1", "0", matrix="[[-1, 0], [0, -2]]"), F0, "'x1' is a state", "system.matrix[i][0]"),
    Trap("state-in-matrix", "[system]\nstates = [\"p\", \"q\"]\nmatrix = [[\"-p\", 0], [1, -1]]\n", "system.matrix[0][0]", "coefficient of a state", "system.matrix[i][0]"),
    Trap("state-in-initial", eqs("x' = -x", "y' = x") + "[initial]\nvalues = [\"y\", 0]\n", "initial.values[0]", "names the state 'y'", "initial.values = [1, 0]"),
    # -- the independent variable renamed, derivatives of other orders
    Trap("renamed-time-equation", "[system]\nt = \"tau\"\nequations = [\"x' = -x + t\"]\n", EQ0, "'tau' (system.t)", "write tau instead of t"),
    Trap("renamed-time-forcing", forced("sin(t)", extra="t = \"s\"\n"), F0, "'s' (system.t)", "write s instead of t"),
    Trap("renamed-time-leibniz", "[system]\nt = \"tau\"\nequations = [\"dx/dt = -x\"]\n", EQ0, "not a derivative", "not 't': write dx/dtau"),
    # -- equations of higher order that cannot be reduced to first order
    Trap("derivative-of-input", eqs("y'' + y = u'", params=param("u")), EQ0, "a derivative of 'u'", "give it an equation of its own"),
    Trap("highest-not-linear", eqs("y*y'' = -y"), EQ0, "not linear in its highest derivative", "times a constant"),
    Trap("highest-twice", eqs("y'' = -y + x''", "x'' = -x"), EQ0, "as well as in its own", "substitute the right side of x's equation"),
    Trap("two-equations-one-state", eqs("y'' = -y", "d2y/dt2 = y"), "system.equations[1]", "given by two equations", "give y one equation"),
    Trap("dot-notation", eqs("xdot = -x"), EQ0, "not a derivative", "write the derivative of x as x'"),
    Trap("factor-on-left", eqs("2x' = -x"), EQ0, "not a derivative", "divide by the factor on the left"),
    # -- reserved names
    Trap("parameter-lambda", "[parameters.lambda]\n[system]\nmatrix = [[\"-lambda\"]]\n", "parameters.lambda", "reserved", "'lam'"),
    Trap("parameter-exp", "[parameters.exp]\n[system]\nmatrix = [[-1]]\n", "parameters.exp", "the function exp(x)", "'exp1'"),
    Trap("state-pi", "[system]\nstates = [\"pi\"]\nmatrix = [[-1]]\n", "system.states[0]", "the constant pi", "'p0'"),
    Trap("state-if", eqs("if' = -if"), EQ0, "reserved", "choose another name"),
    # -- readings that go two ways, and typing habits from other tools
    Trap("divide-then-juxtapose", eqs("x' = -x/2T", params=param("T")), EQ0, "reads two ways", "x/(2*T)"),
    Trap("unbracketed-exponent", forced("e^-2t"), F0, "reads two ways", "^(-2*t)"),
    Trap("scientific-glued", forced("3e-2t"), F0, "reads two ways", "3*e^(-2*t) for the exponential"),
    Trap("e-minus-glued", forced("5e-t"), F0, "reads two ways", "5*e^(-t)"),
    Trap("decimal-comma", eqs("x' = -x + 3,5"), EQ0, "a tuple", "(3.5)"),
    Trap("unicode-minus", eqs("x' = \u2212x"), EQ0, "U+2212", "the ASCII minus"),
    Trap("superscript-two", forced("t\u00b2"), F0, "U+00B2", "^2"),
    Trap("power-of-function", forced("sin^2(t)"), F0, "a power of a function", "sin(t)^2"),
    Trap("function-without-brackets", forced("5 sin t"), F0, "needs its argument in parentheses", "sin(t)"),
    Trap("exp-as-constant", forced("exp^(-t)"), F0, "exp is a function", "exp(-t) or e^(-t)"),
    Trap("names-run-together", eqs("x' = -x/RC", params=param("R", "C")), EQ0, "read as one name", "R*C"),
    Trap("absolute-bars", forced("|t|"), F0, "not an operator", "abs(x)"),
    Trap("percent-sign", forced("5%"), F0, "not an operator", "5/100"),
    # -- case-file shapes
    Trap("parameter-not-a-table", "[parameters]\nk = 2\n[system]\nmatrix = [[\"-k\"]]\n", "parameters.k", "expected a table", "value = 2"),
    Trap("equations-not-a-list", "[system]\nequations = \"x' = -x\"\n", "system.equations", "a string", "put it in brackets"),
    # -- relations and regimes that the assumptions rule out (the file is
    # named once the command line fills it in; see the input branch report)
    Trap("relation-zero-mass", SPRING, "--case[0]", "m = 0 is never positive", "assume list", ("m = 0",)),
    Trap("relation-negative-square", SPRING, "--case[0]", "contradicts the parameters' assumptions", "check the relation's signs", ("c^2 = -4*k*m",)),
    Trap("regime-never", SPRING, "--case[0]", "can never hold", "direction", ("c^2 + 4*k*m < 0",)),
    Trap("relation-without-parameter", SPRING, "--case[0]", "never holds", "ties parameters together", ("1 = 2",)),
)


def test_the_corpus_is_large_and_ids_are_unique() -> None:
    assert len(TRAPS) >= 30
    assert len({t.id for t in TRAPS}) == len(TRAPS)


@pytest.mark.parametrize("trap", TRAPS, ids=[t.id for t in TRAPS])
def test_trap_is_refused_with_file_key_and_hint(trap: Trap, tmp_path: Path) -> None:
    path = tmp_path / "trap.toml"
    path.write_text(trap.text, encoding="utf-8")
    out = tmp_path / "out"
    args = ["solve", str(path), "-o", str(out), "--no-pdf", "--timeout", "60"]
    for relation in trap.case:
        args += ["--case", relation]
    res = CliRunner().invoke(cli, args)
    err = res.stderr
    assert res.exit_code == 2, res.output
    assert "internal error" not in err and "Traceback" not in err
    assert f"{trap.key}: " in err, err
    if trap.names_file:
        assert f"{path}: {trap.key}" in err or f"{path}:" in err.split(trap.key)[0], err
    assert trap.says in err, err
    assert "hint:" in err and trap.hint in err.split("hint:", 1)[1], err
    assert not out.exists() or not any(out.iterdir())


t = sp.Symbol("t", real=True)
a, b, c, d, k = (sp.Symbol(n, real=True) for n in "abcdk")

#: Implied products that stay accepted, with the exact forcing they must give.
ACCEPTED: tuple[tuple[str, sp.Expr], ...] = (
    ("2t", 2 * t),
    ("3 sin(t)", 3 * sp.sin(t)),
    ("2(t+1)", 2 * (t + 1)),
    ("(a+b)(c+d)", (a + b) * (c + d)),
    ("k*(t + 1)", k * (t + 1)),
    ("k (t + 1)", k * (t + 1)),  # a space before "(": a product, as typeset
    ("t^2 sin(t)", t**2 * sp.sin(t)),
    ("e^(-2t)", sp.exp(-2 * t)),
    ("e^(-2)*t", sp.exp(-2) * t),
    ("(a/2)*t", a * t / 2),
    ("a/(2t + 1)", a / (2 * t + 1)),
    ("2 pi t", 2 * sp.pi * t),
    ("3e-2*t", sp.Rational(3, 100) * t),
    ("5e - t", 5 * sp.E - t),
    ("pulse(t, 1, 3)", sp.Heaviside(t - 1) - sp.Heaviside(t - 3)),
)


@pytest.mark.parametrize(("text", "expected"), ACCEPTED, ids=[x for x, _ in ACCEPTED])
def test_unambiguous_products_keep_their_reading(text: str, expected: sp.Expr) -> None:
    case = loads_case(forced(text, params=param("a", "b", "c", "d", "k")), name="ok", source="ok.toml")
    assert sp.simplify(case.system.f[0] - expected) == 0
