"""The calculation sheet as a document: a ``Solution`` described in blocks and as a record.

``SheetDocument(solution)`` is what every renderer receives for a sheet.  Its
blocks (``sheet_blocks``) carry the same sections as the LaTeX sheet, in the
same order: title block, purpose, inputs, the response at a glance
(``reading_section``), assumptions, method, derivation
(one group of blocks per step, from ``derive.documents.sheet_steps``),
result, verification, references and caution.  Its record
(``solution_record``) is the machine-readable form, written as JSON.
"""

from __future__ import annotations

import functools
import math
from dataclasses import dataclass, fields, is_dataclass
from typing import Any

import sympy as sp

from ..model import SheetMeta, Solution
from ..render.escape import spoken
from ..render.printing import MathFormatter, MathStyle, collect_roots, format_decimal
from .base import Document, Frame, Layout, label_key, parameter_assumptions, program_versions
from .blocks import Alert, Block, Eq, Heading, Inline, Items, Math, N, P
from .reading_section import reading_blocks, reading_record
from .result import result_blocks, result_record
from .sheet_steps import StepContext, coordinate_letter, step_blocks
from .notation import notation_blocks
from .output_blocks import result_rows

__all__ = ["SheetDocument", "sheet_blocks", "solution_record", "to_json_value", "sheet_lambda", "structure_text", "FAILED", "SCHEMA_VERSION"]

FAILED = "VERIFICATION FAILED: do not use this result."

#: Bumped when the layout of the JSON record changes incompatibly.
SCHEMA_VERSION = 1


def sheet_lambda(solution: Solution) -> sp.Symbol:
    """The symbol the steps use for an eigenvalue (lambda unless a step says otherwise)."""
    return next(
        (getattr(s, "lam") for s in solution.steps if isinstance(getattr(s, "lam", None), sp.Symbol)),
        sp.Symbol("lambda"),
    )


def structure_text(obj: Any) -> str:
    """A deterministic text of an expression's tree, for a key.  The printers
    (srepr too) order the terms of a sum, which evaluates indexed roots again
    and again; the tree's own argument order needs no ordering."""
    if isinstance(obj, sp.MatrixBase):
        return "[" + ",".join(structure_text(e) for e in obj) + "]"
    if isinstance(obj, sp.CRootOf):  # its args rebuild its polynomial at every read: its text once
        return _root_text(obj)
    if not obj.args:
        return sp.srepr(obj)
    return type(obj).__name__ + "(" + ",".join(structure_text(a) for a in obj.args) + ")"


@functools.lru_cache(maxsize=256)
def _root_text(root: sp.CRootOf) -> str:
    return type(root).__name__ + "(" + ",".join(structure_text(a) for a in root.args) + ")"


def _fmt_float(x: float | None) -> str:
    return "n/a" if x is None else f"{x:.3g}"


