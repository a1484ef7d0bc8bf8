"""TOML case files -> :class:`derive.model.Case`.

A case file has four tables: ``[sheet]`` (what the calculation sheet's
header carries), ``[system]`` (the matrix form or the equations), an optional
``[initial]`` and one ``[parameters.NAME]`` table per symbolic parameter.  The
commented template in ``derive/data/template.toml`` shows every key.

Every check names the file and the TOML key, what was found and what was
expected; an unknown key comes with the nearest valid one.  Expression strings
are read by :func:`derive.parsing.parse_expression` only.
"""

from __future__ import annotations

import datetime as _dt
import hashlib
import os
import re
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, replace
from pathlib import Path
from typing import Any

import sympy as sp

from .equations import parse_equations, split_equation
from .tomltext import decode_toml
from .inputs import Input, input_notices, read_inputs, substitute_inputs
from .casesections import read_sections
from .valuetext import show, type_name
from .errors import CaseFileError, InputError, LimitError
from .model import Case, Parameter, SheetMeta, System
from .plotfile import read_plot_span
from .frequency_plot import read_frequency_plot
from .parsing import (
    CONSTANTS,
    DEFAULT_LIMITS,
    Limits,
    expression_names,
    name_problem,
    nearest,
    parse_expression,
    suggest_name,
)

__all__ = [
    "load_case",
    "loads_case",
    "load_cases",
    "loads_cases",
    "case_name",
    "ASSUMPTIONS",
    "TOP_KEYS",
    "SHEET_KEYS",
    "SYSTEM_KEYS",
    "INITIAL_KEYS",
    "PARAMETER_KEYS",
]

TOP_KEYS: tuple[str, ...] = ("sheet", "system", "initial", "parameters", "inputs", "units", "sweep", "solve", "outputs", "plot", "reading")
_SHEET_TEXT_KEYS: tuple[str, ...] = (
    "title",
    "project",
    "calc_number",
    "revision",
    "subject",
    "prepared_by",
    "checked_by",
    "date",
    "purpose",
    "notes",
)
_SHEET_LIST_KEYS: tuple[str, ...] = ("assumptions", "references")
SHEET_KEYS: tuple[str, ...] = _SHEET_TEXT_KEYS + _SHEET_LIST_KEYS + ("states",)
_SECOND_ORDER_KEYS: tuple[str, ...] = ("damping", "stiffness", "force")
SYSTEM_KEYS: tuple[str, ...] = ("t", "states", "matrix", "forcing", "equations", "mass", *_SECOND_ORDER_KEYS, "time_unit")
INITIAL_KEYS: tuple[str, ...] = ("t0", "values")
PARAMETER_KEYS: tuple[str, ...] = ("assume", "value", "unit", "description", "tolerance")

#: Assumption names a parameter may carry; each becomes a sympy assumption.
ASSUMPTIONS: tuple[str, ...] = ("positive", "negative", "nonnegative", "nonpositive", "nonzero", "real")

# Pairs that cannot hold together; checked by name so the message can say so
# plainly instead of quoting sympy's fact table.
_CONFLICTS: tuple[tuple[str, str], ...] = (
    ("positive", "negative"),
    ("positive", "nonpositive"),
    ("negative", "nonnegative"),
)

_CASE_NAME_BAD = re.compile(r"[^A-Za-z0-9_.-]")


