"""The calculation sheet in LaTeX: its hand-set templates, fed by ``printing``.

The sheet is the one document type with a LaTeX layout of its own around
its derivation (``templates/sheet.tex.j2``, ``fragment.tex.j2``,
``body.tex.j2`` and the section templates they include); this module
supplies those templates with the solution and with functions that print
mathematics, so no template ever builds LaTeX for an expression itself and
no algebra ever writes LaTeX.  The derivation steps are set from their
blocks (``derive.documents.sheet_steps``, one function per step kind, the
same description Markdown and text show) by the generic block templates.  User text
(titles, names, notes, descriptions, assumptions, references) reaches the
page only through the ``tex`` filter.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any, Callable

import sympy as sp

from ..documents.base import label_key, parameter_assumptions, program_versions
from ..documents.sheet import sheet_lambda, structure_text
from ..documents.notation import coordinate_letter, notation_blocks
from ..documents.result import result_blocks
from ..documents.sheet_steps import STEP_BLOCKS, StepContext, step_blocks
from ..errors import OutputError
from ..model import SheetMeta, Solution
from .escape import tex_escape
from .latex_blocks import blocks_latex
from .latex_reading import reading_latex
from .printing import MathFormatter, MathStyle, RootName, collect_roots, root_legend_rows, visible_width
from .root_parts import part_legend_latex
from .siunits import UNIT_MACRO, unit_latex
from .templating import FRAGMENT_PACKAGES, get_template

__all__ = ["sheet_context", "render_sheet"]


def _float(value: float, digits: int = 3) -> str:
    """A float for the verification table, as LaTeX math text."""
    if value != value:  # NaN
        return r"\text{n/a}"
    if value in (float("inf"), float("-inf")):
        return r"\infty" if value > 0 else r"-\infty"
    if value == 0:
        return "0"
    text = f"{value:.{digits}g}"
    if "e" in text:
        mant, exp = text.split("e")
        return r"%s \times 10^{%d}" % (mant, int(exp))
    return text


@dataclass(frozen=True)
class _Context:
    """Everything templates see besides the solution: printing helpers."""

    fmt: MathFormatter
    roots: tuple[RootName, ...]
    lam: sp.Symbol

    def legend(self, *objs: Any) -> str:
        """Sentence naming the indexed roots that occur in ``objs`` (all when none given)."""
        wanted = self.roots
        if objs:
            present: set[sp.Basic] = set()
            for obj in objs:
                items = list(obj) if isinstance(obj, (tuple, list, sp.MatrixBase)) else [obj]
                for item in items:
                    if isinstance(item, sp.Basic):
                        present |= item.atoms(sp.CRootOf)
            wanted = tuple(r for r in self.roots if r.root in present)
        if not wanted:
            return ""
        parts = []
        for root, group in root_legend_rows(wanted):
            names = ", ".join(f"${self.fmt.m(r.root)}$" for r in group)
            poly = self.fmt.m(group[0].polynomial(self.lam))
            values = ", ".join(f"${self.fmt.m(r.root)} \\approx {r.decimal}$" for r in group)
            one = len(group) == 1
            parts.append(
                f"{names} {'is a root' if one else 'are roots'} of "
                f"$q({self.fmt.m(self.lam)}) = {poly} = 0$, which has no root in radicals "
                f"of reasonable size; {'it is' if one else 'they are'} kept exact as "
                f"indexed roots (numbered in sympy's order: real roots ascending, then "
                f"complex pairs), with {values}."
            )
        return " ".join(parts + [part_legend_latex(wanted, self.fmt)]).strip()


def _functions(ctx: _Context, solution: Solution) -> dict[str, Callable[..., Any]]:
    fmt = ctx.fmt
    t = solution.system.t

    def rows_for_states(vec: sp.MatrixBase, part: str = "") -> list[tuple[str, Any]]:
        """(``x_1(t)``, entry) rows; ``part`` marks a homogeneous or particular part."""
        mark = rf"^{{\mathrm{{{part}}}}}" if part else ""
        names = [fmt.m(s) for s in solution.system.states]
        return [(f"{{{names[i]}}}{mark}({fmt.m(t)})", vec[i]) for i in range(vec.rows)]

    # one context for every step, so the algebra they move to the appendix is
    # collected in order and numbered once
    steps_ctx = StepContext(solution=solution, fmt=fmt, lam=ctx.lam)
    # H, delta and arg are defined where the sheet first uses them: the inputs come first
    inputs_notation = blocks_latex(notation_blocks([solution.system.f], steps_ctx), fmt)
    derivation = "\n\n".join(blocks_latex(step_blocks(step, steps_ctx), fmt) for step in solution.steps)
    result_math = blocks_latex(result_blocks(solution, steps_ctx), fmt)
    appendix = blocks_latex(steps_ctx.appendix_blocks(), fmt)

    def m_list(items: Any) -> str:
        return ", ".join(fmt.m(e) for e in items)

    return {
        "m": fmt.m,
        "displist": lambda pairs: fmt.display([tuple(p) for p in pairs]),
        "mat": fmt.matrix_display,
        "num": _float,
        "rows_for_states": rows_for_states,
        "m_list": m_list,
        "derivation": lambda: derivation,
        "inputs_notation": lambda: inputs_notation,
        "reading": lambda: reading_latex(solution, fmt),
        "appendix": lambda: appendix,
        "result_math": lambda: result_math,
        "relation_tex": _relation_tex,
        "condition_tex": lambda c: _condition_tex(fmt, c),
        "legend": ctx.legend,
        "is_zero": lambda obj: (all(e == 0 for e in obj) if isinstance(obj, sp.MatrixBase) else obj == 0),
        "vector": lambda items: sp.ImmutableMatrix([[e] for e in items]),
        "param_assumptions": parameter_assumptions,
        "unit_tex": unit_latex,
    }


_RELATIONS = (("!=", r"\neq"), (">=", r"\geq"), ("<=", r"\leq"), ("==", "="), (">", ">"), ("<", "<"))


def _relation_tex(relation: str) -> str:
    """A condition's relation (``"!= 0"``) as LaTeX (`` \\neq 0``); other text escaped."""
    text = str(relation).strip()
    for op, tex in _RELATIONS:
        if text.startswith(op):
            rest = text[len(op):].strip()
            # the right side is program-made ("0"); digits and signs pass, anything else is escaped
            rest_tex = rest if all(c in "0123456789.-+ " for c in rest) else r"\text{%s}" % tex_escape(rest)
            return f" {tex} {rest_tex}"
    return r"\ \text{%s}" % tex_escape(text)


