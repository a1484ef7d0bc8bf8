"""The check report of a hand derivation as a document: text, Markdown, JSON, LaTeX.

>>> from derive.check import check
>>> rep = check([[1, 0], [0, 2]], eigenvalues=[1, 2])
>>> render_check(rep).splitlines()[0]
'Check of a hand derivation'
"""

from __future__ import annotations

import json
import os
from collections.abc import Mapping, Sequence
from pathlib import Path
from typing import Any

import sympy as sp

from ..check import CAUTION, CHECK_FORMATS, CheckReport
from ..errors import InputError, OutputError
from ..render.printing import plain_text as _plain

__all__ = ["render_check", "write_check_outputs"]


def _text_table(rows: Sequence[Sequence[str]], header: Sequence[str]) -> list[str]:
    widths = [max(len(h), *(len(r[k]) for r in rows)) if rows else len(h) for k, h in enumerate(header)]
    line = lambda cells: "  ".join(c.ljust(widths[k]) for k, c in enumerate(cells)).rstrip()  # noqa: E731
    return [line(header), line(["-" * w for w in widths]), *(line(r) for r in rows)]


def _render_text(report: CheckReport, *, title: str) -> str:
    rows = [
        [str(k), it.step, it.name, "pass" if it.ok else "FAIL", it.method or "-"]
        for k, it in enumerate(report.items, start=1)
    ]
    out = [title, "=" * len(title), ""]
    out += _text_table(rows, ["#", "step", "item", "result", "decided"])
    out += ["", "Details:"]
    for k, it in enumerate(report.items, start=1):
        out.append(f"  {k}. [{'pass' if it.ok else 'FAIL'}] {it.name}: {it.detail}")
    out.append("")
    passed = sum(it.ok for it in report.items)
    first = report.first_failure
    out.append(f"First wrong step: {first.step} ({first.name})" if first else "First wrong step: none")
    out.append(f"Result: {passed} of {len(report.items)} items pass (exit code {report.exit_code})")
    if report.notices:
        out += ["", "Notices:"] + [f"  - {n}" for n in report.notices]
    out += ["", "Caution: " + CAUTION]
    return "\n".join(out) + "\n"


def _md_cell(text: str) -> str:
    return (
        str(text)
        .replace("\\", "\\\\")
        .replace("|", "\\|")
        .replace("\n", " ")
        .replace("*", "\\*")
        .replace("_", "\\_")
        .replace("`", "\\`")
        .replace("<", "&lt;")
    )


def _render_markdown(report: CheckReport, *, title: str) -> str:
    out = [f"# {_md_cell(title)}", ""]
    out += ["| # | step | item | result | decided | detail |", "|---|---|---|---|---|---|"]
    for k, it in enumerate(report.items, start=1):
        res = "pass" if it.ok else "**FAIL**"
        out.append(
            f"| {k} | {_md_cell(it.step)} | {_md_cell(it.name)} | {res} | {_md_cell(it.method or '-')} | {_md_cell(it.detail)} |"
        )
    first = report.first_failure
    out += ["", f"**First wrong step:** {_md_cell(first.step + ' (' + first.name + ')') if first else 'none'}"]
    passed = sum(it.ok for it in report.items)
    out += ["", f"**Result:** {passed} of {len(report.items)} items pass (exit code {report.exit_code})."]
    if report.notices:
        out += ["", "Notices:", ""] + [f"- {_md_cell(n)}" for n in report.notices]
    out += ["", f"*Caution.* {_md_cell(CAUTION)}", ""]
    return "\n".join(out)


def _render_json(report: CheckReport, *, title: str) -> str:
    def s(obj: Any) -> str | None:
        return None if obj is None else _plain(obj)

    first = report.first_failure
    data = {
        "title": title,
        "ok": report.ok,
        "exit_code": report.exit_code,
        "first_failure": None if first is None else {"step": first.step, "name": first.name},
        "system": {"A": s(report.A), "f": s(report.f), "t": s(report.t), "x0": s(report.x0), "t0": s(report.t0)},
        "constants": [c.name for c in report.constants],
        "items": [
            {
                "name": it.name,
                "step": it.step,
                "ok": it.ok,
                "method": it.method,
                "detail": it.detail,
                "residual": s(it.residual),
                "claimed": s(it.claimed),
                "expected": s(it.expected),
            }
            for it in report.items
        ],
        "notices": list(report.notices),
        "caution": CAUTION,
    }
    return json.dumps(data, indent=2, ensure_ascii=False) + "\n"