@dataclass(frozen=True)
class _Ctx:
    """Where errors point: the file, and the limits in force."""

    file: str | None
    limits: Limits
    #: declared input functions, which may be written u(t)
    inputs: frozenset[str] = frozenset()

    def error(self, key: str | None, message: str, *, hint: str | None = None) -> CaseFileError:
        return CaseFileError(message, file=self.file, key=key, hint=hint)

    def limit(self, key: str | None, message: str) -> LimitError:
        return LimitError(message, file=self.file, key=key)

    # -- shape checks --------------------------------------------------------

    def table(self, value: object, key: str) -> Mapping[str, Any]:
        if not isinstance(value, dict):
            raise self.error(key, f"{key} is {type_name(value)} ({show(value)}); expected a table")
        return value

    def keys(self, table: Mapping[str, Any], allowed: Sequence[str], prefix: str) -> None:
        for k in table:
            if k not in allowed:
                where = f"{prefix}.{k}" if prefix else k
                guess = nearest(k, allowed)
                place = f"[{prefix}]" if prefix else "the top level"
                raise self.error(
                    where,
                    f"unknown key {k!r} in {place}; expected one of: {', '.join(allowed)}",
                    hint=f"did you mean {guess!r}?" if guess else None,
                )

    def text(self, value: object, key: str) -> str:
        if isinstance(value, str):
            return value
        raise self.error(key, f"{key} is {type_name(value)} ({show(value)}); expected a string")

    def texts(self, value: object, key: str) -> tuple[str, ...]:
        if not isinstance(value, list):
            last = key.rsplit(".", 1)[-1]
            hint = f"put it in brackets: {last} = [{show(value)}]" if isinstance(value, str) else None
            raise self.error(
                key, f"{key} is {type_name(value)} ({show(value)}); expected a list of strings", hint=hint
            )
        return tuple(self.text(v, f"{key}[{i}]") for i, v in enumerate(value))

    def seq(self, value: object, key: str, what: str) -> list[Any]:
        if not isinstance(value, list):
            raise self.error(key, f"{key} is {type_name(value)} ({show(value)}); expected {what}")
        return value

    def scalar(self, value: object, key: str) -> str | int | float:
        """A number or an expression string, before it is parsed."""
        if isinstance(value, bool) or not isinstance(value, (str, int, float)):
            raise self.error(
                key,
                f"{key} is {type_name(value)} ({show(value)}); expected a number or an expression string",
            )
        return value

    def name(self, value: object, key: str, role: str) -> str:
        text = self.text(value, key)
        problem = name_problem(text)
        if problem is not None:
            raise self.error(key, f"the {role} name {problem}", hint=suggest_name(text))
        return text

    def expr(
        self,
        value: object,
        key: str,
        symbols: Mapping[str, sp.Symbol],
        notices: list[str],
        *,
        t: sp.Symbol | None = None,
    ) -> sp.Expr:
        raw = self.scalar(value, key)
        expr, found = parse_expression(
            raw, symbols=symbols, key=key, file=self.file, limits=self.limits, t=t, inputs=self.inputs
        )
        notices.extend(found)
        return expr

    def no_state(self, value: object, key: str, states: Sequence[str], where: str) -> None:
        """Refuse a state name in a matrix entry or a forcing entry of the matrix form.

        Read as an unknown name it would earn "declare it as a parameter",
        which the state's name then cannot be.
        """
        for name in expression_names(value if isinstance(value, str) else ""):
            if name in states:
                j = list(states).index(name)
                raise self.error(
                    key,
                    f"{name!r} is a state (state {j + 1} of {len(states)}); in the matrix form {where}",
                    hint=f"put the coefficient of {name} in system.matrix[i][{j}] (the entry of row i "
                    f"that multiplies {name}), or write the system as text in system.equations",
                )


# ---------------------------------------------------------------------------
# Pieces of the file
# ---------------------------------------------------------------------------


def _sheet(ctx: _Ctx, data: Mapping[str, Any]) -> tuple[dict[str, Any], Mapping[str, Any]]:
    """Sheet fields for SheetMeta, and the raw [sheet.states] table (checked later)."""
    sheet = ctx.table(data, "sheet")
    ctx.keys(sheet, SHEET_KEYS, "sheet")
    fields: dict[str, Any] = {}
    for k in _SHEET_TEXT_KEYS:
        if k not in sheet:
            continue
        value = sheet[k]
        if k == "date" and isinstance(value, (_dt.date, _dt.datetime)):
            # An unquoted TOML date is what most people type; keep its ISO text.
            value = value.isoformat()
        fields[k] = ctx.text(value, f"sheet.{k}")
    for k in _SHEET_LIST_KEYS:
        if k in sheet:
            fields[k] = ctx.texts(sheet[k], f"sheet.{k}")
    states = ctx.table(sheet.get("states", {}), "sheet.states")
    for k, v in states.items():
        ctx.text(v, f"sheet.states.{k}")
    return fields, states


def _assumptions(ctx: _Ctx, value: object, key: str) -> tuple[str, ...]:
    names = ctx.texts(value, key)
    for i, a in enumerate(names):
        if a not in ASSUMPTIONS:
            guess = nearest(a, ASSUMPTIONS)
            raise ctx.error(
                f"{key}[{i}]",
                f"unknown assumption {a!r}; expected any of: {', '.join(ASSUMPTIONS)}",
                hint=f"did you mean {guess!r}?" if guess else None,
            )
    for first, second in _CONFLICTS:
        if first in names and second in names:
            raise ctx.error(key, f"inconsistent assumptions: {first!r} and {second!r} cannot both hold")
    if {"nonnegative", "nonpositive", "nonzero"} <= set(names):
        raise ctx.error(
            key, "inconsistent assumptions: 'nonnegative', 'nonpositive' and 'nonzero' cannot all hold"
        )
    return tuple(dict.fromkeys(names))