def sheet_blocks(solution: Solution, *, style: MathStyle | None = None, fragment: bool = False) -> tuple[tuple[Block, ...], MathFormatter]:
    """The sheet's sections as blocks, with the formatter that names its roots."""
    style = style or MathStyle()
    system = solution.system
    case = solution.case
    meta = case.meta if case is not None else SheetMeta()
    ver = solution.verification
    roots = collect_roots(solution.eigenvalues, solution.steps, solution.x, digits=style.digits)
    fmt = MathFormatter.for_roots(roots, style=style)
    lam = sheet_lambda(solution)
    ctx = StepContext(solution=solution, fmt=fmt, lam=lam)
    versions = program_versions()
    t = system.t
    b: list[Block] = []

    if not fragment:
        b.append(Heading(1, meta.title))
        b.append(Items((
            (f"Project: {meta.project or '--'}",),
            (f"Calculation no.: {meta.calc_number or '--'}, revision {meta.revision or '--'}",),
            (f"Subject: {meta.subject or '--'}",),
            (f"Prepared by: {meta.prepared_by or '--'}, date {meta.date or '--'}",),
            (f"Checked by: {meta.checked_by or '--'}, date --",),
        )))
    if not ver.ok:
        b.append(Alert((FAILED,)))

    b.append(Heading(2, "Purpose"))
    b.append(P(meta.purpose) if meta.purpose else P(
        "To find x(t) for the linear system x' = A x + f(t) in closed form"
        + (", with x(t0) = x0," if system.is_ivp else "") + " and to verify it."))
    if meta.notes:
        b.append(P("Notes: ", meta.notes))

    b.append(Heading(2, "Inputs"))
    b.append(Eq((
        (N("x", "x"), sp.ImmutableMatrix([[s] for s in system.states])),
        (N("A", "A"), system.A),
        (N(f"f({fmt.m(t)})", f"f({fmt.plain(t)})"), system.f),
    )))
    b += notation_blocks([system.f], ctx)
    if system.is_ivp:
        b.append(Eq(((N(f"x({fmt.m(system.t0)})", f"x({fmt.plain(system.t0)})"), system.x0),)))
    else:
        b.append(P("No initial values: general solution with free constants."))
    if system.equations:
        b.append(P("Equations as written:"))
        b.append(Items(tuple((e,) for e in system.equations)))
    if meta.state_descriptions:
        b.append(Items(tuple((f"{name}: {meaning}",) for name, meaning in meta.state_descriptions)))
    if system.params:
        rows = []
        for p in system.params:
            row: list[Inline] = [Math(p.symbol), " = ", Math(p.value) if p.value is not None else "(no value)"]
            row.append(f" {p.unit}" if p.unit else "")
            row.append(f": {p.description}" if p.description else "")
            assumed = parameter_assumptions(p)
            row.append(f" ({', '.join(assumed)})" if assumed else "")
            rows.append(tuple(row))
        b.append(P("Parameters (values put into the algebra before the decomposition):" if system.substituted else "Parameters (kept as symbols in the algebra; the values are used in the response reading and the numeric check):"))
        b.append(Items(tuple(rows)))
    src: list[tuple[Inline, ...]] = [
        (f"Input file: {case.source}" if case and case.source else "Input file: none (Python interface)",),
    ]
    if case and case.source_hash:
        src.append((f"Input SHA-256: {case.source_hash}",))
    src += [(f"{name} {version}",) for name, version in versions]
    b.append(Items(tuple(src)))

    b += reading_blocks(solution)

    b.append(Heading(2, "Assumptions"))
    assumptions: list[tuple[Inline, ...]] = [("Linear model with constant coefficients: A does not depend on t or x; f depends on t only.",)]
    assumptions += [(a,) for a in meta.assumptions]
    for p in system.params:
        assumed = parameter_assumptions(p)
        if assumed:
            assumptions.append((Math(p.symbol), f" is taken as {' and '.join(assumed)}."))
    b.append(Items(tuple(assumptions), numbered=True))
    notices = tuple(dict.fromkeys((*(case.notices if case else ()), *solution.notices)))
    if notices:
        b.append(P("Notices from the program:"))
        b.append(Items(tuple((spoken(n),) for n in notices)))

    b.append(Heading(2, "Method"))
    y = fmt.plain(coordinate_letter(solution))  # the decoupled coordinates' letter, y unless a name takes it
    method: list[tuple[Inline, ...]] = [
        ("Eigenvalues from det(A - λ I) = 0; eigenvectors span the null space of A - λ I.",),
        ("A = P D P^-1 with the eigenvectors" + ("" if solution.is_diagonalizable else " and Jordan chains") + " as columns of P; the product is checked.",),
        (f"x = P {y} gives {y}' = D {y} + g with g = P^-1 f" + ("." if solution.is_diagonalizable else "; Jordan blocks are solved from the bottom row up."),),
        (f"Each {y}_k' = λ_k {y}_k + g_k is multiplied by the integrating factor μ_k = exp(-λ_k (t - t0)), so (μ_k {y}_k)' = μ_k g_k is integrated from t0 to t (the variable of integration s).",),
        (f"x = P {y} is recombined into homogeneous and particular parts.",),
    ]
    if any(s.kind == "real_form" for s in solution.steps):
        method.append(("Complex pairs a +- i b are written in real form from Re and Im of v exp(λ t), each with a real constant.",))
    method.append(("Constants from x(t0) = x0." if system.is_ivp else "No initial values: the constants stay free.",))
    method.append(("Verified by substitution into x' - A x - f, the initial values and a numeric integration.",))
    b.append(Items(tuple(method), numbered=True))

    b.append(Heading(2, "Derivation"))
    for step in solution.steps:
        b += step_blocks(step, ctx)

    b.append(Heading(2, "Result"))
    if not ver.ok:
        b.append(Alert((FAILED,)))
    b += result_blocks(solution, ctx)
    b += result_rows(solution, fmt)
    if solution.constants:
        b.append(P("Arbitrary constants: ", Math(sp.Tuple(*solution.constants)), "."))
    b += ctx.legend([solution.x])
    if solution.conditions:
        b.append(P("Holds under these conditions:"))
        b.append(Items(tuple((Math(c.expr), f" {c.relation}: {spoken(c.reason)}") for c in solution.conditions)))
    else:
        b.append(P("No condition on the parameters was needed."))

    b.append(Heading(2, "Verification"))
    checks: list[tuple[Inline, ...]] = [
        (("Residual x' - A x - f reduces to zero" if ver.residual_zero else "Residual x' - A x - f is NOT zero") + f" (method: {ver.residual_method}): ", Math(ver.residual.T)),
    ]
    if ver.initial_ok is None:
        checks.append(("Initial values: none given.",))
    else:
        checks.append(("Initial values x(t0) - x0 = " if ver.initial_ok else "Initial values NOT met: x(t0) - x0 = ", Math(ver.initial_residual.T if ver.initial_residual is not None else sp.Integer(0))))
    checks.append(("P D P^-1 = A: " + ("holds" if ver.similarity_ok else "FAILS"),))
    n = ver.numeric
    if n is not None:
        checks.append((
            f"Numeric {'integration' if n.rtol is not None else 'solution'} ({n.method}) on "
            f"[{_fmt_float(n.t_start)}, {_fmt_float(n.t_end)}], {n.points} points, "
            + (f"rtol {_fmt_float(n.rtol)}, atol {_fmt_float(n.atol)}" if n.rtol is not None else "no tolerances (direct)")
            + (f", the state extended by the {n.modes} mode{'' if n.modes == 1 else 's'} t^k e^(γ t) of f" if n.modes else "")
            + f": largest absolute gap {_fmt_float(n.max_abs_gap)}, "
            f"largest relative gap {_fmt_float(n.max_rel_gap)}: " + ("agrees" if n.ok else "DISAGREES"),
        ))
    else:
        checks.append(("Numeric integration: not run.",))
    checks += [(spoken(note),) for note in ver.notes]
    b.append(Items(tuple(checks), numbered=True))
    if not ver.ok:
        b.append(Alert((FAILED,)))

    b.append(Heading(2, "References"))
    b.append(Items(tuple((r,) for r in meta.references), numbered=True) if meta.references else P("The case lists no references."))
    b.append(Heading(2, "Caution"))
    b.append(P(
        f"Produced by software ({versions[0][0]} {versions[0][1]}, sympy {versions[1][1]}). It must be checked and approved "
        "under the user's own quality procedures before use. The model (linearity, constant coefficients, parameter "
        "values) is the user's responsibility; applicable codes and licensed practice govern its use."
    ))
    # the long intermediate algebra the derivation refers to, last, as on the LaTeX sheet
    b += ctx.appendix_blocks()
    return tuple(b), fmt


