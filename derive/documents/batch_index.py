"""The batch index as a document: one row per case, as index.tex (+ -body.tex, .pdf)."""

from __future__ import annotations

import re
from pathlib import Path
from typing import Any, Sequence

from ..output import atomic_write_text

__all__ = ["write_index", "index_rows"]


_PLAIN = re.compile(r"[A-Za-z0-9][A-Za-z0-9._/-]*")


def index_rows(results: Sequence[Any]) -> list[dict[str, Any]]:
    rows = []
    for r in results:
        sheet = next((o for o in r.outputs if o.endswith(".pdf")), "") or next(
            (o for o in r.outputs if o.endswith(".tex") and not o.endswith("-body.tex")), ""
        )
        if r.residual_method:
            check = ("residual zero" if r.residual_zero else "residual NOT zero") + f" ({r.residual_method})"
            if r.max_rel_gap is not None:
                check += f"; numeric gap {r.max_rel_gap:.1e}"
        else:
            check = r.message.splitlines()[0][:90] if r.message else ""
        rows.append(
            {
                "r": r,
                "sheet": sheet.rsplit("/", 1)[-1],
                # \path typesets these verbatim and breaks long ones at / . - _; only
                # text of those safe characters goes there, anything else is escaped.
                "plain_name": r.name if _PLAIN.fullmatch(r.name) else "",
                "plain_sheet": sheet.rsplit("/", 1)[-1] if _PLAIN.fullmatch(sheet) else "",
                "check": check,
                "seconds": f"{r.seconds:.2f}",
            }
        )
    return rows


def write_index(
    out_dir: Path, results: Sequence[Any], *, counts: Any, pdf: bool, interrupted: bool, total: int
) -> tuple[Path, ...]:
    """index.tex (standalone) and index-body.tex (for \\input), and index.pdf when asked."""
    from ..output import compile_pdf
    from ..render.latex import FRAGMENT_PACKAGES, program_versions, template_environment

    env = template_environment()
    template = env.get_template("index.tex.j2")
    context = {
        "rows": index_rows(results),
        "counts": counts,
        "total": total,
        "interrupted": interrupted,
        "versions": program_versions(),
        "program": program_versions()[0],
        "packages": FRAGMENT_PACKAGES + ("longtable", "url"),
    }
    written = []
    for name, fragment in (("index.tex", False), ("index-body.tex", True)):
        atomic_write_text(out_dir / name, template.render(fragment=fragment, **context))
        written.append(out_dir / name)
    if pdf:
        written.append(compile_pdf(out_dir / "index.tex"))
    return tuple(written)
