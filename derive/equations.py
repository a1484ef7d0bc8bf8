"""Equations as text: ``T1' = -(T1 - T2)/5 + q/2`` -> states, A and f.

Each line is one first-order equation.  The left side names the state
(``T1'`` or ``dT1/dt`` with the actual independent variable); the right side
is read with :func:`derive.parsing.parse_expression`.  A is the Jacobian of
the right sides with respect to the states, f the right sides with the states
set to zero; the extraction is exact, and it is refused (with the reason) when
the system is not linear or not constant-coefficient.
"""

from __future__ import annotations

import re
from collections.abc import Collection, Mapping, Sequence

import sympy as sp

from .errors import ExpressionError, LimitError
from .reduction import has_higher_order, reduce_order
from .parsing import (
    CONSTANTS,
    DEFAULT_LIMITS,
    FUNCTIONS,
    Limits,
    expression_names,
    name_problem,
    nearest,
    parse_expression,
    split_names,
    suggest_name,
)

__all__ = ["parse_equations", "split_equation"]

_PRIME_LHS = re.compile(r"\s*([A-Za-z_][A-Za-z0-9_]*)\s*'\s*\Z")
_NAME = r"[A-Za-z_][A-Za-z0-9_]*"


def _leibniz_lhs(t_name: str) -> re.Pattern[str]:
    return re.compile(rf"\s*d\s*({_NAME})\s*/\s*d\s*{re.escape(t_name)}\s*\Z")


def split_equation(line: str, *, t_name: str) -> tuple[str, str] | None:
    """``"x' = rhs"`` or ``"dx/dt = rhs"`` -> ``("x", "rhs")``; ``None`` if the left side is no derivative.

    >>> split_equation("dT1/dt = -T1", t_name="t")
    ('T1', '-T1')
    """
    if line.count("=") != 1:
        return None
    lhs, rhs = line.split("=")
    m = _PRIME_LHS.match(lhs) or _leibniz_lhs(t_name).match(lhs)
    if m is None:
        return None
    return m.group(1), rhs.strip()


_OTHER_LEIBNIZ = re.compile(rf"\s*d\s*({_NAME})\s*/\s*d\s*({_NAME})\s*\Z")
_DOT_NAMES = re.compile(rf"\s*(?:({_NAME}?)_?dot|d({_NAME})dt)\s*\Z")
_SCALED = re.compile(rf"\s*([0-9./]+|{_NAME})\s*\*?\s*({_NAME})\s*'\s*\Z")


def _left_side_hint(lhs: str, t_name: str) -> str:
    """What to write for a left side that is not NAME' or dNAME/dt, guessed from what it looks like."""
    m = _OTHER_LEIBNIZ.match(lhs)
    if m is not None and m.group(2) != t_name:
        return (
            f"the independent variable is {t_name!r} (system.t), not {m.group(2)!r}: "
            f"write d{m.group(1)}/d{t_name} or {m.group(1)}'"
        )
    m = _DOT_NAMES.match(lhs)
    if m is not None and (m.group(1) or m.group(2)):
        name = m.group(1) or m.group(2)
        return f"write the derivative of {name} as {name}' (or d{name}/d{t_name})"
    m = _SCALED.match(lhs)
    if m is not None:
        factor, name = m.groups()
        return f"divide by the factor on the left: write {name}' = (right side)/{factor}"
    return "write it as NAME' = expression, e.g. \"x' = -x\""


def _derivative_on_right(rhs: str, states: Sequence[str], t_name: str) -> str | None:
    """The first derivative written on a right side (``T2'`` or ``dT2/dt``), if any."""
    m = re.search(rf"({_NAME})\s*'", rhs)
    if m is not None and m.group(1) in states:
        return m.group(0).replace(" ", "")
    for m in re.finditer(rf"\bd\s*({_NAME})\s*/\s*d\s*{re.escape(t_name)}\b", rhs):
        if m.group(1) in states:
            return m.group(0).replace(" ", "")
    return None


def _check_line(line: object, where: str, file: str | None, limits: Limits) -> str:
    if not isinstance(line, str):
        raise ExpressionError(
            f"found {type(line).__name__} {line!r}; expected an equation string such as \"x' = -x\"",
            file=file,
            key=where,
        )
    if len(line) > limits.max_length + 100:
        raise LimitError(
            f"the equation has {len(line)} characters, more than the limit of {limits.max_length}",
            file=file,
            key=where,
        )
    return line