def to_json_value(obj: Any) -> Any:
    """A sympy object, matrix, dataclass or tuple as JSON-ready data (strings for math).

    >>> to_json_value(sp.Matrix([[1, sp.Rational(1, 2)]]))
    [['1', '1/2']]
    """
    if obj is None or isinstance(obj, (bool, str)):
        return obj
    if isinstance(obj, int):
        return obj
    if isinstance(obj, float):
        # JSON has no NaN or infinity; say it in words rather than emit invalid JSON.
        return obj if math.isfinite(obj) else str(obj)
    if isinstance(obj, sp.MatrixBase):
        return [[str(obj[i, j]) for j in range(obj.cols)] for i in range(obj.rows)]
    if isinstance(obj, sp.Basic):
        return str(obj)
    if isinstance(obj, (tuple, list)):
        return [to_json_value(item) for item in obj]
    if isinstance(obj, dict):
        return {str(key): to_json_value(value) for key, value in obj.items()}
    if is_dataclass(obj) and not isinstance(obj, type):
        return {f.name: to_json_value(getattr(obj, f.name)) for f in fields(obj)}
    return str(obj)


def _column(M: sp.MatrixBase | None) -> list[str] | None:
    if M is None:
        return None
    return [str(e) for e in M]


def solution_record(solution: Solution) -> dict[str, Any]:
    """The JSON record of a solution as a plain dict (see the module docstring)."""
    system = solution.system
    case = solution.case
    meta = case.meta if case is not None else SheetMeta()
    ver = solution.verification
    roots = collect_roots(solution.eigenvalues, solution.steps, solution.x)
    return {
        "schema": SCHEMA_VERSION,
        "program": {name: version for name, version in program_versions()},
        "case": {
            "name": case.name if case else None,
            "source": case.source if case else None,
            "source_sha256": case.source_hash if case else None,
            "meta": to_json_value(meta),
        },
        "system": {
            "t": str(system.t),
            "states": [str(s) for s in system.states],
            "A": to_json_value(system.A),
            "f": _column(system.f),
            "x0": _column(system.x0),
            "t0": str(system.t0),
            "equations": list(system.equations),
            "substituted": system.substituted,
            "parameters": [
                {
                    "name": p.name,
                    "value": None if p.value is None else str(p.value),
                    "unit": p.unit,
                    "description": p.description,
                    "assumptions": list(parameter_assumptions(p)),
                }
                for p in system.params
            ],
        },
        "eigenvalues": [str(e) for e in solution.eigenvalues],
        "eigenvalue_decimals": [format_decimal(e) for e in solution.eigenvalues],
        "indexed_roots": [
            {"name": f"{r.letter}_{r.number}", "root": str(r.root), "decimal": r.decimal} for r in roots
        ],
        "is_diagonalizable": solution.is_diagonalizable,
        "P": to_json_value(solution.P),
        "D": to_json_value(solution.D),
        "P_inv": to_json_value(solution.P_inv),
        "x": _column(solution.x),
        "result_forms": result_record(solution, StepContext(solution=solution, fmt=MathFormatter.for_roots(roots), lam=sheet_lambda(solution))),
        "homogeneous": _column(solution.homogeneous),
        "particular": _column(solution.particular),
        "constants": [str(c) for c in solution.constants],
        "verification": {
            "ok": ver.ok,
            "residual": _column(ver.residual),
            "residual_zero": ver.residual_zero,
            "residual_method": ver.residual_method,
            "initial_residual": _column(ver.initial_residual),
            "initial_ok": ver.initial_ok,
            "similarity_ok": ver.similarity_ok,
            "numeric": to_json_value(ver.numeric),
            "notes": [spoken(n) for n in ver.notes],
        },
        "conditions": [
            {"expr": str(c.expr), "relation": c.relation, "reason": spoken(c.reason)} for c in solution.conditions
        ],
        "notices": [spoken(n) for n in dict.fromkeys((*(case.notices if case else ()), *solution.notices))],
        "steps": [
            {"kind": step.kind, "fields": to_json_value(step)} for step in solution.steps
        ],
        "outputs": to_json_value(solution.outputs),
        "reading": to_json_value(reading_record(solution)),
    }


