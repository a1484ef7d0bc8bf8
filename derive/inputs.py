"""Named inputs: ``[inputs] u = "step(t)"`` -> a formula in t that the equations call ``u``.

The equations and the forcing are read with each input as a symbol (and
``u(t)`` accepted for it); the formula is then put in its place, so the
system the solver sees is x' = A x + f(t) with the inputs written out.  An
input may not multiply a state: that would make A depend on time.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass

import sympy as sp

from .errors import CaseFileError
from .names import name_problem, suggest_name
from .parsing import DEFAULT_LIMITS, Limits, parse_expression
from .valuetext import show, type_name

__all__ = ["Input", "read_inputs", "substitute_inputs", "input_notices"]


@dataclass(frozen=True)
class Input:
    """One named input: its symbol in the equations, its formula in t and the text as written."""

    symbol: sp.Symbol
    formula: sp.Expr
    text: str

    @property
    def name(self) -> str:
        return self.symbol.name


def read_inputs(
    raw: object,
    *,
    symbols: Mapping[str, sp.Symbol],
    t: sp.Symbol,
    file: str | None = None,
    limits: Limits = DEFAULT_LIMITS,
) -> tuple[tuple[Input, ...], tuple[str, ...]]:
    """The ``[inputs]`` table -> (inputs, parser notices); formulas use t and the parameters.

    >>> t = sp.Symbol("t", real=True)
    >>> (u,), _ = read_inputs({"u": "5*sin(2*pi*t/24)"}, symbols={"t": t}, t=t)
    >>> u.name, u.formula
    ('u', 5*sin(pi*t/12))
    """
    if not isinstance(raw, dict):
        raise CaseFileError(f"inputs is {type_name(raw)} ({show(raw)}); expected a table", file=file, key="inputs")
    out: list[Input] = []
    notices: list[str] = []
    for name, value in raw.items():
        key = f"inputs.{name}"
        problem = name_problem(name)
        if problem is not None:
            raise CaseFileError(f"the input name {problem}", file=file, key=key, hint=suggest_name(name))
        if name in symbols:
            what = "the independent variable" if symbols[name] == t else "a parameter"
            raise CaseFileError(f"the input {name!r} has the name of {what}", file=file, key=key)
        if isinstance(value, bool) or not isinstance(value, (str, int, float)):
            raise CaseFileError(
                f"{key} is {type_name(value)} ({show(value)}); expected a formula in {t.name} such as \"step({t.name})\"",
                file=file,
                key=key,
            )
        formula, found = parse_expression(value, symbols=symbols, key=key, file=file, limits=limits, t=t)
        notices.extend(found)
        out.append(Input(sp.Symbol(name, real=True), formula, str(value)))
    return tuple(out), tuple(notices)


def substitute_inputs(
    A: sp.MatrixBase, f: sp.MatrixBase, inputs: Sequence[Input], *, key: str, file: str | None = None
) -> sp.ImmutableMatrix:
    """f with each input's formula in place of its symbol; an input in A is refused.

    >>> t, u = sp.symbols("t u")
    >>> substitute_inputs(sp.Matrix([[-1]]), sp.Matrix([2*u]), [Input(u, sp.exp(-t), "exp(-t)")], key="k")
    Matrix([[2*exp(-t)]])
    """
    table = {i.symbol: i.formula for i in inputs}
    for i, row in enumerate(A.tolist()):
        for j, entry in enumerate(row):
            used = sorted(s.name for s in entry.free_symbols if s in table)
            if used:
                raise CaseFileError(
                    f"the input {used[0]} multiplies a state (row {i + 1}, column {j + 1} of A is {entry}); "
                    "a time-varying coefficient is not a linear constant-coefficient system",
                    file=file,
                    key=key,
                    hint=f"an input enters as a term of its own, e.g. x' = -x + {used[0]}",
                )
    return sp.ImmutableMatrix(f.xreplace(table))


def input_notices(inputs: Sequence[Input]) -> tuple[str, ...]:
    """One line per input for the sheet's notes (until the System carries the inputs)."""
    return tuple(f"inputs.{i.name}: {i.name}(t) = {i.text}, written into the forcing" for i in inputs)
