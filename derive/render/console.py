"""The few lines the command line prints about a solution: what a user reads first.

Mathematics is printed as the plain-text sheet prints it (``MathFormatter.plain``:
named indexed roots lambda_k, sigma_k, omega_k with their decimals, powers
with ^, unicode letters), in a short form: the eigenvalues, each state's
solution when it is short (the Result's compact form,
``derive.documents.result``), else its decimal line from the same place, with
the file that holds the full exact form; then the verdict and the conditions.
Nothing here computes mathematics of its own.
"""

from __future__ import annotations

from typing import Any, Sequence

import sympy as sp

from ..documents.coefficients import decimal_terms, parameter_values
from ..documents.result import result_forms
from ..documents.sheet import sheet_lambda
from ..documents.sheet_steps import StepContext
from ..model import Solution
from ..rootring import atoms_of
from .escape import spoken
from .printing import MathFormatter, collect_roots, root_legend_rows
from .terms import Terms

__all__ = ["summary_lines", "SHORT", "relation_text", "preferred_file"]

#: characters of an exact form still shown on the terminal; longer ones are given in decimals
SHORT = 160

_RELATIONS = {"!= 0": "≠ 0", ">= 0": "≥ 0", "<= 0": "≤ 0"}


def relation_text(relation: str) -> str:
    """A condition's relation to zero as mathematics.

    >>> relation_text("!= 0"), relation_text("< 0")
    ('≠ 0', '< 0')
    """
    return _RELATIONS.get(str(relation), str(relation))


def _eigenvalue_lines(solution: Solution, fmt: MathFormatter, lam: sp.Symbol) -> list[str]:
    """The eigenvalues, named where indexed, each with its decimal; the polynomial of the indexed ones."""
    shown: list[str] = []
    decimals: list[str] = []
    for e in solution.eigenvalues:
        text = fmt.plain(e)
        dec = fmt.decimal(e, latex=False) if atoms_of(e, sp.CRootOf) else ""
        head, sep, tail = decimals[-1].rpartition(" + ") if decimals else ("", "", "")
        if dec and sep and tail.endswith(" i") and dec == f"{head} - {tail}":
            # a conjugate pair on one line: lambda_1, lambda_2 ≈ a ± b i
            shown[-1] = f"{shown[-1].split(' ≈ ')[0]}, {text} ≈ {head} ± {tail}"
            decimals[-1] = ""
            continue
        shown.append(f"{text} ≈ {dec}" if dec else text)
        decimals.append(dec)
    lines = [f"eigenvalues: {', '.join(shown)}"]
    wanted = [r for r in fmt.roots if r.letter == "lambda"]
    for _, group in root_legend_rows(wanted):
        names = ", ".join(fmt.plain(r.root) for r in group)
        lines.append(f"  {names}: the roots of q({fmt.plain(lam)}) = {fmt.plain(group[0].polynomial(lam))} = 0")
    return lines


def _state_lines(solution: Solution, ctx: StepContext, where_file: str | None) -> list[str]:
    """One line per state (and output): the short exact form, else the decimals and where the exact form is."""
    fmt = ctx.fmt
    forms = result_forms(solution, ctx)
    t = solution.system.t
    coefficient_names = {sym for sym, _ in forms.coefficients}
    used: set[sp.Basic] = set()
    long_forms = False
    lines: list[str] = []

    values = parameter_values(solution)

    def one(name: str, exact: Any, decimal: Any) -> str:
        nonlocal long_forms
        text = fmt.plain(exact)
        if len(text) <= SHORT and not (getattr(exact, "free_symbols", set()) & coefficient_names):
            used.update(getattr(exact, "free_symbols", set()))
            return f"  {name} = {text}"
        long_forms = True
        if decimal is not None:
            return f"  {name} ≈ {fmt.plain(decimal)}"
        return f"  {name}: an exact form too long for the terminal"

    T = fmt.plain(t)
    for k, state in enumerate(solution.system.states):
        lines.append(one(f"{fmt.plain(state)}({T})", forms.exact[k], forms.decimal[k]))
    if solution.outputs is not None:
        for name, y in zip(solution.outputs.names, solution.outputs.y):
            dec = decimal_terms(y, t, values, naming=ctx.naming) if values is not None else None
            lines.append(one(f"output {name}({T})", ctx.naming.hold(y), dec))
    where = [f"{fmt.plain(sym)} = {fmt.plain(value)}" for sym, value in forms.where if sym in used]
    parts = [f"{fmt.plain(sym)} ≈ {r.decimal}" for r in fmt.roots if r.letter != "lambda"
             for root, sym in ctx.naming.roots if root == r.root and sym in used]
    if where or parts:
        lines.append("  where " + ", ".join([*where, *parts]))
    if long_forms:
        lines.append(f"  (decimals to 4 significant figures; the full exact form is in {where_file or 'the sheet'})")
    return lines


def _condition_lines(solution: Solution, fmt: MathFormatter) -> list[str]:
    """The conditions, those of one reason on one line."""
    by_reason: dict[str, list[str]] = {}
    for c in solution.conditions:
        by_reason.setdefault(spoken(c.reason), []).append(f"{fmt.plain(c.expr)} {relation_text(c.relation)}")
    return [f"  holds when {', '.join(items)} ({reason})" for reason, items in by_reason.items()]


def summary_lines(solution: Solution, *, exact_in: str | None = None) -> list[str]:
    """The terminal summary of ``solution``: eigenvalues, states, verdict, conditions (no program notation).

    ``exact_in`` names the file that holds the full exact form, for states too long to print.
    """
    roots = collect_roots(solution.eigenvalues, solution.steps, solution.x)
    fmt = MathFormatter.for_roots(roots)
    lam = sheet_lambda(solution)
    ctx = StepContext(solution=solution, fmt=fmt, lam=lam)
    lines = _eigenvalue_lines(solution, fmt, lam)
    if not solution.is_diagonalizable:
        lines.append("A is not diagonalisable: the Jordan form is used")
    lines += _state_lines(solution, ctx, exact_in)
    v = solution.verification
    status = "verified" if v.ok else "VERIFICATION FAILED"
    parts = [f"residual: {'zero' if v.residual_zero else 'NOT zero'} ({v.residual_method})"]
    if v.initial_ok is not None:
        parts.append(f"x(t0) = x0: {'yes' if v.initial_ok else 'NO'}")
    if v.numeric is not None:
        parts.append(f"numeric gap {v.numeric.max_rel_gap:.1e}")
    lines.append(f"{status}: " + "; ".join(parts))
    return lines + _condition_lines(solution, fmt)


def preferred_file(paths: Sequence[str]) -> str | None:
    """The written file a reader opens for the full exact form: text, Markdown, the PDF, LaTeX, JSON."""
    for suffix in (".txt", ".md", ".pdf", ".tex", ".json"):
        for p in paths:
            if str(p).endswith(suffix) and not str(p).endswith("-body.tex"):
                return str(p)
    return None