_CHECKS: Mapping[str, str] = {
    "positive": "is_positive",
    "negative": "is_negative",
    "nonnegative": "is_nonnegative",
    "nonpositive": "is_nonpositive",
    "nonzero": "is_nonzero",
    "real": "is_real",
}


def _parameter(ctx: _Ctx, name: str, spec_raw: object, notices: list[str]) -> Parameter:
    key = f"parameters.{name}"
    problem = name_problem(name)
    if problem is not None:
        raise ctx.error(key, f"the parameter name {problem}", hint=suggest_name(name))
    if isinstance(spec_raw, (int, float, str)) and not isinstance(spec_raw, bool):
        raise ctx.error(
            key,
            f"{key} is {type_name(spec_raw)} ({show(spec_raw)}); "
            "expected a table with value, assume, unit, description",
            hint=f"write a table: [parameters.{name}] with the line value = {show(spec_raw)}",
        )
    spec = ctx.table(spec_raw, key)
    ctx.keys(spec, PARAMETER_KEYS, key)
    assume = _assumptions(ctx, spec["assume"], f"{key}.assume") if "assume" in spec else ()
    flags = {a: True for a in assume if a != "real"}
    try:
        symbol = sp.Symbol(name, real=True, **flags)
    except Exception as err:  # sympy's InconsistentAssumptions and relatives
        raise ctx.error(f"{key}.assume", f"inconsistent assumptions {list(assume)}: {type(err).__name__}") from None
    value: sp.Expr | None = None
    if "value" in spec:
        vkey = f"{key}.value"
        raw = ctx.scalar(spec["value"], vkey)
        named = [n for n in expression_names(raw) if n not in CONSTANTS]
        if named:
            raise ctx.error(
                vkey,
                f"{vkey} must be an exact number such as 3, 0.25 or \"1/3\"; found the name {named[0]!r} in {show(raw)}",
            )
        value = ctx.expr(raw, vkey, {}, notices)
        for a in assume:
            holds = getattr(value, _CHECKS[a])
            if holds is not True:
                verdict = "violates" if holds is False else "cannot be shown to satisfy"
                raise ctx.error(vkey, f"{vkey} = {value} {verdict} the assumption {a!r} of {key}.assume")
    unit = ctx.text(spec["unit"], f"{key}.unit") if "unit" in spec else ""
    description = ctx.text(spec["description"], f"{key}.description") if "description" in spec else ""
    return Parameter(symbol=symbol, value=value, unit=unit, description=description)


def _matrix(
    ctx: _Ctx,
    raw: object,
    symbols: Mapping[str, sp.Symbol],
    t: sp.Symbol,
    notices: list[str],
    states: Sequence[str] = (),
    *,
    key: str = "system.matrix",
    size: int | None = None,
) -> sp.ImmutableMatrix:
    rows = ctx.seq(raw, key, "a list of rows, e.g. [[\"-1\", \"1/2\"], [0, \"-k\"]]")
    n = len(rows)
    if n == 0:
        raise ctx.error(key, f"{key} is empty; expected a square n x n matrix with n >= 1")
    if n > ctx.limits.max_dimension:
        raise ctx.limit(key, f"{key} has {n} rows, more than the limit of {ctx.limits.max_dimension}")
    if size is not None and n != size:
        raise ctx.error(key, f"{key} has {n} rows; expected {size}, the size of system.mass")
    for i, row in enumerate(rows):
        ctx.seq(row, f"{key}[{i}]", f"a row of {n} entries")
        if len(row) != n:
            raise ctx.error(
                f"{key}[{i}]",
                f"{key} has {n} rows but row {key}[{i}] has {len(row)} entries; "
                "expected a square n x n matrix",
            )
    entries: list[list[sp.Expr]] = []
    for i, row in enumerate(rows):
        out: list[sp.Expr] = []
        for j, value in enumerate(row):
            ekey = f"{key}[{i}][{j}]"
            ctx.no_state(value, ekey, states, f"an entry of {key} is the coefficient of a state, not a term")
            entry = ctx.expr(value, ekey, symbols, notices, t=t)
            if t in entry.free_symbols:
                raise ctx.error(
                    ekey,
                    f"A must be constant: {ekey} = {entry} depends on {t.name}: not a constant-coefficient system",
                    hint="time-dependent terms belong in system.forcing",
                )
            out.append(entry)
        entries.append(out)
    return sp.ImmutableMatrix(entries)