def _condition_tex(fmt: MathFormatter, condition: Any) -> str:
    """A stated condition inline, or displayed and broken at its terms when too wide for a line."""
    inline = fmt.m(condition.expr) + _relation_tex(condition.relation)
    if visible_width(inline) <= fmt.style.line_width - 16:
        return f"${inline}$"
    lines = fmt.split(condition.expr, lead=2)
    lines[-1] += _relation_tex(condition.relation)
    body = " \\\\\n".join(("&" if k == 0 else "&\\quad ") + line for k, line in enumerate(lines))
    return "\\begin{align*}\n" + body + "\n\\end{align*}"


def sheet_context(solution: Solution, *, style: MathStyle, fragment: bool) -> dict[str, Any]:
    """The variables every LaTeX template is rendered with."""
    case = solution.case
    meta = case.meta if case is not None else SheetMeta()
    lam = sheet_lambda(solution)
    roots = collect_roots(solution.eigenvalues, solution.steps, solution.x, digits=style.digits)
    fmt = MathFormatter.for_roots(roots, style=style)
    ctx = _Context(fmt=fmt, roots=roots, lam=lam)
    versions = program_versions()
    # A label key unique to this sheet, so two sheets \input into one report
    # keep separate "Sheet X of Y" counts.
    key = label_key("eigensheet", meta.title, meta.calc_number, meta.revision, case.source_hash if case else "", structure_text(solution.x))
    notices = tuple(dict.fromkeys((*(case.notices if case else ()), *solution.notices)))
    kinds = {s.kind for s in solution.steps}
    return {
        "sol": solution,
        "system": solution.system,
        "steps": solution.steps,
        "meta": meta,
        "case": case,
        "ver": solution.verification,
        "failed": not solution.verification.ok,
        "fragment": fragment,
        "key": key,
        "versions": versions,
        "program": versions[0],
        "notices": notices,
        "lam": lam,
        "has_real_form": "real_form" in kinds,
        "has_intervals": "interval" in kinds,
        "has_jumps": "jump" in kinds,
        "has_convolution": "convolution" in kinds,
        "has_steady_state": "steady_state" in kinds,
        "packages": FRAGMENT_PACKAGES,
        "imaginary_unit": style.imaginary_unit,
        "coord": fmt.m(coordinate_letter(solution)),
        **_functions(ctx, solution),
    }


#: (solution, style, context, body) of the last sheet rendered.  The context
#: (root names, every display of the derivation, the compact Result) and the
#: body that holds all the mathematics do not depend on the wrapper, so the
#: standalone sheet and the fragment written together compute them once.  The
#: solution itself is kept, so an identity match cannot be a different object
#: at a reused address.
_last_sheet: tuple[Solution, MathStyle, dict[str, Any], str] | None = None


def _shared_parts(solution: Solution, style: MathStyle) -> tuple[dict[str, Any], str]:
    global _last_sheet
    last = _last_sheet
    if last is not None and last[0] is solution and last[1] == style:
        return last[2], last[3]
    context = sheet_context(solution, style=style, fragment=False)
    body = get_template("body.tex.j2").render(**context)
    _last_sheet = (solution, style, context, body)
    return context, body


def render_sheet(solution: Solution, *, style: MathStyle, fragment: bool) -> str:
    """The sheet as LaTeX source; ``fragment`` gives the body for a host report."""
    missing = sorted({s.kind for s in solution.steps if s.kind not in STEP_BLOCKS})
    if missing:
        raise OutputError(
            f"no block function for step kind(s) {', '.join(missing)}; expected an entry in "
            f"derive.documents.sheet_steps.STEP_BLOCKS",
            key="steps",
        )
    template = get_template("fragment.tex.j2" if fragment else "sheet.tex.j2")
    shared, body = _shared_parts(solution, style)
    # siunitx only when a unit is set with it, so a sheet without units needs no more than before
    needs = ("siunitx",) if UNIT_MACRO in body else ()
    context = {**shared, "fragment": fragment, "body": body, "extra_packages": needs, "packages": FRAGMENT_PACKAGES + needs}
    return template.render(**context)
