"""The result store of one batch: results in input order, the cache, summary.csv and summary.json.

The summary and the cache are rewritten atomically (write to a temporary
file, then rename), so an interrupted batch leaves them consistent with the
outputs on disk: whatever the summary lists is complete.  Outputs of case
``NAME`` go to ``OUT/cases/NAME/``; the summary, the index and the cache sit
in ``OUT`` itself, so no case name can collide with them.

The cache maps a case name to the key of its last successful run
(:func:`case_key`) and that run's record; a case whose key matches and whose
outputs are all still on disk is reused instead of solved again.
"""

from __future__ import annotations

import csv
import hashlib
import io
import json
import time
from collections.abc import Sequence
from dataclasses import replace
from pathlib import Path
from typing import Any

import sympy as sp

from ..documents.base import PROGRAM_NAME
from ..model import Case
from ..output import atomic_write_bytes, atomic_write_text
from .records import BatchReport, CaseResult

__all__ = ["CACHE_NAME", "CASES_DIR", "ResultStore", "case_key", "summary_csv"]

CACHE_NAME = ".eigensheet-cache.json"
#: Folder (inside the output folder) that holds one folder per case.
CASES_DIR = "cases"
#: Seconds between rewrites of the summary and cache during a batch (always at the end).
FLUSH_EVERY = 0.5

_CSV_COLUMNS = (
    "case", "status", "spectrum", "eigenvalues", "residual_method", "residual_zero", "initial_ok",
    "numeric_method", "max_rel_gap", "stability", "slowest_time_constant", "final_values", "peaks",
    "seconds", "cached", "outputs", "message", "source",
)


def _version() -> str:
    from .. import __version__

    return __version__


def case_key(
    case: Case, *, formats: Sequence[str], pdf: bool, version: str | None = None, substitute: bool | None = None
) -> str:
    """Content hash of a case and of what would be written for it, with derive's
    ``version`` (the installed one unless given).

    >>> from derive.casefile import loads_case
    >>> len(case_key(loads_case('[system]\\nmatrix = [[-1]]'), formats=("latex",), pdf=False))
    64
    """
    s = case.system
    parts = [
        _version() if version is None else version,
        case.name,
        case.source_hash,
        sp.srepr(s.A),
        sp.srepr(s.f),
        sp.srepr(s.x0) if s.x0 is not None else "-",
        sp.srepr(s.t0),
        sp.srepr(s.t),
        sp.srepr(s.states),
        repr([(sp.srepr(p.symbol), sp.srepr(p.value), p.unit, p.description) for p in s.params]),
        repr(s.equations),
        repr(case.meta),
        repr(case.notices),
        repr(tuple(formats)),
        repr(bool(pdf)),
        repr(case.options),
        repr(substitute),
    ]
    return hashlib.sha256("\x1f".join(parts).encode("utf-8")).hexdigest()


def summary_csv(results: Sequence[CaseResult]) -> str:
    """summary.csv: one row per case, lists joined with "; "."""
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(_CSV_COLUMNS)
    for r in results:
        row = r.row()
        row["eigenvalues"] = "; ".join(r.eigenvalues)
        row["outputs"] = "; ".join(r.outputs)
        row["final_values"] = "; ".join(f"{name} = {_g(value)}" for name, value in r.final_values if value is not None)
        row["peaks"] = "; ".join(f"{name} = {_g(value)} at t = {_g(when)}" for name, when, value in r.peaks)
        w.writerow(["" if row[c] is None else row[c] for c in _CSV_COLUMNS])
    return buf.getvalue()


def _g(value: float) -> str:
    """A figure for the CSV: 6 significant digits."""
    return f"{value:.6g}"


def _read_cache(folder: Path) -> dict[str, dict[str, Any]]:
    try:
        data = json.loads((folder / CACHE_NAME).read_text(encoding="utf-8"))
    except (OSError, ValueError):
        return {}
    if not isinstance(data, dict) or data.get("format") != 1 or not isinstance(data.get("cases"), dict):
        return {}
    return {k: v for k, v in data["cases"].items() if isinstance(v, dict)}


class ResultStore:
    """The results of one batch run and, with a folder, their files (mutable: the run's ledger).

    Without a folder nothing is written and nothing is reused.
    """

    def __init__(self, folder: Path | None, *, total: int) -> None:
        self.folder = folder
        self.total = total
        self.results: dict[int, CaseResult] = {}
        self.cache = _read_cache(folder) if folder is not None else {}
        self._saved_at = 0.0
        self._unsaved = False

    def finished(self) -> list[CaseResult]:
        """The results so far, in input order."""
        return [self.results[i] for i in sorted(self.results)]

    def reuse(self, name: str, key: str) -> CaseResult | None:
        """The cached result of case ``name`` when its key matches and its outputs are on disk."""
        entry = self.cache.get(name)
        if self.folder is None or not entry or entry.get("key") != key:
            return None
        try:
            result = CaseResult.from_row(entry["result"])
        except (KeyError, TypeError, ValueError):
            return None
        if not result.ok or not all((self.folder / o).is_file() for o in result.outputs):
            return None
        return replace(result, cached=True, key=key)

    def add(self, index: int, result: CaseResult, files: Sequence[tuple[str, bytes]] = (), *, save: bool = True) -> None:
        """Record the result of entry ``index``; write the files a remote worker sent back.

        With ``save`` the summary is rewritten when the last rewrite is old
        enough (at most a few a second: each is a whole-file atomic replace,
        so a batch of hundreds would otherwise spend its time rewriting it).
        """
        if self.folder is not None:
            for rel, data in files:
                target = self.folder / rel
                target.parent.mkdir(parents=True, exist_ok=True)
                atomic_write_bytes(target, data)
            if result.ok and result.key:
                self.cache[result.name] = {"key": result.key, "result": result.row()}
            else:
                self.cache.pop(result.name, None)
        self.results[index] = result
        if save:
            self._unsaved = True
            self.tick()

    def tick(self) -> bool:
        """Save if results wait and the last save is old enough; True while some still wait."""
        if self._unsaved and time.monotonic() - self._saved_at >= FLUSH_EVERY:
            self.save()
        return self._unsaved

    def save(self, *, interrupted: bool = False) -> None:
        """Rewrite the cache and the summary now."""
        self._saved_at, self._unsaved = time.monotonic(), False
        if self.folder is None:
            return
        results = self.finished()
        version = _version()
        atomic_write_text(self.folder / CACHE_NAME, json.dumps({"format": 1, "version": version, "cases": self.cache}, indent=1))
        data = {
            "program": PROGRAM_NAME,
            "version": version,
            "complete": len(results) == self.total and not interrupted,
            "interrupted": interrupted,
            "total": self.total,
            "finished": len(results),
            "counts": BatchReport(results=tuple(results)).counts,
            "cases": [r.row() for r in results],
        }
        # CSV first, JSON last: the JSON's "finished" never claims more than the CSV holds.
        atomic_write_text(self.folder / "summary.csv", summary_csv(results))
        atomic_write_text(self.folder / "summary.json", json.dumps(data, indent=2) + "\n")