def _forcing_entry(
    ctx: _Ctx,
    value: object,
    key: str,
    symbols: Mapping[str, sp.Symbol],
    t: sp.Symbol,
    notices: list[str],
    states: Sequence[str] = (),
) -> sp.Expr:
    """One forcing entry: an expression, or ``{ piecewise = [[v1, b1], ..., [vn]] }``.

    The table form reads "v1 until t = b1, v2 until b2, ..., vn after"; it
    becomes a sympy Piecewise, solved interval by interval (derive.forcing).
    """
    state_term = "the forcing f(t) holds only terms without states; a state's coefficient belongs in system.matrix"
    if not isinstance(value, dict):
        ctx.no_state(value, key, states, state_term)
        return ctx.expr(value, key, symbols, notices, t=t)
    ctx.keys(value, ("piecewise",), key)
    if "piecewise" not in value:
        raise ctx.error(key, f"{key} is a table without the key 'piecewise'; expected {{ piecewise = [[value, end], ..., [value]] }}")
    pkey = f"{key}.piecewise"
    rows = ctx.seq(value["piecewise"], pkey, "a list of [value, end] pairs ending with [value]")
    pieces: list[tuple[sp.Expr, sp.Expr | None]] = []
    for j, row in enumerate(rows):
        rkey = f"{pkey}[{j}]"
        last = j == len(rows) - 1
        if not isinstance(row, list) or len(row) != (1 if last else 2):
            want = "[value] (the last interval has no end)" if last else "[value, end]"
            raise ctx.error(rkey, f"{rkey} is {show(row)}; expected {want}")
        ctx.no_state(row[0], f"{rkey}[0]", states, state_term)
        v = ctx.expr(row[0], f"{rkey}[0]", symbols, notices, t=t)
        b = None if last else ctx.expr(row[1], f"{rkey}[1]", symbols, notices, t=t)
        pieces.append((v, b))
    from .forcing import piecewise_from_intervals

    try:
        return piecewise_from_intervals(pieces, t, key=pkey, file=ctx.file)
    except InputError as exc:
        raise ctx.error(exc.key or pkey, exc.message) from exc


def _state_names(ctx: _Ctx, raw: object, n: int, t: sp.Symbol, *, of: str = "system.matrix") -> tuple[str, ...]:
    key = "system.states"
    names = ctx.seq(raw, key, f"a list of {n} state names")
    if len(names) != n:
        raise ctx.error(key, f"{of} is {n}x{n} but system.states has {len(names)} entries")
    seen: dict[str, int] = {}
    for i, v in enumerate(names):
        name = ctx.name(v, f"{key}[{i}]", "state")
        if name == t.name:
            raise ctx.error(f"{key}[{i}]", f"the state {name!r} has the name of the independent variable")
        if name in seen:
            raise ctx.error(f"{key}[{i}]", f"duplicate state {name!r}: also {key}[{seen[name]}]")
        seen[name] = i
    return tuple(seen)


