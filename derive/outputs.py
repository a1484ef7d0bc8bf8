"""Outputs y = C x + D u: read from ``[outputs]`` or ``outputs=``, derived from the solution, verified.

An output is a linear combination of the states and the inputs with
coefficients in the parameters, written as text (``spring_force =
"k*(x1 - x2)"``, read only by :func:`derive.parsing.parse_expression`) or as
the matrices C and D.  The input vector u is the declared inputs of
``[inputs]`` when the case has them, else the forcing vector f.  After the
solve, y(t) = C x(t) + D u(t) is formed, checked against the outputs as
written with the zero engine, and recorded on the Solution with its step.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import replace
from typing import Any, Callable, TypeAlias

import sympy as sp

from .errors import CaseFileError, InputError
from .names import name_problem, suggest_name
from .parsing import DEFAULT_LIMITS, Limits, parse_expression
from .options import Outputs, OutputSpec
from .valuetext import show, type_name

__all__ = ["OutputSpec", "Outputs", "read_outputs", "outputs_from_mapping", "linear_row", "attach_outputs"]

Matrix: TypeAlias = sp.ImmutableMatrix
#: keys of the matrix form of [outputs]
MATRIX_KEYS = ("C", "D", "names")


def linear_row(
    expr: sp.Expr,
    states: Sequence[sp.Symbol],
    inputs: Sequence[sp.Symbol],
    fail: Callable[[str], Exception],
) -> tuple[list[sp.Expr], list[sp.Expr]]:
    """The coefficients of ``expr`` on the states and on the inputs; ``fail(reason)`` when it is not linear.

    >>> x, y, k = sp.symbols("x y k")
    >>> linear_row(k * (x - y), [x, y], [], ValueError)
    ([k, -k], [])
    """
    gens = list(states) + list(inputs)
    coeffs = []
    for g in gens:
        c = sp.diff(expr, g)
        if c.free_symbols & set(gens):
            raise fail(f"it is not linear in {g}: its coefficient {_said(c)} still holds a state or an input")
        coeffs.append(c)
    rest = sp.expand(expr - sum((c * g for c, g in zip(coeffs, gens)), sp.Integer(0)))
    if rest != 0 and sp.cancel(rest) != 0:
        if rest.free_symbols & set(gens):
            raise fail(f"it is not linear in the states and inputs (the part {_said(rest)} is left over)")
        raise fail(f"it has the term {_said(rest)}, which multiplies no state or input")
    return coeffs[: len(states)], coeffs[len(states):]


def _said(e: sp.Expr) -> str:
    return sp.sstr(e).replace("**", "^")


def _expected(states: Sequence[sp.Symbol], inputs: Sequence[sp.Symbol]) -> str:
    names = ", ".join(s.name for s in states)
    extra = f" and the inputs ({', '.join(s.name for s in inputs)})" if inputs else ""
    return f"expected a linear combination of the states ({names}){extra} with coefficients in the parameters"


def _check_name(name: object, taken: Mapping[str, str], key: str, error: Callable[..., Exception]) -> str:
    if not isinstance(name, str):
        raise error(key, f"{key} is {type_name(name)} ({show(name)}); expected an output name")
    problem = name_problem(name)
    if problem is not None:
        raise error(key, f"the output name {problem}", hint=suggest_name(name))
    if name in taken:
        raise error(key, f"the output {name!r} has the name of {taken[name]}; expected a name of its own")
    return name


def _spec_from_texts(
    items: Mapping[str, object],
    *,
    states: Sequence[sp.Symbol],
    params: Mapping[str, sp.Symbol],
    inputs: Sequence[tuple[sp.Symbol, sp.Expr]],
    t: sp.Symbol,
    n_u: int,
    prefix: str,
    where: str,
    error: Callable[..., Exception],
    file: str | None,
    limits: Limits,
) -> OutputSpec:
    u_syms = [s for s, _ in inputs]
    taken = {s.name: "a state" for s in states} | {p: "a parameter" for p in params} | {s.name: "an input" for s in u_syms}
    taken[t.name] = "the independent variable"
    symbols = {**params, **{s.name: s for s in states}, **{s.name: s for s in u_syms}, t.name: t}
    names, rows_c, rows_d, written, exprs = [], [], [], [], []
    for name, value in items.items():
        key = f"{prefix}{name}" if prefix.endswith(".") else f"{prefix}[{name}]"
        _check_name(name, taken, key, error)
        if isinstance(value, sp.Basic):
            expr, text = value, _said(value)
        else:
            if isinstance(value, bool) or not isinstance(value, (str, int, float)):
                raise error(key, f"{key} is {type_name(value)} ({show(value)}); " + _expected(states, u_syms) + ', e.g. "k*(x1 - x2)"')
            try:
                expr, _ = parse_expression(
                    value, symbols=symbols, key=key, file=file, limits=limits, states=(), t=t,
                    inputs=[s.name for s in u_syms],
                )
            except InputError as err:
                # the parser says what is wrong with the text; the output adds what it must be
                err.message = f"{err.message} in {where}; " + _expected(states, u_syms)
                raise
            text = str(value)
        if t in expr.free_symbols:
            raise error(key, f"{key} = {show(value)} depends on {t.name} itself in {where}; " + _expected(states, u_syms))

        def fail(reason: str, key: str = key, value: object = value) -> Exception:
            return error(key, f"{key} = {show(value)} in {where}: {reason}; " + _expected(states, u_syms))

        c, d = linear_row(expr, states, u_syms, fail)
        names.append(name)
        rows_c.append(c)
        rows_d.append(d if u_syms else [sp.Integer(0)] * n_u)
        written.append(text)
        exprs.append(expr)
    if not names:
        raise error(prefix.rstrip("."), f"{where} is empty; expected at least one output, e.g. spring_force = \"k*(x1 - x2)\"")
    n = len(states)
    return OutputSpec(
        names=tuple(names),
        C=Matrix(len(names), n, [e for r in rows_c for e in r]),
        D=Matrix(len(names), n_u, [e for r in rows_d for e in r]),
        written=tuple(written),
        inputs=tuple(inputs),
        exprs=tuple(exprs),
        asked=tuple(exprs),
    )


def read_outputs(
    raw: object,
    *,
    states: Sequence[sp.Symbol],
    params: Mapping[str, sp.Symbol],
    inputs: Sequence[tuple[sp.Symbol, sp.Expr]] = (),
    t: sp.Symbol,
    file: str | None = None,
    limits: Limits = DEFAULT_LIMITS,
) -> OutputSpec:
    """The ``[outputs]`` table: ``name = "expression"`` lines, or the matrices ``C`` and ``D`` (and ``names``)."""

    def error(key: str, message: str, *, hint: str | None = None) -> Exception:
        return CaseFileError(message, file=file, key=key, hint=hint)

    if not isinstance(raw, dict):
        raise error("outputs", f"outputs is {type_name(raw)} ({show(raw)}); expected a table such as [outputs] y = \"x1 - x2\"")
    n_u = len(inputs) if inputs else len(states)
    if not any(k in raw for k in ("C", "D")):
        return _spec_from_texts(
            raw, states=states, params=params, inputs=inputs, t=t, n_u=n_u, prefix="outputs.",
            where="[outputs]", error=error, file=file, limits=limits,
        )
    for k in raw:
        if k not in MATRIX_KEYS:
            raise error(f"outputs.{k}", f"[outputs] gives C or D, so every key is expected to be one of {', '.join(MATRIX_KEYS)}; found {k!r}",
                        hint="write either name = \"expression\" lines or the matrices C and D, not both")
    if "C" not in raw:
        raise error("outputs.C", "[outputs] gives D but not C; expected both (C multiplies the states)")
    C = _matrix(raw["C"], "outputs.C", len(states), params, error, file, limits, "the states")
    p = C.rows
    u_what = "the declared inputs" if inputs else "the entries of the forcing f"
    D = _matrix(raw["D"], "outputs.D", n_u, params, error, file, limits, u_what, rows=p) if "D" in raw else Matrix.zeros(p, n_u)
    if "names" in raw:
        given = raw["names"]
        if not isinstance(given, list) or len(given) != p:
            raise error("outputs.names", f"outputs.names is {show(given)}; expected a list of {p} names, one per row of C")
        taken = {s.name: "a state" for s in states} | {q: "a parameter" for q in params} | {s.name: "an input" for s, _ in inputs}
        names = tuple(_check_name(v, taken, f"outputs.names[{i}]", error) for i, v in enumerate(given))
        if len(set(names)) != p:
            raise error("outputs.names", "outputs.names repeats a name; expected one name per output")
    else:
        names = tuple(f"y{i + 1}" for i in range(p))
    return OutputSpec(names=names, C=C, D=D, written=("",) * p, inputs=tuple(inputs), exprs=(None,) * p, asked=(None,) * p)


def _matrix(
    raw: object,
    key: str,
    cols: int,
    params: Mapping[str, sp.Symbol],
    error: Callable[..., Exception],
    file: str | None,
    limits: Limits,
    what: str,
    *,
    rows: int | None = None,
) -> Matrix:
    shape = f"{rows if rows is not None else 'p'} rows of {cols} entries (one column per entry of {what})"
    if not isinstance(raw, list) or not raw or not all(isinstance(r, list) for r in raw):
        raise error(key, f"{key} is {show(raw)}; expected a list of rows: {shape}")
    if (rows is not None and len(raw) != rows) or any(len(r) != cols for r in raw):
        found = f"{len(raw)} rows of lengths {[len(r) for r in raw]}"
        raise error(key, f"{key} has {found}; expected {shape}")
    out = []
    for i, row in enumerate(raw):
        for j, v in enumerate(row):
            ekey = f"{key}[{i}][{j}]"
            if isinstance(v, bool) or not isinstance(v, (str, int, float)):
                raise error(ekey, f"{ekey} is {type_name(v)} ({show(v)}); expected a number or an expression in the parameters")
            e, _ = parse_expression(v, symbols=params, key=ekey, file=file, limits=limits)
            out.append(e)
    return Matrix(len(raw), cols, out)


def outputs_from_mapping(
    outputs: Mapping[str, object],
    *,
    states: Sequence[sp.Symbol],
    params: Mapping[str, sp.Symbol],
    inputs: Sequence[tuple[sp.Symbol, sp.Expr]] = (),
    t: sp.Symbol,
    file: str | None = None,
) -> OutputSpec:
    """``outputs={"name": "expression"}`` of the API (or of ``solve_case``) as a spec."""

    def error(key: str, message: str, *, hint: str | None = None) -> Exception:
        return InputError(message, file=file, key=key, hint=hint)

    if not isinstance(outputs, Mapping):
        raise InputError(f"outputs is {type_name(outputs)}; expected a mapping of names to expressions", key="outputs")
    n_u = len(inputs) if inputs else len(states)
    return _spec_from_texts(
        dict(outputs), states=states, params=params, inputs=inputs, t=t, n_u=n_u, prefix="outputs",
        where="outputs", error=error, file=file, limits=DEFAULT_LIMITS,
    )


def attach_outputs(solution: Any, spec: OutputSpec) -> Any:
    """The Solution with its outputs: y = C x + D u formed, verified with the zero engine, and its step added.

    ``spec`` must already carry the relations and values the solve used.
    """
    from .recombine import tidy
    from .steps import OutputStep
    from .verify.zero import decide

    system = solution.system
    t, x = system.t, solution.x
    if spec.inputs:
        u_names = tuple(s for s, _ in spec.inputs)
        u = Matrix([f for _, f in spec.inputs])
    else:
        u_names, u = (), Matrix(system.f)
    raw = spec.C * x + spec.D * u
    y = Matrix([tidy(e, solution.constants, t) for e in raw])
    # y as formed, and the outputs as written with x(t) and u(t) put in: both equal C x + D u
    checks = [y[i] - raw[i] for i in range(len(spec.names))]
    checks += _written_checks(spec, system, x, u_names, u, raw)
    verdicts = [decide(e, t=t) for e in checks]
    verified = all(v.zero for v in verdicts)
    kinds = {v.method for v in verdicts}
    method = "exact" if kinds <= {"exact"} else "; ".join(sorted(kinds))
    symbols = tuple(sp.Symbol(nm, real=True) for nm in spec.names)
    out = Outputs(
        names=spec.names, symbols=symbols, C=spec.C, D=spec.D, u_names=u_names, u=u, y=y,
        written=spec.written, verified=verified, method=method,
    )
    step = OutputStep(
        t=t, states=system.states, names=symbols, written=spec.asked, C=spec.C, D=spec.D,
        inputs=u_names, u=u, y=y, method=method,
    )
    note = (
        f"Outputs y = C x + D u ({', '.join(spec.names)}): each equals its row of C x + D u ({method})"
        if verified else f"Outputs y = C x + D u ({', '.join(spec.names)}): NOT equal to C x + D u"
    )
    ver = replace(solution.verification, notes=solution.verification.notes + (note,))
    return replace(solution, outputs=out, steps=solution.steps + (step,), verification=ver)


def _written_checks(spec: OutputSpec, system: Any, x: Matrix, u_names: tuple, u: Matrix, raw: Matrix) -> list[sp.Expr]:
    """Each output as written, with x(t) and u(t) put in, against its row of C x + D u."""
    rep = {s: x[i] for i, s in enumerate(system.states)} | {s: u[j] for j, s in enumerate(u_names)}
    return [e.xreplace(rep) - raw[i] for i, e in enumerate(spec.exprs) if e is not None]