def _reduced(
    lines: Sequence[str],
    *,
    symbols: Mapping[str, sp.Symbol],
    t: sp.Symbol,
    key: str,
    file: str | None,
    limits: Limits,
    inputs: Collection[str],
) -> tuple[tuple[sp.Symbol, ...], sp.ImmutableMatrix, sp.ImmutableMatrix, tuple[str, ...]]:
    """Equations of higher order: reduced to first order (derive.reduction), then A and f read off."""
    checked = [_check_line(line, f"{key}[{i}]", file, limits) for i, line in enumerate(lines)]
    red = reduce_order(checked, symbols=symbols, t=t, key=key, file=file, limits=limits, inputs=inputs)
    owner = {name: i for i, (name, _) in enumerate(red.order_by_state)}
    keys = tuple(f"{key}[{owner[s.name.rstrip(chr(39))]}]" for s, _ in red.first_order_equations)
    labels = tuple(f"the first-order equation of {s.name}" for s, _ in red.first_order_equations)
    A, f = linear_rows([e for _, e in red.first_order_equations], red.states, t=t, labels=labels, keys=keys, file=file)
    orders = ", ".join(f"{n} (order {o})" for n, o in red.order_by_state if o > 1)
    notice = (
        f"{key}: equations of higher order reduced to first order: {orders}; "
        f"the states are {', '.join(s.name for s in red.states)}"
    )
    return red.states, A, f, (*red.notices, notice)


def parse_equations(
    lines: Sequence[str],
    *,
    symbols: Mapping[str, sp.Symbol],
    t: sp.Symbol,
    key: str = "system.equations",
    file: str | None = None,
    limits: Limits = DEFAULT_LIMITS,
    inputs: Collection[str] = (),
) -> tuple[tuple[sp.Symbol, ...], sp.ImmutableMatrix, sp.ImmutableMatrix, tuple[str, ...]]:
    """`T1' = -(T1 - T2)/5 + q/2` lines -> (states, A, f, notices).

    ``symbols`` holds the declared parameters (and may hold state symbols to
    reuse); ``t`` is the independent variable.  Keys in errors are
    zero-based (``system.equations[1]`` is the second line).

    >>> t, q = sp.symbols("t q", real=True)
    >>> states, A, f, _ = parse_equations(["x' = -x + q", "y' = x - 2y"], symbols={"q": q}, t=t)
    >>> A, f
    (Matrix([
    [-1,  0],
    [ 1, -2]]), Matrix([
    [q],
    [0]]))
    """
    if isinstance(lines, str) or not isinstance(lines, Sequence):
        raise ExpressionError(
            f"found {type(lines).__name__}; expected a list of equation strings such as [\"x' = -x\"]",
            file=file,
            key=key,
        )
    if not lines:
        raise ExpressionError("the list of equations is empty; expected one equation per state", file=file, key=key)
    if len(lines) > limits.max_dimension:
        raise LimitError(
            f"{len(lines)} equations, more than the limit of {limits.max_dimension} states",
            file=file,
            key=key,
        )

    if has_higher_order(lines, t_name=t.name):
        return _reduced(lines, symbols=symbols, t=t, key=key, file=file, limits=limits, inputs=inputs)

    # First pass: the left sides fix the states and their order.
    names: list[str] = []
    sides: list[str] = []
    for i, line in enumerate(lines):
        where = f"{key}[{i}]"
        line = _check_line(line, where, file, limits)
        if line.count("=") != 1:
            raise ExpressionError(
                f"expected exactly one '=' in {line!r}, found {line.count('=')}", file=file, key=where,
                hint=f"write it as NAME' = expression, e.g. \"x' = -x\" or \"dx/d{t.name} = -x\"",
            )
        parts = split_equation(line, t_name=t.name)
        if parts is None:
            lhs = line.split("=")[0].strip()
            raise ExpressionError(
                f"the left side {lhs!r} is not a derivative; expected NAME' or dNAME/d{t.name}",
                file=file,
                key=where,
                hint=_left_side_hint(lhs, t.name),
            )
        name, rhs = parts
        problem = name_problem(name)
        if problem is not None:
            raise ExpressionError(f"the state name {problem}", file=file, key=where, hint=suggest_name(name))
        if name == t.name:
            raise ExpressionError(
                f"the state {name!r} has the name of the independent variable", file=file, key=where
            )
        if name in names:
            first = names.index(name)
            raise ExpressionError(
                f"duplicate state {name!r}: it already has an equation in {key}[{first}]",
                file=file,
                key=where,
            )
        names.append(name)
        sides.append(rhs)

    states = tuple(
        symbols[n] if n in symbols and isinstance(symbols[n], sp.Symbol) else sp.Symbol(n, real=True) for n in names
    )
    table: dict[str, sp.Symbol] = dict(symbols)
    table.update(zip(names, states))
    table[t.name] = t

    exprs: list[sp.Expr] = []
    notices: list[str] = []
    for i, (name, rhs) in enumerate(zip(names, sides)):
        where = f"{key}[{i}]"
        label = f"equation {i + 1} ({name}')"
        deriv = _derivative_on_right(rhs, names, t.name)
        if deriv is not None:
            raise ExpressionError(
                f"a derivative ({deriv}) appears on the right side of {label}; "
                f"expected a first-order system x' = A x + f({t.name}) with derivatives only on the left",
                file=file,
                key=where,
                hint=f"write each state's derivative only on the left of its own equation, "
                f"and substitute its right side where {deriv} appears",
            )
        for used in expression_names(rhs):
            if used in table or used in CONSTANTS or used in FUNCTIONS or used.startswith("__"):
                # Functions and dunder names are left to the parser, which
                # explains those mistakes better.
                continue
            if used == "t" and t.name != "t":
                continue  # the parser says that the independent variable was renamed
            params = sorted(n for n in symbols if n not in names)
            guess = nearest(used, set(names) | set(params) | {t.name})
            pieces = split_names(used, [*names, *params, t.name])
            if pieces:
                raise ExpressionError(
                    f"{used!r} on the right side of {label} is read as one name, and no state or "
                    "parameter has that name",
                    file=file,
                    key=where,
                    hint=f"write {'*'.join(pieces)} for a product"
                    + (f", or did you mean {guess!r}?" if guess else "")
                    + f" (or declare [parameters.{used}])",
                )
            raise ExpressionError(
                f"{used!r} appears on the right side of {label} but has no equation of its own "
                f"(states: {', '.join(names)}) and is not a declared parameter "
                f"(parameters: {', '.join(params) if params else 'none'})",
                file=file,
                key=where,
                hint=(f"did you mean {guess!r}? " if guess else "")
                + f"add an equation \"{used}' = ...\" or declare [parameters.{used}]",
            )
        expr, found = parse_expression(
            rhs, symbols=table, key=where, file=file, limits=limits, states=names, t=t, inputs=inputs
        )
        notices.extend(found)
        exprs.append(expr)
    labels = tuple(f"equation {i + 1} ({name}')" for i, name in enumerate(names))
    keys = tuple(f"{key}[{i}]" for i in range(len(names)))
    A, f = linear_rows(exprs, states, t=t, labels=labels, keys=keys, file=file)
    return states, A, f, tuple(notices)