def _initial(
    ctx: _Ctx,
    raw: object,
    *,
    states: tuple[sp.Symbol, ...],
    symbols: Mapping[str, sp.Symbol],
    t: sp.Symbol,
    shape: str,
    notices: list[str],
) -> tuple[sp.ImmutableMatrix, sp.Expr]:
    initial = ctx.table(raw, "initial")
    state_names = [s.name for s in states]
    by_state = {k: v for k, v in initial.items() if k not in INITIAL_KEYS and k in state_names}
    ctx.keys(initial, (*INITIAL_KEYS, *state_names), "initial")
    if by_state and "values" in initial:
        first = next(iter(by_state))
        raise ctx.error(
            f"initial.{first}",
            f"[initial] has both values and a value for the state {first!r}; expected one of them",
            hint="give every state its value either as initial.values or as NAME = value lines in [initial]",
        )
    if by_state:
        initial = {**{k: v for k, v in initial.items() if k in INITIAL_KEYS}, "values": by_state}
    if "values" not in initial:
        raise ctx.error(
            "initial.values",
            "[initial] has no values; expected initial.values, one per state "
            f"({', '.join(s.name for s in states)}), or one line per state such as {states[0].name} = 0",
        )
    t0: sp.Expr = sp.Integer(0)
    if "t0" in initial:
        raw_t0 = initial["t0"]
        if isinstance(raw_t0, bool) or not isinstance(raw_t0, (str, int, float)):
            raise ctx.error("initial.t0", f"initial.t0 is {type_name(raw_t0)} ({show(raw_t0)}); expected a number")
        named = [n for n in expression_names(raw_t0) if n not in CONSTANTS]
        if named:
            raise ctx.error(
                "initial.t0",
                f"initial.t0 must be a number such as 0, 2.5 or \"1/2\"; found the name {named[0]!r} in {show(raw_t0)}",
            )
        t0 = ctx.expr(raw_t0, "initial.t0", {}, notices)
    values = initial["values"]
    n = len(states)
    key = "initial" if by_state else "initial.values"
    if isinstance(values, dict):
        names = [s.name for s in states]
        for k in values:
            if k not in names:
                guess = nearest(k, names)
                raise ctx.error(
                    f"{key}.{k}",
                    f"{k!r} is not a state; the states are: {', '.join(names)}",
                    hint=f"did you mean {guess!r}?" if guess else None,
                )
        missing = [s for s in names if s not in values]
        if missing:
            raise ctx.error(key, f"{key} has no value for {', '.join(missing)}; expected one per state")
        items = [(f"{key}.{s}", values[s]) for s in names]
    elif isinstance(values, list):
        if len(values) != n:
            raise ctx.error(key, f"{shape} but initial.values has {len(values)} entries")
        items = [(f"{key}[{i}]", v) for i, v in enumerate(values)]
    else:
        raise ctx.error(
            key,
            f"initial.values is {type_name(values)} ({show(values)}); "
            "expected a list in state order or a table {state = value}",
        )
    x0: list[sp.Expr] = []
    state_names = [s.name for s in states]
    for ikey, v in items:
        for used in expression_names(v if isinstance(v, str) else ""):
            if used in state_names and used not in symbols:
                raise ctx.error(
                    ikey,
                    f"{ikey} names the state {used!r}; an initial value is a number or a formula in the parameters",
                    hint="give each state its own value at t0, e.g. initial.values = "
                    f"[{', '.join(['1'] + ['0'] * (n - 1))}]",
                )
        value = ctx.expr(v, ikey, symbols, notices, t=t)
        if t in value.free_symbols:
            raise ctx.error(ikey, f"{ikey} = {value} depends on {t.name}; an initial value must be a constant")
        x0.append(value)
    return sp.ImmutableMatrix(x0), t0


def _second_order(
    ctx: _Ctx, system: Mapping[str, Any], symbols: Mapping[str, sp.Symbol], t: sp.Symbol, notices: list[str]
) -> tuple[tuple[sp.Symbol, ...], sp.ImmutableMatrix, sp.ImmutableMatrix, Any]:
    """M q'' + C q' + K q = F from system.mass, damping, stiffness and force, in block first-order form."""
    from .second_order import block_form, second_order_states

    if "stiffness" not in system:
        raise ctx.error("system.stiffness", "system.mass is given but system.stiffness is not; expected both")
    if "forcing" in system:
        raise ctx.error("system.forcing", "with system.mass the forcing vector is system.force (F in M q'' + C q' + K q = F)")
    M = _matrix(ctx, system["mass"], symbols, t, notices, key="system.mass")
    n = M.shape[0]
    if 2 * n > ctx.limits.max_dimension:
        raise ctx.limit("system.mass", f"{2 * n} states (q and q'), more than the limit of {ctx.limits.max_dimension}")
    K = _matrix(ctx, system["stiffness"], symbols, t, notices, key="system.stiffness", size=n)
    C = _matrix(ctx, system["damping"], symbols, t, notices, key="system.damping", size=n) if "damping" in system else sp.zeros(n, n)
    F = sp.zeros(n, 1)
    if "force" in system:
        items = ctx.seq(system["force"], "system.force", f"a list of {n} entries")
        if len(items) != n:
            raise ctx.error("system.force", f"system.mass is {n}x{n} but system.force has {len(items)} entries")
        F = sp.Matrix([_forcing_entry(ctx, v, f"system.force[{i}]", symbols, t, notices) for i, v in enumerate(items)])
    names = _state_names(ctx, system["states"], n, t, of="system.mass") if "states" in system else tuple(f"q{i + 1}" for i in range(n))
    for i, s in enumerate(names):
        if s in symbols:
            raise ctx.error(f"system.states[{i}]" if "states" in system else f"parameters.{s}", f"the parameter {s!r} has the same name as a coordinate")
    try:
        A, f = block_form(M, sp.ImmutableMatrix(C), K, sp.ImmutableMatrix(F), key="system.mass", file=ctx.file)
    except InputError as exc:
        raise ctx.error("system.mass", exc.message) from None
    notices.append(f"system.mass: M q'' + C q' + K q = F written in first-order form with the states {', '.join(names)}, then their derivatives")
    return second_order_states(names), A, f, tuple(sp.ImmutableMatrix(m) for m in (M, C, K, F))


