"""Equations of higher order -> a first-order system, with the reduction kept for the sheet.

``y'' + 2*zeta*wn*y' + wn^2*y = wn^2*u`` becomes the states ``y`` and ``y'``
with ``y' = y'`` and ``y'' = wn^2*u - 2*zeta*wn*y' - wn^2*y``.  A state named
``y'`` is the sympy Symbol ``Symbol("y'")``: its name is the derivative as
the user writes it, so every printer shows it as written.

Each equation is the equation of one dependent variable: the one whose
derivative stands alone on the left (``x1'' = ...``), or else the one whose
highest derivative appears in it.  That derivative must enter linearly with a
constant nonzero coefficient and appear in no other equation; a derivative
of a parameter or an input is refused (it is not a state).
"""

from __future__ import annotations

import re
from collections.abc import Collection, Mapping, Sequence
from dataclasses import dataclass

import sympy as sp

from .errors import DeriveError, ExpressionError, LimitError
from .parsing import CONSTANTS, DEFAULT_LIMITS, FUNCTIONS, Limits, expression_names, parse_expression

__all__ = ["Reduction", "derivative_symbol", "has_higher_order", "reduce_order", "reduction_of"]

_NAME = r"[A-Za-z_][A-Za-z0-9_]*"
_PRIMED = re.compile(rf"({_NAME})\s*('+)")


def _leibniz(t_name: str) -> re.Pattern[str]:
    """``dy/dt``, ``d2y/dt2`` and ``d^2y/dt^2`` (the order written twice, or not at all)."""
    t = re.escape(t_name)
    return re.compile(
        rf"(?<![A-Za-z0-9_])d\s*(?:\^?\s*(?P<n>[1-9])\s*)?(?P<name>{_NAME})\s*/\s*d\s*{t}"
        rf"(?:\s*\^?\s*(?P=n))?(?![A-Za-z0-9_])"
    )


@dataclass(frozen=True)
class Reduction:
    """How equations of higher order were rewritten as a first-order system.

    ``order_by_state`` gives each dependent variable and the order of its
    equation, in equation order; ``states`` are the states of the
    first-order system (``y``, ``y'``, ...), ``new_states`` those of them
    that the reduction introduced; ``first_order_equations`` pairs each
    state with the right side of its derivative; ``notices`` are the
    parser's (floats read as exact values).
    """

    original_equations: tuple[str, ...]
    order_by_state: tuple[tuple[str, int], ...]
    states: tuple[sp.Symbol, ...]
    new_states: tuple[sp.Symbol, ...]
    first_order_equations: tuple[tuple[sp.Symbol, sp.Expr], ...]
    notices: tuple[str, ...] = ()


def derivative_symbol(name: str, order: int) -> sp.Symbol:
    """The state for the ``order``-th derivative of ``name``.

    >>> derivative_symbol("y", 2)
    y''
    """
    return sp.Symbol(name + "'" * order, real=True)


def has_higher_order(lines: Sequence[object], *, t_name: str) -> bool:
    """Whether any line writes a derivative of order two or more (``y''``, ``d2y/dt2``).

    >>> has_higher_order(["x' = v", "v'' = -x"], t_name="t"), has_higher_order(["x' = -x"], t_name="t")
    (True, False)
    """
    pattern = _leibniz(t_name)
    for line in lines:
        if not isinstance(line, str):
            continue
        if any(len(m.group(2)) >= 2 for m in _PRIMED.finditer(line)):
            return True
        if any(m.group("n") not in (None, "1") for m in pattern.finditer(line)):
            return True
    return False


@dataclass(frozen=True)
class _Written:
    """One equation with its derivatives replaced by placeholder names."""

    lhs: str
    rhs: str
    derivatives: tuple[tuple[str, int], ...]  # (variable, order) in order of appearance
    alone: tuple[str, int] | None  # the left side when it is one derivative


class _Marks:
    """Placeholder identifiers for derivatives, unique against every name written."""

    def __init__(self, taken: set[str]) -> None:
        self.taken = taken
        self.by_key: dict[tuple[str, int], str] = {}

    def __call__(self, name: str, order: int) -> str:
        key = (name, order)
        if key not in self.by_key:
            mark = f"{name}_d{order}"
            while mark in self.taken:
                mark += "x"
            self.taken.add(mark)
            self.by_key[key] = mark
        return self.by_key[key]


def _mark(text: str, marks: _Marks, t_name: str, found: list[tuple[str, int]]) -> str:
    def primed(m: re.Match[str]) -> str:
        found.append((m.group(1), len(m.group(2))))
        return marks(m.group(1), len(m.group(2)))

    def leibniz(m: re.Match[str]) -> str:
        order = int(m.group("n") or 1)
        found.append((m.group("name"), order))
        return marks(m.group("name"), order)

    return _PRIMED.sub(primed, _leibniz(t_name).sub(leibniz, text))


