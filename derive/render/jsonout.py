"""A machine-readable record of a solution, as JSON.

Expressions are written with sympy's ``str`` (readable, and parseable by the
program's own safe parser), never ``srepr``; matrices as lists of rows;
steps as ``{"kind": ..., "fields": {...}}`` with the same conversion applied
to every field.  Keys are sorted so the same solution gives the same bytes.
"""

from __future__ import annotations

import json
import math
from dataclasses import dataclass, fields, is_dataclass
from typing import Any

import sympy as sp

from ..model import SheetMeta, Solution
from . import Renderer
from .printing import collect_roots, format_decimal

__all__ = ["JsonRenderer", "solution_record", "to_json_value"]

#: Bumped when the layout of the record changes incompatibly.
SCHEMA_VERSION = 1


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
    if is_dataclass(obj) and not isinstance(obj, type):
        return {f.name: to_json_value(getattr(obj, f.name)) for f in fields(obj)}
    return str(obj)


def _column(M: sp.MatrixBase | None) -> list[str] | None:
    if M is None:
        return None
    return [str(e) for e in M]


def solution_record(solution: Solution) -> dict[str, Any]:
    """The JSON record of a solution as a plain dict (see the module docstring)."""
    from .latex import parameter_assumptions, program_versions

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
            {"name": f"lambda_{r.number}", "root": str(r.root), "decimal": r.decimal} for r in roots
        ],
        "is_diagonalizable": solution.is_diagonalizable,
        "P": to_json_value(solution.P),
        "D": to_json_value(solution.D),
        "P_inv": to_json_value(solution.P_inv),
        "x": _column(solution.x),
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
            "notes": list(ver.notes),
        },
        "conditions": [
            {"expr": str(c.expr), "relation": c.relation, "reason": c.reason} for c in solution.conditions
        ],
        "notices": list(dict.fromkeys((*(case.notices if case else ()), *solution.notices))),
        "steps": [
            {"kind": step.kind, "fields": to_json_value(step)} for step in solution.steps
        ],
    }


@dataclass(frozen=True)
class JsonRenderer(Renderer):
    """The solution as sorted, indented JSON (``fragment`` has no effect).

    >>> JsonRenderer().suffix
    '.json'
    """

    name: str = "json"
    suffix: str = ".json"
    indent: int = 2

    def render(self, solution: Solution, *, fragment: bool = False) -> str:
        """JSON text of ``solution_record(solution)``, keys sorted, ending in a newline."""
        return json.dumps(
            solution_record(solution), sort_keys=True, indent=self.indent, ensure_ascii=False, allow_nan=False
        ) + "\n"
