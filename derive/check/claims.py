"""Claim inputs: sympy objects, numbers or expression strings (parsed safely, never evaluated)."""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from typing import Any

import sympy as sp

from ..errors import InputError

__all__ = ["IMAGINARY_NAMES", "claim_symbols", "parse_claim_value", "matrix_of"]

#: Names that stand for the imaginary unit in claim strings, unless the case uses them.
IMAGINARY_NAMES: tuple[str, ...] = ("i", "j")


def claim_symbols(
    A: sp.MatrixBase, f: sp.MatrixBase, t: sp.Symbol, *extra: Any, constants: Sequence[sp.Symbol] = ()
) -> dict[str, sp.Symbol]:
    """The names a claim string may use: t, the symbols of the case, the constants.

    >>> k = sp.Symbol("k", positive=True)
    >>> sorted(claim_symbols(sp.Matrix([[0, 1], [-k, 0]]), sp.zeros(2, 1), sp.Symbol("t")))
    ['k', 't']
    """
    names: dict[str, sp.Symbol] = {}
    pool: set[sp.Basic] = set(A.free_symbols) | set(f.free_symbols)
    for obj in extra:
        if isinstance(obj, (sp.Basic, sp.MatrixBase)):
            pool |= obj.free_symbols
    for s in sorted(pool, key=sp.default_sort_key):
        if isinstance(s, sp.Symbol):
            names[s.name] = s
    names[t.name] = t
    for c in constants:
        names[c.name] = c
    return names


def parse_claim_value(
    value: Any,
    *,
    symbols: Mapping[str, sp.Symbol],
    key: str,
    file: str | None = None,
    new_names: dict[str, sp.Symbol] | None = None,
    forbidden: Mapping[str, str] | None = None,
    notices: list[str] | None = None,
) -> sp.Expr:
    """One claimed entry as an exact sympy object; strings go through the safe parser only.

    ``new_names``, when given, collects names the case does not declare: each
    becomes a constant symbol (used for solutions without a ``constants``
    list).  ``forbidden`` maps names that may not appear to the reason.
    ``i`` and ``j`` stand for the imaginary unit unless the case declares them.

    >>> parse_claim_value("2 - 3i", symbols={}, key="eigenvalues[0]")
    2 - 3*I
    """
    from ..parsing import expression_names, name_problem, parse_expression

    if isinstance(value, bool):
        raise InputError(f"found the boolean {value}; expected a number or an expression string", key=key, file=file)
    if isinstance(value, sp.Basic):
        floats = value.atoms(sp.Float)
        if floats:
            if notices is not None:
                notices.append(f"{key}: floating-point numbers read as exact rationals")
            value = value.xreplace({fl: sp.Rational(str(fl)) for fl in floats})
        return value
    if isinstance(value, int):
        return sp.Integer(value)
    if isinstance(value, float):
        expr, notes = parse_expression(value, symbols=symbols, key=key, file=file)
        if notices is not None:
            notices.extend(notes)
        return expr
    if not isinstance(value, str):
        raise InputError(
            f"found {type(value).__name__}; expected a number or an expression string", key=key, file=file
        )
    table = dict(symbols)
    # The parser refuses complex results (the case data are real), so the
    # imaginary unit of a claimed complex eigenvalue goes in as a placeholder
    # symbol that is replaced by I afterwards.
    units = {name: sp.Dummy(name) for name in IMAGINARY_NAMES if name not in table}
    names = expression_names(value)
    if new_names is not None:
        for name in names:
            if name in table or name in units or name in new_names:
                continue
            if forbidden and name in forbidden:
                raise InputError(f"{forbidden[name]} (in {value!r})", key=key, file=file)
            from ..parsing import CONSTANTS, FUNCTIONS

            if name in CONSTANTS or name in FUNCTIONS:
                continue
            problem = name_problem(name)
            if problem is not None:
                raise InputError(f"{problem}; expected a constant name such as c1 (in {value!r})", key=key, file=file)
            new_names[name] = sp.Symbol(name)
        table.update(new_names)
    elif forbidden:
        for name in names:
            if name in forbidden and name not in table:
                raise InputError(f"{forbidden[name]} (in {value!r})", key=key, file=file)
    table.update(units)
    expr, notes = parse_expression(value, symbols=table, key=key, file=file)
    if notices is not None:
        notices.extend(notes)
    if units:
        expr = expr.xreplace({d: sp.I for d in units.values()})
    return expr


def matrix_of(
    value: Any, *, n: int, key: str, cols: int | None, parse: Any
) -> sp.ImmutableMatrix:
    """An n x cols matrix (cols None: a column vector of n entries) from rows or a Matrix."""
    if isinstance(value, sp.MatrixBase):
        rows = value.tolist() if cols is not None else [[e] for e in value]
        if cols is None and not (value.rows == 1 or value.cols == 1):
            raise InputError(f"{key} is a {value.rows}x{value.cols} matrix; expected a vector of {n} entries", key=key)
    elif isinstance(value, (str, bytes)) or not isinstance(value, Sequence):
        what = f"a list of {n} rows" if cols is not None else f"a list of {n} entries"
        raise InputError(f"{key} is {type(value).__name__}; expected {what}", key=key)
    else:
        rows = list(value) if cols is not None else [[e] for e in value]
    if len(rows) != n:
        what = "rows" if cols is not None else "entries"
        raise InputError(f"A is {n}x{n} but {key} has {len(rows)} {what}", key=key)
    out: list[list[sp.Expr]] = []
    for i, row in enumerate(rows):
        if cols is not None:
            if isinstance(row, (str, bytes)) or not isinstance(row, Sequence):
                raise InputError(f"{key}[{i}] is {type(row).__name__}; expected a row of {cols} entries", key=f"{key}[{i}]")
            if len(row) != cols:
                raise InputError(f"A is {n}x{n} but {key}[{i}] has {len(row)} entries", key=f"{key}[{i}]")
            out.append([parse(v, f"{key}[{i}][{j}]") for j, v in enumerate(row)])
        else:
            out.append([parse(row[0], f"{key}[{i}]")])
    return sp.ImmutableMatrix(out)