def _split(line: str, key: str, file: str | None) -> tuple[str, str]:
    if line.count("=") != 1:
        raise ExpressionError(
            f"expected exactly one '=' in {line!r}, found {line.count('=')}",
            file=file,
            key=key,
            hint="write it as, e.g., \"y'' + 2*zeta*wn*y' + wn^2*y = wn^2*u\"",
        )
    lhs, rhs = line.split("=")
    return lhs, rhs


def _restore(err: DeriveError, marks: _Marks) -> DeriveError:
    """Put the derivatives back as written into a parser message about marked text."""
    for (name, order), mark in marks.by_key.items():
        shown = name + "'" * order
        err.message = re.sub(rf"\b{mark}\b", shown, err.message)
        if err.hint:
            err.hint = re.sub(rf"\b{mark}\b", shown, err.hint)
    return err


def reduce_order(
    lines: Sequence[str],
    *,
    symbols: Mapping[str, sp.Symbol],
    t: sp.Symbol,
    key: str = "system.equations",
    file: str | None = None,
    limits: Limits = DEFAULT_LIMITS,
    inputs: Collection[str] = (),
) -> Reduction:
    """Equations of any order (each linear in its highest derivative) -> a first-order system.

    >>> t, w = sp.symbols("t w", positive=True)
    >>> red = reduce_order(["y'' + w^2*y = 0"], symbols={"w": w}, t=t)
    >>> red.states, red.first_order_equations[1]
    ((y, y'), (y', -w**2*y))
    """
    taken = {n for line in lines for n in expression_names(line.replace("'", " "))} | set(symbols) | {t.name}
    marks = _Marks(taken)
    written: list[_Written] = []
    for i, line in enumerate(lines):
        lhs, rhs = _split(line, f"{key}[{i}]", file)
        found: list[tuple[str, int]] = []
        lhs_m = _mark(lhs, marks, t.name, found)
        alone_found: list[tuple[str, int]] = []
        alone = None
        if re.fullmatch(rf"\s*{_NAME}\s*", lhs_m) and found:
            alone = found[0]
        rhs_m = _mark(rhs, marks, t.name, alone_found)
        written.append(_Written(lhs_m, rhs_m, tuple(found + alone_found), alone))

    top: dict[str, int] = {}
    for i, w in enumerate(written):
        for name, order in w.derivatives:
            where = f"{key}[{i}]"
            if name in symbols:
                raise ExpressionError(
                    f"{name + chr(39) * order} is a derivative of {name!r}, which is a parameter or an input, "
                    "not a state; only states have derivatives in the equations",
                    file=file,
                    key=where,
                    hint=f"if {name} changes with {t.name}, give it an equation of its own; "
                    f"otherwise differentiate its formula by hand",
                )
            if name == t.name:
                raise ExpressionError(
                    f"a derivative of the independent variable {t.name!r} is written", file=file, key=where
                )
            top[name] = max(top.get(name, 0), order)

    owner: dict[str, int] = {}
    targets: list[tuple[str, int]] = []
    for i, w in enumerate(written):
        where = f"{key}[{i}]"
        if w.alone is not None and w.alone[1] == top[w.alone[0]]:
            target = w.alone
        else:
            highest = sorted({n for n, o in w.derivatives if o == top[n]})
            if not highest and w.alone is not None:
                name, order = w.alone
                shown = name + "'" * top[name]
                first = next(j for j, v in enumerate(written) if (name, top[name]) in v.derivatives)
                raise ExpressionError(
                    f"the left side {name + chr(39) * order} is not the highest derivative of {name}: "
                    f"{shown} appears in {key}[{first}], which makes {name + chr(39) * order} a state "
                    "of the reduction to first order",
                    file=file,
                    key=where,
                    hint=f"give {name} one equation, for {shown}; or name the derivative "
                    f"(e.g. v for {name}') and write first-order equations only",
                )
            if not highest:
                raise ExpressionError(
                    f"equation {i + 1} ({lines[i].strip()!r}) holds no highest derivative of any state",
                    file=file,
                    key=where,
                    hint="each equation gives the highest derivative of one state, e.g. \"y'' = -y\"",
                )
            if len(highest) > 1:
                shown = ", ".join(n + "'" * top[n] for n in highest)
                raise ExpressionError(
                    f"equation {i + 1} holds the highest derivatives of several states ({shown}); "
                    "it cannot be read as the equation of one of them",
                    file=file,
                    key=where,
                    hint="write one equation per state with its highest derivative alone on the left",
                )
            target = (highest[0], top[highest[0]])
        name = target[0]
        if name in owner:
            raise ExpressionError(
                f"{name + chr(39) * top[name]} (the highest derivative of {name}) is given by two equations, "
                f"{key}[{owner[name]}] and {key}[{i}]",
                file=file,
                key=where,
                hint=f"give {name} one equation; substitute it where the other uses {name + chr(39) * top[name]}",
            )
        owner[name] = i
        targets.append(target)
    for name in top:
        if name not in owner:
            raise ExpressionError(
                f"{name + chr(39) * top[name]} appears but {name} has no equation of its own",
                file=file,
                key=key,
                hint=f"add an equation for {name}, or declare it as a parameter if it is not a state",
            )
    total = sum(top[n] for n, _ in targets)
    if total > limits.max_dimension:
        raise LimitError(
            f"the reduction to first order gives {total} states, more than the limit of {limits.max_dimension}",
            file=file,
            key=key,
        )

    table: dict[str, sp.Symbol] = dict(symbols)
    table[t.name] = t
    for name, order in top.items():
        table[name] = derivative_symbol(name, 0)
        for k in range(1, order + 1):
            table[marks(name, k)] = derivative_symbol(name, k)
    states = tuple(derivative_symbol(n, k) for n, _ in targets for k in range(top[n]))
    highest_syms = {n: derivative_symbol(n, top[n]) for n in top}
    state_names = [s.name for s in states]

    pairs: list[tuple[sp.Symbol, sp.Expr]] = []
    notices: list[str] = []
    for i, (w, (name, order)) in enumerate(zip(written, targets)):
        where = f"{key}[{i}]"
        try:
            left, n1 = parse_expression(w.lhs, symbols=table, key=where, file=file, limits=limits, states=state_names, t=t, inputs=inputs)
            right, n2 = parse_expression(w.rhs, symbols=table, key=where, file=file, limits=limits, states=state_names, t=t, inputs=inputs)
        except DeriveError as err:
            raise _restore(err, marks) from None
        notices.extend(n1 + n2)
        expr = sp.expand(left - right)
        d = highest_syms[name]
        coeff = sp.diff(expr, d)
        label = f"equation {i + 1} ({name + chr(39) * order})"
        if coeff == 0:
            raise ExpressionError(
                f"{d.name} cancels out of {label}; nothing is left to solve for", file=file, key=where
            )
        if coeff.free_symbols & (set(table.values()) - set(symbols.values()) - {t}) or t in coeff.free_symbols:
            raise ExpressionError(
                f"{label} is not linear in its highest derivative {d.name} with a constant coefficient: "
                f"the coefficient of {d.name} is {coeff}",
                file=file,
                key=where,
                hint=f"write {d.name} times a constant plus terms of lower order",
            )
        rest = sp.expand(expr - coeff * d)
        for other, dsym in highest_syms.items():
            if other != name and rest.has(dsym):
                raise ExpressionError(
                    f"{dsym.name}, the highest derivative of {other}, appears in {label} as well as in its own "
                    f"equation {key}[{owner[other]}]",
                    file=file,
                    key=where,
                    hint=f"substitute the right side of {other}'s equation for {dsym.name}",
                )
        solved = sp.expand(-rest / coeff)
        for k in range(order - 1):
            pairs.append((derivative_symbol(name, k), derivative_symbol(name, k + 1)))
        pairs.append((derivative_symbol(name, order - 1), solved))
    new_states = tuple(s for s in states if "'" in s.name)
    order_by_state = tuple((n, o) for n, o in targets)
    return Reduction(tuple(lines), order_by_state, states, new_states, tuple(pairs), tuple(notices))


def reduction_of(system: object) -> Reduction | None:
    """The reduction behind a System read from equations of higher order, or ``None``.

    Recomputed from ``system.equations`` and its parameters, so no record
    has to travel with the System.
    """
    lines = tuple(getattr(system, "equations", ()) or ())
    t = getattr(system, "t")
    if not lines or not has_higher_order(lines, t_name=t.name):
        return None
    symbols = {p.name: p.symbol for p in getattr(system, "params", ())}
    # The case was checked when it was read, so a name that is neither a
    # parameter nor a state nor a constant is a named input (see derive.inputs).
    states = {s.name.rstrip("'") for s in getattr(system, "states", ())}
    written = {n for line in lines for n in expression_names(line.replace("'", " "))}
    inputs = sorted(
        n for n in written - set(symbols) - states - {t.name} if n not in CONSTANTS and n not in FUNCTIONS
    )
    symbols.update({n: sp.Symbol(n, real=True) for n in inputs})
    return reduce_order(lines, symbols=symbols, t=t, inputs=inputs)
