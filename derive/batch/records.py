"""What a batch reports: the status of each case, its record, and the whole report."""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field, fields
from enum import StrEnum
from pathlib import Path
from typing import Any

import sympy as sp

from ..model import Solution

__all__ = ["Status", "STATUSES", "CaseResult", "BatchReport", "spectrum_kind", "solution_figures"]


class Status(StrEnum):
    """How one case ended; a ``str`` so ``result.status == "ok"`` still holds.

    >>> Status("timeout") == "timeout", str(Status.BAD_INPUT)
    (True, 'bad-input')
    """

    OK = "ok"
    VERIFICATION_FAILED = "verification-failed"
    BAD_INPUT = "bad-input"
    TIMEOUT = "timeout"
    CRASHED = "crashed"
    ERROR = "error"


#: Every status a case can end with, in the order the summary counts them.
STATUSES: tuple[Status, ...] = tuple(Status)


@dataclass(frozen=True)
class CaseResult:
    """The outcome of one case, as the summary records it.

    ``outputs`` are paths relative to the batch's output folder; ``solution``
    is kept only when asked for (``keep_solutions``) and never for a result
    reused from the cache.  ``status`` may be given as its text; it is stored
    as a :class:`Status`.
    """

    name: str
    status: Status
    source: str = ""
    spectrum: str = ""
    eigenvalues: tuple[str, ...] = ()
    residual_method: str = ""
    residual_zero: bool | None = None
    initial_ok: bool | None = None
    numeric_method: str = ""
    max_rel_gap: float | None = None
    seconds: float = 0.0
    outputs: tuple[str, ...] = ()
    message: str = ""
    cached: bool = False
    key: str = ""
    solution: Solution | None = field(default=None, compare=False, repr=False)

    def __post_init__(self) -> None:
        # An unknown status text fails here, where the record is made, not in the summary.
        object.__setattr__(self, "status", Status(self.status))

    @property
    def ok(self) -> bool:
        return self.status is Status.OK

    def row(self) -> dict[str, Any]:
        """The JSON-ready record (no solution)."""
        out = {f.name: getattr(self, f.name) for f in fields(self) if f.name != "solution"}
        out["status"] = self.status.value
        out["eigenvalues"] = list(self.eigenvalues)
        out["outputs"] = list(self.outputs)
        return {"case": out.pop("name"), **out}

    @classmethod
    def from_row(cls, row: Mapping[str, Any]) -> CaseResult:
        """Rebuild a result from :meth:`row` (e.g. from the cache)."""
        data = dict(row)
        data["name"] = data.pop("case")
        data["eigenvalues"] = tuple(data.get("eigenvalues", ()))
        data["outputs"] = tuple(data.get("outputs", ()))
        known = {f.name for f in fields(cls)}
        return cls(**{k: v for k, v in data.items() if k in known})


@dataclass(frozen=True)
class BatchReport:
    """All results of a batch, in input order, with counts and the exit code.

    >>> BatchReport(results=(CaseResult("a", "ok"), CaseResult("b", "timeout"))).exit_code
    1
    """

    results: tuple[CaseResult, ...]
    out_dir: Path | None = None
    index_error: str = ""

    @property
    def counts(self) -> dict[Status, int]:
        """Number of cases per status, every status present (zeros included)."""
        counts = dict.fromkeys(STATUSES, 0)
        for r in self.results:
            counts[r.status] += 1
        return counts

    @property
    def ok_count(self) -> int:
        return sum(r.ok for r in self.results)

    @property
    def failed_count(self) -> int:
        return len(self.results) - self.ok_count

    @property
    def cached_count(self) -> int:
        return sum(r.cached for r in self.results)

    @property
    def exit_code(self) -> int:
        """0 when every case succeeded (and the index was written), else 1."""
        bad = self.failed_count or self.index_error or not self.results
        return 1 if bad else 0

    def __getitem__(self, name: str) -> CaseResult:
        for r in self.results:
            if r.name == name:
                return r
        raise KeyError(name)


def spectrum_kind(solution: Solution) -> str:
    """A short word pair for the spectrum: structure (distinct, repeated,
    defective) and nature (real, complex, parametric).

    >>> from derive import solve
    >>> spectrum_kind(solve([[0, 1], [-1, 0]]))
    'distinct complex'
    """
    values = solution.eigenvalues
    if not solution.is_diagonalizable:
        structure = "defective"
    elif len(set(values)) < len(values):
        structure = "repeated"
    else:
        structure = "distinct"
    reality = [sp.im(v).is_zero if v.free_symbols else v.is_real for v in values]
    if any(r is False for r in reality):
        nature = "complex"
    elif all(r is True for r in reality):
        nature = "real"
    else:
        # Real or complex depending on the parameters' values.
        nature = "parametric"
    return f"{structure} {nature}"


def solution_figures(solution: Solution) -> dict[str, Any]:
    """The summary's columns that a solution fills in (spectrum and verification)."""
    v = solution.verification
    return {
        "spectrum": spectrum_kind(solution),
        "eigenvalues": tuple(sp.sstr(e) for e in solution.eigenvalues),
        "residual_method": v.residual_method,
        "residual_zero": bool(v.residual_zero),
        "initial_ok": None if v.initial_ok is None else bool(v.initial_ok),
        "numeric_method": v.numeric.method if v.numeric is not None else "",
        "max_rel_gap": float(v.numeric.max_rel_gap) if v.numeric is not None else None,
    }