# ---------------------------------------------------------------------------
# The whole file
# ---------------------------------------------------------------------------


def _planned_states(system: Mapping[str, Any]) -> tuple[str, ...]:
    """The state names of the matrix form before the matrix is checked (for messages only)."""
    given = system.get("states")
    if isinstance(given, list) and all(isinstance(s, str) for s in given):
        return tuple(given)
    rows = system.get("matrix")
    return tuple(f"x{i + 1}" for i in range(len(rows))) if isinstance(rows, list) else ()


def _build(data: Mapping[str, Any], *, ctx: _Ctx, name: str, source: str | None, digest: str) -> Case:
    ctx.keys(data, TOP_KEYS, "")
    notices: list[str] = []
    sheet_fields, sheet_states = _sheet(ctx, data.get("sheet", {}))

    if "system" not in data:
        raise ctx.error("system", "the case has no [system] table; expected one with matrix or equations")
    system = ctx.table(data["system"], "system")
    ctx.keys(system, SYSTEM_KEYS, "system")
    t_name = ctx.name(system.get("t", "t"), "system.t", "independent variable")
    t = sp.Symbol(t_name, real=True)

    params_raw = ctx.table(data.get("parameters", {}), "parameters")
    params: list[Parameter] = []
    for pname, spec in params_raw.items():
        if pname == t_name:
            raise ctx.error(
                f"parameters.{pname}", f"the parameter {pname!r} has the name of the independent variable (system.t)"
            )
        params.append(_parameter(ctx, pname, spec, notices))
    symbols: dict[str, sp.Symbol] = {p.name: p.symbol for p in params}
    inputs: tuple[Input, ...] = ()
    if "inputs" in data:
        inputs, found_in_inputs = read_inputs(
            data["inputs"], symbols={**symbols, t_name: t}, t=t, file=ctx.file, limits=ctx.limits
        )
        notices.extend(found_in_inputs)
        ctx = replace(ctx, inputs=frozenset(i.name for i in inputs))
    # The system is read with the inputs as symbols; their formulas go in below.
    with_inputs = {**symbols, **{i.name: i.symbol for i in inputs}}
    with_t = {**with_inputs, t_name: t}

    forms = [k for k in ("matrix", "equations", "mass") if k in system]
    if len(forms) > 1:
        raise ctx.error(
            "system", f"[system] has both {forms[0]} and {forms[1]}; expected one of them "
            "(matrix form, equations, or mass and stiffness)"
        )
    if not forms:
        raise ctx.error(
            "system", "[system] has neither matrix nor equations; expected one of them (or mass and stiffness)"
        )
    has_matrix = forms[0] == "matrix"
    for extra in _SECOND_ORDER_KEYS:
        if extra in system and forms[0] != "mass":
            raise ctx.error(
                f"system.{extra}",
                f"system.{extra} belongs to the second-order form M q'' + C q' + K q = F, which needs system.mass",
                hint="give system.mass and system.stiffness (and damping, force where they apply)",
            )

    equations: tuple[str, ...] = ()
    second = None
    if forms[0] == "mass":
        states, A, f, second = _second_order(ctx, system, with_t, t, notices)
        n = A.shape[0]
        shape = f"system.mass is {n // 2}x{n // 2}, so the system has {n} states (q, then q')"
    elif has_matrix:
        A = _matrix(ctx, system["matrix"], with_t, t, notices, _planned_states(system))
        n = A.shape[0]
        names = (
            _state_names(ctx, system["states"], n, t)
            if "states" in system
            else tuple(f"x{i + 1}" for i in range(n))
        )
        shape = f"system.matrix is {n}x{n}"
        for i, s in enumerate(names):
            if s in symbols:
                where = f"system.states[{i}]" if "states" in system else f"parameters.{s}"
                raise ctx.error(where, f"the parameter {s!r} has the same name as a state")
        states = tuple(sp.Symbol(s, real=True) for s in names)
        if "forcing" in system:
            fkey = "system.forcing"
            items = ctx.seq(system["forcing"], fkey, f"a list of {n} entries")
            if len(items) != n:
                raise ctx.error(fkey, f"{shape} but system.forcing has {len(items)} entries")
            f = sp.ImmutableMatrix(
                [_forcing_entry(ctx, v, f"{fkey}[{i}]", with_t, t, notices, names) for i, v in enumerate(items)]
            )
        else:
            f = sp.zeros(n, 1).as_immutable()
    else:
        for extra in ("states", "forcing"):
            if extra in system:
                raise ctx.error(
                    f"system.{extra}",
                    f"system.{extra} is only used with system.matrix; with system.equations "
                    + ("the states are the names on the left sides" if extra == "states" else "f(t) is read off the right sides"),
                )
        equations = ctx.texts(system["equations"], "system.equations")
        if not equations:
            raise ctx.error("system.equations", "system.equations is empty; expected one equation per state")
        for i, line in enumerate(equations):
            parts = split_equation(line, t_name=t_name)
            if parts is not None and parts[0] in with_inputs:
                role = "parameter" if parts[0] in symbols else "input"
                raise ctx.error(
                    f"system.equations[{i}]", f"the {role} {parts[0]!r} has the same name as a state"
                )
        states, A, f, found = parse_equations(
            equations, symbols=with_inputs, t=t, key="system.equations", file=ctx.file, limits=ctx.limits,
            inputs=ctx.inputs,
        )
        notices.extend(found)
        n = len(states)
        shape = f"system.equations has {n} equation{'s' if n != 1 else ''}"

    if "units" in data or "time_unit" in system:
        from .units import check_units

        notices.extend(check_units(
            data.get("units", {}), system.get("time_unit", "s"), states=states, params=params, form=forms[0],
            inputs=[i.symbol for i in inputs], A=A, f=f, equations=equations, file=ctx.file,
        ))
    if inputs:
        f = substitute_inputs(A, f, inputs, key=f"system.{forms[0]}", file=ctx.file)
        notices.extend(input_notices(inputs))
    x0: sp.ImmutableMatrix | None = None
    t0: sp.Expr = sp.Integer(0)
    if "initial" in data:
        x0, t0 = _initial(
            ctx, data["initial"], states=states, symbols=symbols | {t_name: t}, t=t, shape=shape, notices=notices
        )

    state_names = [s.name for s in states]
    for k in sheet_states:
        if k not in state_names:
            guess = nearest(k, state_names)
            raise ctx.error(
                f"sheet.states.{k}",
                f"{k!r} is not a state; the states are: {', '.join(state_names)}",
                hint=f"did you mean {guess!r}?" if guess else None,
            )
    descriptions = tuple((s, sheet_states[s]) for s in state_names if s in sheet_states)

    used: set[sp.Basic] = set(A.free_symbols) | set(f.free_symbols)
    if x0 is not None:
        used |= x0.free_symbols
    for p in params:
        if p.symbol not in used:
            notices.append(f"parameters.{p.name}: declared but not used in the system")

    meta = SheetMeta(**sheet_fields, state_descriptions=descriptions)
    sys_ = System(
        A=sp.ImmutableMatrix(A),
        f=sp.ImmutableMatrix(f),
        t=t,
        states=states,
        x0=x0,
        t0=t0,
        params=tuple(params),
        equations=equations, second_order=second, time_unit=system.get("time_unit", ""), units=tuple(data.get("units", {}).items()),
    )
    case = Case(name=name, system=sys_, meta=meta, source=source, source_hash=digest, notices=tuple(notices), plot_span=read_plot_span(data.get("plot"), file=ctx.file), frequency_plot=read_frequency_plot(data.get("plot"), file=ctx.file))
    return read_sections(case, data, inputs=inputs, file=ctx.file, limits=ctx.limits)


