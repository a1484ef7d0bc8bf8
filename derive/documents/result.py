"""The mathematics of the Result section, shared by every format: compact exact form, decimals, names.

Each component is written as a sum over its modes with short exact
coefficients (``derive.documents.coefficients``); a sinusoidal steady state
as A_k sin(omega t + phi_k); beside it, when every parameter has a value, the
same component with decimals; under it, "where" and every name it uses.  The
verified x(t) itself is not changed: these are its display.
"""

from __future__ import annotations

from typing import Any

import sympy as sp

from ..model import Solution
from .blocks import Block, Eq, Name, P
from .coefficients import compact, decimal_terms, parameter_values, steady_sinusoids, where_blocks
from .sheet_steps import StepContext

__all__ = ["result_blocks", "ResultForms", "result_forms", "result_record"]


class ResultForms:
    """The Result's display forms of one solution: exact (in the names), decimal, and the names used."""

    def __init__(self, solution: Solution, ctx: StepContext) -> None:
        t = solution.system.t
        naming = ctx.naming
        self.naming = naming
        values = parameter_values(solution)
        self.sinusoids = steady_sinusoids(solution, naming)
        self.exact: list[Any] = []
        self.decimal: list[Any | None] = []
        for k, e in enumerate(solution.x):
            self.exact.append(compact(e, t, naming, values=values or {}, sinusoid=self.sinusoids.get(k)))
            dec = decimal_terms(e, t, values, sinusoid=self.sinusoids.get(k)) if values is not None else None
            self.decimal.append(dec)
        waves: list[tuple[sp.Symbol, sp.Expr]] = []
        for _, s in sorted(self.sinusoids.items()):
            waves += [(s.amplitude_name, s.amplitude_shown), (s.phase_name, s.phase_shown)]
        used: set[sp.Basic] = set()
        for e in [*self.exact, *(v for _, v in waves)]:
            used |= getattr(e, "free_symbols", set())
        # a name defined through another (Gamma in omega) brings that one along
        for sym, value in reversed(naming.rows):
            if sym in used:
                used |= value.free_symbols
        rows = [(sym, value) for sym, value in naming.rows if sym in used] + waves
        self.where = rows


def result_forms(solution: Solution, ctx: StepContext) -> ResultForms:
    """The display forms of ``solution``'s result (computed once per context)."""
    if "result" not in ctx.cache:
        ctx.cache["result"] = ResultForms(solution, ctx)
    return ctx.cache["result"]


def result_blocks(solution: Solution, ctx: StepContext) -> list[Block]:
    """The component rows (exact, then decimals), the "where" list and the parts of the Result."""
    forms = result_forms(solution, ctx)
    fmt = ctx.fmt
    rows: list[tuple[Name, Any]] = []
    for k, (exact, dec) in enumerate(zip(forms.exact, forms.decimal)):
        name = ctx.state_name(k)
        rows.append((name, exact))
        if dec is not None and fmt.m(dec) != fmt.m(exact):
            rows.append((Name("", ""), (r"\approx", dec)))
    out: list[Block] = [
        P("The solution, component by component, collected by mode (constant, each exponential, the input's own "
          "modes), each exact coefficient over one denominator"
          + (", with its decimals (4 significant figures) on the line below" if any(d is not None for d in forms.decimal) else "")
          + ":"),
        Eq(tuple(rows)),
    ]
    if forms.where:
        out += where_blocks(forms.where, fmt, values=parameter_values(solution) or {})
    if any(e != 0 for e in solution.particular):
        # the split is a checker's cross-reference, not the result: it sits with the other long algebra
        label = ctx.to_appendix("Homogeneous and particular parts of the result", None, "", [
            P("The homogeneous part (free response) and the particular part (forced response), whose sum is the result:"),
            Eq(ctx.state_rows(solution.homogeneous, "h")),
            Eq(ctx.state_rows(solution.particular, "p")),
        ])
        out.append(P(f"Its homogeneous part (free response) and particular part (forced response) are written out in Appendix {label}."))
    return out


def result_record(solution: Solution, ctx: StepContext) -> dict[str, Any]:
    """The compact forms for JSON: the exact form in the names, the decimal form and the names, as strings."""
    forms = result_forms(solution, ctx)
    fmt = ctx.fmt
    return {
        "x_compact": [fmt.plain(e) for e in forms.exact],
        "x_decimal": [None if d is None else fmt.plain(d) for d in forms.decimal],
        "where": {fmt.plain(sym): str(value) for sym, value in forms.where},
    }