def _render_latex(report: CheckReport, *, meta: Any, sources: Sequence[tuple[str, str]], title: str) -> str:
    import hashlib

    import jinja2

    from ..model import SheetMeta
    from ..render.latex import program_versions, template_environment
    from ..render.printing import MathFormatter

    # No root names: a check report has no legend, so an indexed root is printed in full.
    fmt = MathFormatter.for_roots(())
    meta = meta if meta is not None else SheetMeta()
    versions = program_versions()
    seed = "|".join((meta.title, meta.calc_number, meta.revision, *(h for _, h in sources), _plain(report.A)))
    key = "derive-check-" + hashlib.sha256(seed.encode("utf-8")).hexdigest()[:10]

    def show(name: str, obj: Any) -> str:
        if isinstance(obj, sp.MatrixBase):
            return fmt.matrix_display(name, obj)
        return fmt.display([(name, obj)])

    env = template_environment()
    try:
        template = env.get_template("check.tex.j2")
    except jinja2.TemplateNotFound as exc:
        raise OutputError(f"LaTeX template {exc.name} is missing from the installed package") from exc
    first = report.first_failure
    return template.render(
        report=report,
        items=report.items,
        first=first,
        passed=sum(it.ok for it in report.items),
        meta=meta,
        title=title,
        sources=tuple(sources),
        versions=versions,
        program=versions[0],
        key=key,
        caution=CAUTION,
        m=fmt.m,
        mat=fmt.matrix_display,
        show=show,
        mlist=lambda objs: ", ".join(fmt.m(o) for o in objs),
        failed=not report.ok,
        step_tex=_step_tex,
    )


#: How the derivation steps are named on a LaTeX report (the items keep plain names).
_STEP_TEX = {"P_inv": "$P^{-1}$", "P": "$P$", "D": "$D$"}


def _step_tex(step: str) -> str:
    from ..render.printing import tex_escape

    return _STEP_TEX.get(step, tex_escape(step))


def render_check(
    report: CheckReport,
    format: str = "text",
    *,
    meta: Any = None,
    sources: Sequence[tuple[str, str]] = (),
) -> str:
    """A check report as a terminal table, Markdown, JSON or a LaTeX document.

    ``meta`` (a ``SheetMeta``, e.g. the case's) fills the header; ``sources``
    lists (file name, SHA-256) of the case and claim files for the record.

    >>> from derive.check import check
    >>> render_check(check([[1, 0], [0, 2]], eigenvalues=[1, 2])).splitlines()[0]
    'Check of a hand derivation'
    """
    title = "Check of a hand derivation"
    if meta is not None and getattr(meta, "title", ""):
        title = f"Check of a hand derivation: {meta.title}"
    if format == "text":
        return _render_text(report, title=title)
    if format == "markdown":
        return _render_markdown(report, title=title)
    if format == "json":
        return _render_json(report, title=title)
    if format == "latex":
        return _render_latex(report, meta=meta, sources=sources, title=title)
    raise InputError(f"unknown check report format {format!r}; expected one of {', '.join(CHECK_FORMATS)}", key="format")


_SUFFIXES: Mapping[str, str] = {"text": ".txt", "latex": ".tex", "markdown": ".md", "json": ".json"}


def write_check_outputs(
    report: CheckReport,
    out_dir: str | os.PathLike[str],
    *,
    stem: str,
    formats: Sequence[str] = ("latex",),
    pdf: bool | None = None,
    meta: Any = None,
    sources: Sequence[tuple[str, str]] = (),
    tex_timeout: float = 120.0,
) -> tuple[Path, ...]:
    """Write the check report in each format (atomically) and the PDF; return the paths.

    Everything is rendered before the disk is touched.  ``pdf`` None means:
    when LaTeX is among the formats and latexmk is on the PATH.

    >>> write_check_outputs(rep, "out", stem="tanks-check", formats=("latex",))  # doctest: +SKIP
    (PosixPath('out/tanks-check.tex'), PosixPath('out/tanks-check.pdf'))
    """
    from .. import output

    output.check_stem(stem)
    formats = tuple(dict.fromkeys(formats))
    unknown = [f for f in formats if f not in CHECK_FORMATS]
    if unknown:
        raise InputError(
            f"unknown check report format(s) {', '.join(map(repr, unknown))}; expected one of {', '.join(CHECK_FORMATS)}",
            key="formats",
        )
    want_pdf = ("latex" in formats and output.latex_available()) if pdf is None else bool(pdf)
    if want_pdf and "latex" not in formats:
        formats = ("latex", *formats)
    folder = Path(out_dir)
    if folder.exists() and not folder.is_dir():
        raise OutputError(f"{folder}: exists and is not a folder; expected an output folder", file=str(folder))
    pending = [
        (folder / f"{stem}{_SUFFIXES[fmt]}", render_check(report, fmt, meta=meta, sources=sources)) for fmt in formats
    ]
    written: list[Path] = []
    try:
        folder.mkdir(parents=True, exist_ok=True)
        for path, text in pending:
            output.atomic_write_text(path, text)
            written.append(path)
    except OSError as exc:
        raise OutputError(
            f"{folder}: could not write the check report ({exc.strerror or exc}); expected a writable folder",
            file=str(folder),
        ) from exc
    if want_pdf:
        written.append(output.compile_pdf(folder / f"{stem}.tex", timeout=tex_timeout))
    return tuple(written)