def case_name(raw: str, *, file: str | None = None) -> str:
    """A safe case name: only ``[A-Za-z0-9_.-]``, no leading dot, never a path.

    >>> case_name("two tanks (rev B)")
    'two_tanks__rev_B_'
    """
    if not isinstance(raw, str) or "/" in raw or "\\" in raw or "\x00" in raw or raw in (".", ".."):
        raise CaseFileError(
            f"the case name {raw!r} would leave its folder; expected a plain name without / or \\",
            file=file,
            key="name",
        )
    safe = _CASE_NAME_BAD.sub("_", raw).lstrip(".")
    if not safe:
        raise CaseFileError(
            f"the case name {raw!r} has no usable characters; expected letters, digits, _ . or -",
            file=file,
            key="name",
        )
    return safe[:120]


def loads_case(
    text: str,
    *,
    name: str = "case",
    source: str | None = None,
    limits: Limits = DEFAULT_LIMITS,
) -> Case:
    """Read a case from TOML text.

    >>> case = loads_case('[system]\\nmatrix = [[-1, 0], [0, "-1/2"]]')
    >>> case.system.A
    Matrix([
    [-1,    0],
    [ 0, -1/2]])
    """
    ctx = _Ctx(source, limits)
    return _single(_loads(text, ctx=ctx, name=name, limits=limits), ctx)


