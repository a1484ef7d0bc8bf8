"""What a batch reports: the status of each case, its record, and the whole report."""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field, fields
from enum import StrEnum
from pathlib import Path
from typing import Any

import sympy as sp

from ..model import Solution

__all__ = ["Status", "STATUSES", "CaseResult", "BatchReport", "spectrum_kind", "solution_figures", "reading_figures"]


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
    #: the engineering reading (blank when not available): stability class, the slowest time
    #: constant (a number, or its expression with symbolic parameters), and per state
    #: (name, final value) and (name, time of the peak, value at the peak)
    stability: str = ""
    slowest_time_constant: float | str | None = None
    final_values: tuple[tuple[str, float | None], ...] = ()
    peaks: tuple[tuple[str, float, float], ...] = ()
    #: the index's small response figure (a ``documents.blocks.Figure``), drawn by the worker; not in the summary
    thumbnail: Any = field(default=None, compare=False, repr=False)

    def __post_init__(self) -> None:
        # An unknown status text fails here, where the record is made, not in the summary.
        object.__setattr__(self, "status", Status(self.status))

    @property
    def ok(self) -> bool:
        return self.status is Status.OK

    def row(self) -> dict[str, Any]:
        """The JSON-ready record (no solution)."""
        out = {f.name: getattr(self, f.name) for f in fields(self) if f.name not in ("solution", "thumbnail")}
        out["status"] = self.status.value
        out["eigenvalues"] = list(self.eigenvalues)
        out["outputs"] = list(self.outputs)
        out["final_values"] = {name: value for name, value in self.final_values}
        out["peaks"] = {name: {"time": when, "value": value} for name, when, value in self.peaks}
        return {"case": out.pop("name"), **out}

    @classmethod
    def from_row(cls, row: Mapping[str, Any]) -> CaseResult:
        """Rebuild a result from :meth:`row` (e.g. from the cache)."""
        data = dict(row)
        data["name"] = data.pop("case")
        data["eigenvalues"] = tuple(data.get("eigenvalues", ()))
        data["outputs"] = tuple(data.get("outputs", ()))
        data["final_values"] = tuple((k, v) for k, v in dict(data.get("final_values") or {}).items())
        data["peaks"] = tuple((k, v["time"], v["value"]) for k, v in dict(data.get("peaks") or {}).items())
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


def reading_figures(solution: Solution, *, seconds: float) -> dict[str, Any]:
    """The summary's reading columns, computed within ``seconds``; blank where not available.

    Stability and the slowest time constant come from the modes; final values
    and peaks need an initial value problem with every parameter given.
    Whatever does not finish in time, or cannot be read, stays blank: the
    summary never waits on the reading, nor fails for it.

    >>> from derive import solve
    >>> r = reading_figures(solve([[-2]], [2], x0=[0]), seconds=10)
    >>> r["stability"], r["slowest_time_constant"], r["final_values"]
    ('asymptotically stable', 0.5, (('x_1', 1.0),))
    """
    from ..limits import LimitExpired, inner_limit
    from ..reading import response

    out: dict[str, Any] = {}
    try:
        with inner_limit(seconds) as armed:
            if not armed:
                return out
            reading = response(solution)
            out["stability"] = str(reading.stability)
            slowest = reading.dominant or (reading.modes[0] if len(reading.modes) == 1 else None)
            out["slowest_time_constant"] = _time_constant(slowest.time_constant if slowest else None)
            out["final_values"] = tuple((name, r.final_value) for name, r in reading.states.items())
            out["peaks"] = tuple((name, float(r.peak[0]), float(r.peak[1])) for name, r in reading.states.items() if r.peak)
    except LimitExpired:
        pass
    except Exception:  # noqa: BLE001 - the reading is extra: a failure leaves its columns blank
        pass
    return out


def _time_constant(tau: sp.Expr | None) -> float | str | None:
    """A time constant for the summary: a float when it is a number, else its expression."""
    if tau is None:
        return None
    if not tau.free_symbols:
        return float(tau)
    return sp.sstr(tau).replace("**", "^")
