"""The mathematics of the Result section, shared by every format: compact exact form, decimals, names.

Each component is written as a sum over its modes with short exact
coefficients (``derive.documents.coefficients``); a sinusoidal steady state
as A_k sin(omega t + phi_k); beside it, when every parameter has a value, the
same component with decimals; under it, "where" and every name it uses.  The
verified x(t) itself is not changed: these are its display.

A coefficient that is a long polynomial in the parts sigma_k, omega_k of
indexed roots is shown as a_kj (state k, term j) in the Result, kappa_n in
the derivation (``coefficients.compact``'s register); both are listed exactly,
with decimals, in the appendix ("Exact coefficients").
"""

from __future__ import annotations

from typing import Any

import sympy as sp

from ..model import Solution
from ..render.printers import condition_text, interval_conditions as printer_conditions
from ..render.terms import Terms
from .blocks import Block, Eq, Math, Name, P
from .coefficients import (NAMES_KEY, Naming, compact, decimal_number, decimal_terms, is_long_in_roots, parameter_values,
                           steady_sinusoids, where_blocks)
from .sheet_steps import StepContext

__all__ = ["result_blocks", "ResultForms", "result_forms", "result_record", "component_rows", "interval_conditions"]


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
        #: (name, exact value) of each coefficient too long for the Result's line; listed in the appendix
        self.coefficients: list[tuple[sp.Symbol, sp.Expr]] = []
        letter = naming.pick(("a", "kappa", "alpha"))
        for k, e in enumerate(solution.x):
            shown = compact(e, t, naming, values=values or {}, sinusoid=self.sinusoids.get(k))
            dec = decimal_terms(e, t, values, sinusoid=self.sinusoids.get(k), naming=naming) if values is not None else None
            if dec is not None:
                shown = self._named(shown, k, letter, naming, ctx)
            self.exact.append(shown)
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

    def _named(self, shown: Any, k: int, letter: str, naming: Naming, ctx: StepContext) -> Any:
        """``shown`` with each long coefficient in indexed roots replaced by a name a_kj (recorded).

        A coefficient in the parts sigma_k, omega_k of indexed roots is a
        polynomial with long integers: exact, but no line holds it.  With
        every value known the decimal line below says what it is, and the
        exact value is listed once, in the appendix.  A switched result is
        named interval by interval, j running on across the intervals.
        """
        if not isinstance(shown, sp.Piecewise):
            return self._named_terms(shown, k, 0, letter, naming, ctx)[0]
        pieces, first = [], 0
        for value, cond in shown.args:
            value, first = self._named_terms(value, k, first, letter, naming, ctx)
            pieces.append((value, cond))
        return sp.Piecewise(*pieces, evaluate=False)

    def _named_terms(self, shown: Any, k: int, first: int, letter: str, naming: Naming,
                     ctx: StepContext) -> tuple[Any, int]:
        """``_named`` of one sum of modes whose terms are numbered from ``first``; and the next number."""
        terms = list(shown.args) if isinstance(shown, Terms) else [shown]
        out = []
        for j, term in enumerate(terms, start=first):
            factors = list(sp.Mul.make_args(term)) if term.is_Mul else [term]
            coeff = [f for f in factors if not f.has(ctx.t)]
            mode = [f for f in factors if f.has(ctx.t)]
            value = sp.Mul(*coeff, evaluate=False) if len(coeff) > 1 else sp.Mul(*coeff)
            if not mode or not is_long_in_roots(value, naming):
                out.append(term)
                continue
            name = sp.Symbol(f"{letter}_{k + 1}{j + 1}" if j < 9 and k < 9 else f"{letter}_{k + 1},{j + 1}")
            self.coefficients.append((name, value))
            out.append(sp.Mul(name, *mode, evaluate=False))
        return (Terms(*out) if isinstance(shown, Terms) else out[0]), first + len(terms)


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
        rows += component_rows(name, exact, dec, ctx)
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
    derivation = [(sym, value) for value, sym in ctx.cache.get(NAMES_KEY, {}).items()]
    if forms.coefficients or derivation:
        # after a switch the state handed over brings e^{sigma_1}, cos(omega_1) of the switching time along
        switched = any(isinstance(x, sp.Piecewise) for x in solution.x)
        also = ", and in their exponentials, sines and cosines at the switching times" if switched else ""
        blocks: list[Block] = [
            P("Each long coefficient named on the sheet, exactly, as a polynomial in the real and imaginary parts "
              f"of the indexed eigenvalues{also} (rational content first), then its decimal:")]
        for group in (forms.coefficients, derivation):
            if group:
                blocks.append(Eq(tuple(row for sym, value in group for row in _with_decimal(sym, value, ctx))))
        label = ctx.to_appendix("Exact coefficients", None, "", blocks)
        said: list[Any] = []
        if forms.coefficients:
            said += ["The coefficients ", Math(forms.coefficients[0][0]), " to ", Math(forms.coefficients[-1][0]),
                     " of the result (their decimals are on the line below each component)"]
        if derivation:
            said += [" and " if said else "The coefficients ", Math(derivation[0][0]), " to ", Math(derivation[-1][0]),
                     " of the derivation"]
        out.append(P(*said, f" are polynomials in the real and imaginary parts of the indexed eigenvalues{also}, listed exactly "
                     f"with their decimals in Appendix {label}."))
    return out