def _loads(text: str, *, ctx: _Ctx, name: str, limits: Limits) -> tuple[Case, Mapping[str, Any]]:
    if not isinstance(text, str):
        raise CaseFileError(f"found {type(text).__name__}; expected the TOML text as a string", file=ctx.file)
    if len(text.encode("utf-8", "surrogatepass")) > limits.max_file_bytes:
        raise LimitError(f"the case text is larger than the limit of {limits.max_file_bytes} bytes", file=ctx.file)
    safe = case_name(name, file=ctx.file)
    digest = hashlib.sha256(text.encode("utf-8", "surrogatepass")).hexdigest()
    data = decode_toml(text, file=ctx.file)
    return _build(data, ctx=ctx, name=safe, source=ctx.file, digest=digest), data


def _single(loaded: tuple[Case, Mapping[str, Any]], ctx: _Ctx) -> Case:
    """The one case of a file; a file with a [sweep] holds several, which is said plainly."""
    case, data = loaded
    if "sweep" in data:
        from .sweep import expand_sweep

        count = len(expand_sweep(case, data["sweep"], file=ctx.file, limits=ctx.limits))
        raise CaseFileError(
            f"the file declares a [sweep] of {count} case(s); expected a single case here",
            file=ctx.file,
            key="sweep",
            hint="run it with: eigensheet batch FILE (or derive.batch([...]) from Python)",
        )
    return case


def _expand(loaded: tuple[Case, Mapping[str, Any]], ctx: _Ctx) -> tuple[Case, ...]:
    case, data = loaded
    if "sweep" not in data:
        return (case,)
    from .sweep import expand_sweep

    return expand_sweep(case, data["sweep"], file=ctx.file, limits=ctx.limits, inputs=data.get("inputs", {}),
                        rebuild=lambda table: _build({**data, "inputs": table}, ctx=ctx, name=case.name, source=case.source, digest=case.source_hash))


def loads_cases(
    text: str,
    *,
    name: str = "case",
    source: str | None = None,
    limits: Limits = DEFAULT_LIMITS,
) -> tuple[Case, ...]:
    """Every case of a TOML text: one, or one per combination of its ``[sweep]``.

    >>> text = '[system]\\nmatrix = [["-k"]]\\n[parameters.k]\\n[sweep]\\nk = [1, 2]'
    >>> [c.name for c in loads_cases(text, name="decay")]
    ['decay-k_1', 'decay-k_2']
    """
    ctx = _Ctx(source, limits)
    return _expand(_loads(text, ctx=ctx, name=name, limits=limits), ctx)


def load_case(path: str | os.PathLike[str], *, limits: Limits = DEFAULT_LIMITS) -> Case:
    """Read a case file; the case is named after the file stem.

    >>> case = load_case("examples/two_tanks.toml")  # doctest: +SKIP
    >>> case.name, len(case.source_hash)              # doctest: +SKIP
    ('two_tanks', 64)
    """
    return _single(*_load(path, limits=limits))


def load_cases(path: str | os.PathLike[str], *, limits: Limits = DEFAULT_LIMITS) -> tuple[Case, ...]:
    """Every case of a case file: one, or one per combination of its ``[sweep]``.

    >>> [c.name for c in load_cases("examples/beam.toml")]  # doctest: +SKIP
    ['beam-k_1', 'beam-k_2', 'beam-k_4']
    """
    return _expand(*_load(path, limits=limits))


def _load(path: str | os.PathLike[str], *, limits: Limits) -> tuple[tuple[Case, Mapping[str, Any]], _Ctx]:
    p = Path(path)
    where = str(path)
    try:
        size = p.stat().st_size
        if size > limits.max_file_bytes:
            raise LimitError(
                f"the file has {size} bytes, more than the limit of {limits.max_file_bytes}", file=where
            )
        raw = p.read_bytes()
    except OSError as err:
        raise CaseFileError(f"cannot read the case file: {err.strerror or err}", file=where) from None
    try:
        text = raw.decode("utf-8")
    except UnicodeDecodeError as err:
        line = raw[: err.start].count(b"\n") + 1
        raise CaseFileError(
            f"the file is not UTF-8 text (byte {err.start} cannot be decoded)", file=where, line=line
        ) from None
    ctx = _Ctx(where, limits)
    # A backslash is legal in a POSIX file name but reads as a separator elsewhere.
    safe = case_name(p.stem.replace("\\", "_"), file=where)
    data = decode_toml(text, file=ctx.file)
    case = _build(data, ctx=ctx, name=safe, source=where, digest=hashlib.sha256(raw).hexdigest())
    return (case, data), ctx