@dataclass(frozen=True)
class SheetDocument(Document):
    """The calculation sheet of a solution.

    >>> SheetDocument.kind, SheetDocument.body_file
    ('sheet', True)
    """

    kind = "sheet"
    body_file = True
    solution: Solution

    def layout(self, *, style: MathStyle, fragment: bool = False) -> Layout:
        """The sheet's blocks (``fragment`` leaves out the title block)."""
        blocks, fmt = sheet_blocks(self.solution, style=style, fragment=fragment)
        return Layout(blocks, fmt)

    def record(self) -> dict[str, Any]:
        """``solution_record(solution)``."""
        return solution_record(self.solution)

    def frame(self) -> Frame:
        """The running header and footers of the sheet."""
        case = self.solution.case
        meta = case.meta if case is not None else SheetMeta()
        program = program_versions()[0]
        footer = f"Produced by {program[0]} {program[1]} (sympy {sp.__version__})"
        if case is not None and case.source_hash:
            footer += f"; input sha256 {case.source_hash[:16]}..."
        failed = not self.solution.verification.ok
        return Frame(
            title=meta.title,
            meta=meta,
            key=label_key("eigensheet", meta.title, meta.calc_number, meta.revision, case.source_hash if case else "", structure_text(self.solution.x)),
            footer_left=footer,
            footer_right=("VERIFICATION FAILED",) if failed else ("To be checked and approved before use",),
        )