def component_rows(name: Name, exact: Any, dec: Any, ctx: StepContext) -> list[tuple[Name, Any]]:
    """``name = exact`` and the decimal row below it; a switched value interval by interval, each
    interval's condition leading its row ("for t >= 1: x_1(t) = ...") and its decimals under it."""
    fmt = ctx.fmt
    if not isinstance(exact, sp.Piecewise):
        pairs = [(name, exact, dec)]
    else:
        decs = list(dec.args) if isinstance(dec, sp.Piecewise) and len(dec.args) == len(exact.args) else None
        pairs = []
        for j, ((value, _), (tex, plain)) in enumerate(zip(exact.args, interval_conditions(exact, fmt))):
            pairs.append((Name(rf"\text{{for }} {tex}:\quad {name.latex}", f"for {plain}: {name.plain}"), value,
                          decs[j][0] if decs else None))
    rows: list[tuple[Name, Any]] = []
    for lhs, value, number in pairs:
        rows.append((lhs, value))
        if number is not None and fmt.m(number) != fmt.m(value):
            # in plain text the decimals stand under the exact line's "="
            rows.append((Name("", " " * len(lhs.plain)), (r"\approx", number)))
    return rows


def interval_conditions(expr: sp.Piecewise, fmt: Any) -> list[tuple[str, str]]:
    """Each interval's condition of a piecewise value in LaTeX and plain text, as a checker writes it:
    t < 1, then 1 <= t < 3, then t >= 3 for the last (the printers' one rule, ``printers.interval_conditions``)."""
    return [(condition_text(low, cond, fmt.m, le=r"\leq", ge=r"\geq", otherwise=r"\text{otherwise}"),
             condition_text(low, cond, fmt.plain, le="≤", ge="≥", otherwise="otherwise"))
            for low, cond in printer_conditions(expr)]


def _with_decimal(sym: sp.Symbol, value: sp.Expr, ctx: StepContext) -> list[tuple[Name, Any]]:
    """The row ``sym = value`` and, below it, the row of its decimal."""
    fmt = ctx.fmt
    rows: list[tuple[Name, Any]] = [(Name(fmt.m(sym), fmt.plain(sym)), value)]
    number = decimal_number(ctx.naming.back(value))
    if number is not None:
        rows.append((Name("", ""), (r"\approx", number)))
    return rows


def result_record(solution: Solution, ctx: StepContext) -> dict[str, Any]:
    """The compact forms for JSON: the exact form in the names, the decimal form and the names, as strings."""
    forms = result_forms(solution, ctx)
    fmt = ctx.fmt
    return {
        "x_compact": [fmt.plain(e) for e in forms.exact],
        "x_decimal": [None if d is None else fmt.plain(d) for d in forms.decimal],
        "where": {fmt.plain(sym): str(value) for sym, value in forms.where},
        "coefficients": {fmt.plain(sym): fmt.plain(value) for sym, value in forms.coefficients},
    }