def linear_rows(
    exprs: Sequence[sp.Expr],
    states: Sequence[sp.Symbol],
    *,
    t: sp.Symbol,
    labels: Sequence[str],
    keys: Sequence[str],
    file: str | None = None,
) -> tuple[sp.ImmutableMatrix, sp.ImmutableMatrix]:
    """Right sides of x' = A x + f -> (A, f), refused unless linear with constant A.

    >>> x, y, t = sp.symbols("x y t")
    >>> linear_rows([-x + t, x - 2*y], (x, y), t=t, labels=("1", "2"), keys=("k0", "k1"))
    (Matrix([
    [-1,  0],
    [ 1, -2]]), Matrix([
    [t],
    [0]]))
    """
    rows_A: list[list[sp.Expr]] = []
    rows_f: list[sp.Expr] = []
    for expr, label, where in zip(exprs, labels, keys):
        row: list[sp.Expr] = []
        for j, x in enumerate(states):
            coeff = sp.diff(expr, x)
            in_states = sorted((s.name for s in coeff.free_symbols & set(states)))
            if in_states or coeff.has(sp.Derivative):
                raise ExpressionError(
                    f"{label} is not linear in the states: the coefficient of {x.name} is {coeff}, "
                    f"which still depends on {', '.join(in_states)}",
                    file=file,
                    key=where,
                    hint="only sums of (constant) * state + f(t) are accepted",
                )
            if t in coeff.free_symbols:
                raise ExpressionError(
                    f"A must be constant: the coefficient of {x.name} in {label} depends on {t.name} "
                    f"({coeff}): not a constant-coefficient system",
                    file=file,
                    key=where,
                )
            row.append(coeff)
        forcing = expr.subs({x: 0 for x in states})
        rest = sp.expand(expr - sum((c * x for c, x in zip(row, states)), sp.Integer(0)) - forcing)
        if rest != 0 and rest.free_symbols & set(states):
            # Belt and braces: every nonlinear term has a state in its derivative,
            # so this only fires for something the Jacobian test missed.
            raise ExpressionError(
                f"{label} is not linear in the states: {rest} is left after taking out A x",
                file=file,
                key=where,
            )
        rows_A.append(row)
        rows_f.append(forcing)

    return sp.ImmutableMatrix(rows_A), sp.ImmutableMatrix(rows_f)
