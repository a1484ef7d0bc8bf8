"""Blocks of the values step (parameter values put into the algebra) and of the outputs step (y = C x + D u).

Registered in ``derive.documents.sheet_steps.STEP_BLOCKS``; ``result_rows``
gives the outputs' rows for the Result section, written like the states.
"""

from __future__ import annotations

from typing import Any

import sympy as sp

from ..model import Solution
from ..render.printing import MathFormatter
from .blocks import Block, Eq, Heading, Inline, Math, N, Name, P

__all__ = ["values_blocks", "output_blocks", "output_rows", "result_rows"]


def values_blocks(s: Any, c: Any) -> list[Block]:
    """The values step: each parameter's value, then A, f (and x0) with the values in."""
    f = c.fmt
    T, Tp = f.m(s.t), f.plain(s.t)
    out: list[Block] = [
        Heading(3, "Parameter values put into the algebra"),
        P("As asked for, the declared parameter values are put into the system before the decomposition, "
          "so the derivation that follows is exact and numeric: ", *_listed(s.values), "."),
    ]
    rows: list[tuple[Name, Any]] = [(N("A", "A"), s.A)]
    if s.f != s.f_symbolic or any(e != 0 for e in s.f):
        rows.append((N(f"f({T})", f"f({Tp})"), s.f))
    if s.x0 is not None and s.x0 != s.x0_symbolic:
        rows.append((N("x_0", "x0"), s.x0))
    out += [P("With them:", runs_on=True), Eq(tuple(rows))]
    return out


def _listed(values: tuple[tuple[sp.Symbol, sp.Expr], ...]) -> list[Inline]:
    """``k = 4, m = 1`` as inline parts (or a word when no parameter is used)."""
    if not values:
        return ["no parameter is used"]
    parts: list[Inline] = []
    for i, (p, v) in enumerate(values):
        parts += [", " if i else "", Math(sp.Eq(p, v, evaluate=False))]
    return [x for x in parts if x != ""]


def output_blocks(s: Any, c: Any) -> list[Block]:
    """The outputs step: the outputs as asked for, C and D, u(t), and y(t) = C x(t) + D u(t)."""
    f = c.fmt
    T, Tp = f.m(s.t), f.plain(s.t)
    if len(s.inputs) > 1:
        u_is: list[Inline] = [" with the input vector ", N(f"u = ({c.m_list(s.inputs)})^{{T}}", f"u = ({c.plain_list(s.inputs)})^T")]
    elif s.inputs:
        u_is = [" with u the declared input"]
        if s.inputs[0].name != "u":
            u_is += [" ", Math(s.inputs[0])]
    else:
        u_is = [" with ", N(f"u = f({T})", f"u = f({Tp})"), ", the forcing"]
    out: list[Block] = [
        Heading(3, "Outputs"),
        P("The outputs are linear combinations of the states", " and the inputs" if s.inputs else "",
          ", so they are written ", N(rf"y = C\,x + D\,u", "y = C x + D u"), *u_is, ":"),
    ]
    if any(w is not None for w in s.written):
        out.append(Eq(tuple(_named(f, n, w) for n, w in zip(s.names, s.written) if w is not None)))
    out.append(P("Reading off the coefficient of each state", " and input" if s.inputs else "", ":", runs_on=True))
    if any(e != 0 for e in s.D):
        out.append(Eq(((N("C", "C"), s.C), (N("D", "D"), s.D))))
    else:
        out += [Eq(((N("C", "C"), s.C),)), P("and ", N("D = 0", "D = 0"), ": no output takes the input directly.")]
    if s.inputs:
        out += [P("with the inputs"), Eq(tuple((c.fn(u), s.u[i]) for i, u in enumerate(s.inputs)))]
    out += [
        P("Putting in ", N(f"x({T})", f"x({Tp})"), " from the result",
          *((" and ", N(f"u({T})", f"u({Tp})")) if any(e != 0 for e in s.D) else ()), ":"),
        Eq(tuple(output_rows(f, s.names, s.t, s.y))),
        P("Checked: ", N(r"y - (C\,x + D\,u) = 0", "y - (C x + D u) = 0"),
          f" for each output, and each output as written agrees with its row ({s.method})."),
    ]
    return out


def _named(fmt: MathFormatter, name: sp.Symbol, expr: sp.Expr) -> tuple[Name, Any]:
    return (Name(fmt.m(name), fmt.plain(name)), expr)


def output_rows(fmt: MathFormatter, names: tuple[sp.Symbol, ...], t: sp.Symbol, y: sp.MatrixBase) -> list[tuple[Name, Any]]:
    """(``y_1(t)``, expression) rows for the outputs, as ``StepContext.state_rows`` does for the states."""
    return [
        (Name(f"{{{fmt.m(n)}}}({fmt.m(t)})", f"{fmt.plain(n)}({fmt.plain(t)})"), y[i]) for i, n in enumerate(names)
    ]


def result_rows(solution: Solution, fmt: MathFormatter) -> list[Block]:
    """The outputs in the Result section, after the states (empty without outputs)."""
    o = solution.outputs
    if o is None:
        return []
    return [P("The outputs:"), Eq(tuple(output_rows(fmt, o.symbols, solution.system.t, o.y)))]
