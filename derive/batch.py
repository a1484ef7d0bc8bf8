"""Many cases, each isolated: a worker pool, a summary, an index, a cache.

Each case is solved, verified and written in a worker process under its own
time limit.  A case that fails, runs out of time or kills its worker (a
segfault in a C extension, ``os._exit``, the out-of-memory killer) is
recorded with its reason and never stops the others.

Why long-lived workers from a ``forkserver``: a fresh interpreter per case
costs about a second of imports (sympy, scipy), which dominates a batch of
small cases.  The fork server imports ``derive`` once; every worker is forked
from it (milliseconds) and runs case after case.  Inside a worker the case
runs under ``SIGALRM`` (:func:`derive.limits.time_limit`), which stops pure
Python algebra cleanly; the parent also keeps a hard deadline per case and
kills a worker that does not answer in time (stuck in C code), then starts a
replacement.  The deadline is split in two phases -- solving, then writing
(rendering and TeX, which have their own limit) -- so a slow PDF build is not
mistaken for a slow solve.

The summary (``summary.json``, ``summary.csv``) and the cache are rewritten
atomically after every finished case, so an interrupted batch leaves them
consistent with the outputs on disk.  Outputs of case ``NAME`` go to
``OUT/cases/NAME/``; the summary, the index and the cache sit in ``OUT``
itself, so no case name can collide with them.

On a Dask cluster (``scheduler=ADDRESS``) each task runs the same
:func:`run_task` in a child interpreter with the same two-phase deadline, so a
crash never takes the Dask worker down; the outputs travel back with the
result and are written by the client, so the workers need no shared folder.
"""

from __future__ import annotations

import csv
import hashlib
import io
import json
import multiprocessing as mp
import os
import pickle
import re
import select
import shutil
import signal
import struct
import subprocess
import sys
import tempfile
import time
from collections import deque
from collections.abc import Callable, Iterable, Mapping, Sequence
from dataclasses import dataclass, field, fields, replace
from multiprocessing.connection import wait as _wait_ready
from pathlib import Path
from typing import Any, TextIO

import sympy as sp

from . import __version__
from .documents.batch_index import write_index
from .errors import DeriveError, InputError, OutputError, TimeLimitError, VerificationError
from .limits import DEFAULT_TIMEOUT, time_limit
from .model import Case, Solution
from .output import atomic_write_bytes

__all__ = [
    "STATUSES",
    "CaseResult",
    "BatchReport",
    "batch",
    "collect_cases",
    "case_key",
    "spectrum_kind",
    "run_task",
    "CACHE_NAME",
]

#: Every status a case can end with, in the order the summary counts them.
STATUSES: tuple[str, ...] = ("ok", "verification-failed", "bad-input", "timeout", "crashed", "error")

CACHE_NAME = ".derive-cache.json"
_CASES_DIR = "cases"
#: Seconds past a case's own limit before the parent kills a silent worker.
_GRACE = 5.0
#: Hard limit for rendering and writing one case (TeX has its own limit inside).
_WRITE_LIMIT = 60.0
#: Time a fresh interpreter on a cluster worker may take to import derive.
_STARTUP = 60.0
_TEX_TIMEOUT = 120.0
#: Seconds between rewrites of the summary and cache during a batch (always at the end).
_FLUSH_EVERY = 0.5


# ---------------------------------------------------------------------------
# Records
# ---------------------------------------------------------------------------


@dataclass(frozen=True)
class CaseResult:
    """The outcome of one case, as the summary records it.

    ``outputs`` are paths relative to the batch's output folder; ``solution``
    is kept only when asked for (``keep_solutions``) and never for a result
    reused from the cache.
    """

    name: str
    status: str
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

    @property
    def ok(self) -> bool:
        return self.status == "ok"

    def row(self) -> dict[str, Any]:
        """The JSON-ready record (no solution)."""
        out = {f.name: getattr(self, f.name) for f in fields(self) if f.name != "solution"}
        out["case"] = out.pop("name")
        out["eigenvalues"] = list(self.eigenvalues)
        out["outputs"] = list(self.outputs)
        return {"case": out.pop("case"), **out}

    @classmethod
    def from_row(cls, row: Mapping[str, Any]) -> "CaseResult":
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
    def counts(self) -> dict[str, int]:
        """Number of cases per status, every status present (zeros included)."""
        counts = {s: 0 for s in STATUSES}
        for r in self.results:
            counts[r.status] = counts.get(r.status, 0) + 1
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


# ---------------------------------------------------------------------------
# What a solution says about itself
# ---------------------------------------------------------------------------


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


def _figures(solution: Solution) -> dict[str, Any]:
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


# ---------------------------------------------------------------------------
# One case, in whatever process runs it
# ---------------------------------------------------------------------------


@dataclass(frozen=True)
class _Task:
    """Everything a worker needs for one case; pickled once, in the parent."""

    case: Case
    out_root: str | None
    formats: tuple[str, ...]
    pdf: bool
    timeout: float
    keep_solution: bool
    collect: bool = False


Files = tuple[tuple[str, bytes], ...]


def run_task(task: _Task, notify: Callable[[], None] = lambda: None) -> tuple[CaseResult, Files]:
    """Solve, verify and write one case; every failure becomes a status, never an exception.

    ``notify`` is called between solving and writing so a supervisor can
    switch to the writing deadline.  With ``task.collect`` the written files
    come back as bytes (for a client that writes them itself).
    """
    from .output import write_outputs
    from .pipeline import solve_case

    case = task.case
    start = time.perf_counter()
    sol: Solution | None = None
    status, message = "ok", ""
    outputs: tuple[str, ...] = ()
    files: Files = ()
    scratch: str | None = None
    try:
        with time_limit(task.timeout, what=f"case {case.name!r}"):
            try:
                sol = solve_case(case)
            except VerificationError as err:
                sol = getattr(err, "solution", None)
                if sol is None:
                    raise
                status, message = "verification-failed", str(err)
        notify()
        root = task.out_root
        if task.collect and root is not None:
            scratch = root = tempfile.mkdtemp(prefix="derive-case-")
        if root is not None:
            folder = Path(root, _CASES_DIR, case.name)
            paths = write_outputs(
                sol, folder, stem=case.name, formats=task.formats, pdf=task.pdf, tex_timeout=_TEX_TIMEOUT
            )
            outputs = tuple(Path(os.path.relpath(p, root)).as_posix() for p in paths)
            if scratch is not None:
                files = tuple((o, Path(root, o).read_bytes()) for o in outputs)
    except TimeLimitError as err:
        status, message = "timeout", str(err)
    except VerificationError as err:
        status, message = "verification-failed", str(err)
    except InputError as err:
        status, message = "bad-input", str(err)
    except OutputError as err:
        status, message = "error", f"{message + '; ' if message else ''}{err}"
    except DeriveError as err:
        status, message = "error", str(err)
    except RecursionError:
        status, message = "bad-input", "the input is nested too deeply to process"
    except MemoryError:
        status, message = "error", "the case ran out of memory"
    except Exception as exc:  # a bug: recorded for this case, the batch goes on
        status = "error"
        message = f"internal error: {type(exc).__name__}: {exc} (a bug in derive; please report it with the case file)"
    finally:
        if scratch is not None:
            shutil.rmtree(scratch, ignore_errors=True)
    figures = _figures(sol) if sol is not None else {}
    result = CaseResult(
        name=case.name,
        status=status,
        source=case.source or "",
        seconds=round(time.perf_counter() - start, 3),
        outputs=outputs,
        message=message,
        solution=sol if task.keep_solution else None,
        **figures,
    )
    return result, files


def _describe_exit(code: int | None) -> str:
    if code is None:
        return "no exit status"
    if code < 0:
        try:
            return f"killed by signal {signal.Signals(-code).name}"
        except ValueError:
            return f"killed by signal {-code}"
    return f"exit status {code}"


def _crashed(name: str, code: int | None, seconds: float, detail: str = "") -> CaseResult:
    tail = f": {detail}" if detail else ""
    return CaseResult(
        name=name,
        status="crashed",
        seconds=round(seconds, 3),
        message=f"the worker process died while running case {name!r} ({_describe_exit(code)}){tail}; "
        "nothing was written for this case",
    )


def _killed(name: str, limit: float, phase: str, seconds: float) -> CaseResult:
    return CaseResult(
        name=name,
        status="timeout",
        seconds=round(seconds, 3),
        message=f"case {name!r} did not finish {phase} within {limit:g} s and its worker was stopped; "
        "raise the limit with --timeout, or simplify the case",
    )


# ---------------------------------------------------------------------------
# The local pool: long-lived workers, replaced when they die or time out
# ---------------------------------------------------------------------------


def _worker_main(conn: Any) -> None:
    """Loop of one pool worker: receive a pickled task, run it, send the result."""
    # Ctrl-C is for the parent: it stops the batch and kills the workers itself.
    signal.signal(signal.SIGINT, signal.SIG_IGN)
    while True:
        try:
            data = conn.recv_bytes()
        except (EOFError, OSError):
            return
        if not data:
            return
        try:
            task = pickle.loads(data)
        except Exception as exc:
            conn.send(("failed", f"the case could not be unpickled in the worker: {type(exc).__name__}: {exc}"))
            continue
        result, files = run_task(task, lambda: conn.send(("solved",)))
        try:
            conn.send(("result", result, files))
        except Exception:
            # A solution that cannot be pickled: send the record without it.
            conn.send(("result", replace(result, solution=None), files))


@dataclass
class _Slot:
    """One worker process and the job it is running (mutable: it is the parent's bookkeeping)."""

    proc: Any
    conn: Any
    job: int | None = None
    started: float = 0.0
    deadline: float | None = None
    phase: str = ""

    def kill(self) -> None:
        if self.proc.is_alive():
            self.proc.kill()
        self.proc.join(5)
        self.conn.close()


# What a case needs beyond derive's own imports (they are lazy for a fast CLI).
_PRELOAD = ("derive.batch", "derive.pipeline", "derive.output", "derive.render", "scipy.integrate")


def _context() -> Any:
    methods = mp.get_all_start_methods()
    if "forkserver" in methods:
        ctx = mp.get_context("forkserver")
        # The fork server imports derive once; every worker is forked from it.
        ctx.set_forkserver_preload(list(_PRELOAD))
        return ctx
    return mp.get_context("spawn")


def _start_slot(ctx: Any) -> _Slot:
    parent, child = ctx.Pipe(duplex=True)
    proc = ctx.Process(target=_worker_main, args=(child,), daemon=True, name="derive-batch-worker")
    proc.start()
    child.close()
    return _Slot(proc=proc, conn=parent)


@dataclass(frozen=True)
class _Job:
    index: int
    name: str
    payload: bytes


def _limits(timeout: float, pdf: bool) -> tuple[float | None, float]:
    """Hard deadlines of the two phases: solving (None: no limit), then writing."""
    solve = timeout + _GRACE if timeout and timeout > 0 else None
    return solve, _WRITE_LIMIT + (_TEX_TIMEOUT if pdf else 0.0)


def _run_local(
    jobs: Sequence[_Job],
    *,
    workers: int,
    timeout: float,
    pdf: bool,
    done: Callable[[int, CaseResult, Files], None],
    tick: Callable[[], bool] = lambda: False,
) -> None:
    """Run ``jobs`` on up to ``workers`` long-lived processes; ``done`` gets every result,
    ``tick`` is called every round and says whether it wants to be called again soon."""
    if not jobs:
        return
    ctx = _context()
    solve_limit, write_limit = _limits(timeout, pdf)
    queue = deque(jobs)
    by_index = {j.index: j for j in jobs}
    slots: list[_Slot] = []

    def fill() -> None:
        # Keep every slot busy; start workers lazily, never more than needed.
        for slot in slots:
            if slot.job is None and queue:
                _assign(slot, queue.popleft(), solve_limit)
        while queue and len(slots) < workers:
            slot = _start_slot(ctx)
            slots.append(slot)
            _assign(slot, queue.popleft(), solve_limit)

    try:
        while queue or any(s.job is not None for s in slots):
            fill()
            busy = [s for s in slots if s.job is not None]
            now = time.monotonic()
            deadlines = [s.deadline for s in busy if s.deadline is not None]
            wait_for = max(0.0, min(deadlines) - now) if deadlines else None
            if tick():
                wait_for = _FLUSH_EVERY if wait_for is None else min(wait_for, _FLUSH_EVERY)
            ready = set(_wait_ready([s.conn for s in busy] + [s.proc.sentinel for s in busy], timeout=wait_for))
            now = time.monotonic()
            outcomes: list[tuple[int, CaseResult, Files]] = []
            for slot in busy:
                job = by_index[slot.job]  # type: ignore[index]
                if slot.conn in ready or slot.proc.sentinel in ready:
                    message = None
                    try:
                        if slot.conn.poll():
                            message = slot.conn.recv()
                    except (EOFError, OSError):
                        message = None
                    if message is None:
                        if slot.proc.is_alive() and slot.conn.closed is False and slot.proc.sentinel not in ready:
                            continue
                        slot.proc.join(2)
                        outcomes.append((job.index, _crashed(job.name, slot.proc.exitcode, now - slot.started), ()))
                        _replace(slots, slot)
                        continue
                    if message[0] == "solved":
                        slot.phase, slot.deadline = "writing its outputs", now + write_limit
                        continue
                    if message[0] == "failed":
                        outcomes.append((job.index, CaseResult(name=job.name, status="error", message=message[1]), ()))
                    else:
                        outcomes.append((job.index, message[1], message[2]))
                    slot.job = None
                elif slot.deadline is not None and now >= slot.deadline:
                    limit = solve_limit if slot.phase == "solving" else write_limit
                    outcomes.append((job.index, _killed(job.name, limit or 0.0, slot.phase, now - slot.started), ()))
                    _replace(slots, slot)
            # Hand out the next cases before the bookkeeping, so workers never wait for the parent's writes.
            fill()
            for outcome in outcomes:
                done(*outcome)
    finally:
        for slot in slots:
            slot.kill()


def _assign(slot: _Slot, job: _Job, solve_limit: float | None) -> None:
    slot.job = job.index
    slot.started = time.monotonic()
    slot.deadline = None if solve_limit is None else slot.started + solve_limit
    slot.phase = "solving"
    try:
        slot.conn.send_bytes(job.payload)
    except OSError:
        # The idle worker died (e.g. the OOM killer); its sentinel reports it
        # on the next wait and the case is recorded as crashed, then retried by no one.
        pass


def _replace(slots: list[_Slot], dead: _Slot) -> None:
    dead.kill()
    slots.remove(dead)
    # The replacement is started lazily by the main loop when work remains.


# ---------------------------------------------------------------------------
# A Dask cluster: the same task, in a child interpreter on the worker
# ---------------------------------------------------------------------------

_CHILD = "from derive.batch import _child_main; _child_main()"


def _child_main() -> None:
    """Entry of a cluster child: a pickled task on stdin, framed messages on stdout."""
    out = os.fdopen(os.dup(1), "wb", buffering=0)
    # Anything a library prints goes to stderr, never into the frames.
    os.dup2(2, 1)
    task = pickle.loads(sys.stdin.buffer.read())

    def notify() -> None:
        out.write(b"S")

    result, files = run_task(task, notify)
    try:
        data = pickle.dumps((result, files))
    except Exception:
        data = pickle.dumps((replace(result, solution=None), files))
    out.write(b"R" + struct.pack(">Q", len(data)) + data)
    out.close()


def _read_exact(fd: int, n: int, deadline: float | None) -> bytes | None:
    chunks: list[bytes] = []
    while n > 0:
        wait = None if deadline is None else max(0.0, deadline - time.monotonic())
        r, _, _ = select.select([fd], [], [], wait)
        if not r:
            return None
        chunk = os.read(fd, min(n, 1 << 20))
        if not chunk:
            raise EOFError
        chunks.append(chunk)
        n -= len(chunk)
    return b"".join(chunks)


def _cluster_task(name: str, payload: bytes, timeout: float, pdf: bool) -> tuple[CaseResult, Files]:
    """Run one case in a child interpreter with the two-phase deadline (runs on a Dask worker)."""
    solve_limit, write_limit = _limits(timeout, pdf)
    start = time.monotonic()
    with tempfile.TemporaryFile() as err:
        proc = subprocess.Popen(
            [sys.executable, "-c", _CHILD], stdin=subprocess.PIPE, stdout=subprocess.PIPE, stderr=err
        )
        try:
            assert proc.stdin is not None and proc.stdout is not None
            try:
                proc.stdin.write(payload)
                proc.stdin.close()
            except BrokenPipeError:
                pass
            fd = proc.stdout.fileno()
            deadline = None if solve_limit is None else start + _STARTUP + solve_limit
            phase, limit = "solving", solve_limit
            while True:
                try:
                    tag = _read_exact(fd, 1, deadline)
                    if tag is None:
                        return _killed(name, limit or 0.0, phase, time.monotonic() - start), ()
                    if tag == b"S":
                        phase, limit = "writing its outputs", write_limit
                        deadline = time.monotonic() + write_limit
                        continue
                    head = _read_exact(fd, 8, deadline)
                    body = None if head is None else _read_exact(fd, struct.unpack(">Q", head)[0], deadline)
                    if body is None:
                        return _killed(name, limit or 0.0, phase, time.monotonic() - start), ()
                    return pickle.loads(body)
                except EOFError:
                    proc.wait(10)
                    err.seek(0)
                    lines = err.read().decode("utf-8", "replace").strip().splitlines()
                    return _crashed(name, proc.returncode, time.monotonic() - start, lines[-1] if lines else ""), ()
        finally:
            if proc.poll() is None:
                proc.kill()
            proc.wait()


def _run_cluster(
    jobs: Sequence[_Job],
    *,
    scheduler: str,
    workers: int | None,
    timeout: float,
    pdf: bool,
    done: Callable[[int, CaseResult, Files], None],
) -> None:
    try:
        from distributed import Client, as_completed
    except ImportError:
        raise InputError(
            "--scheduler needs the optional Dask extra, which is not installed; "
            "expected: pip install 'derive[cluster]'",
            key="scheduler",
        ) from None
    if not jobs:
        return
    try:
        client = Client(scheduler, timeout=30)
    except (OSError, TimeoutError) as exc:
        raise InputError(
            f"cannot reach the Dask scheduler at {scheduler!r} ({exc}); expected a running scheduler address "
            "such as tcp://127.0.0.1:8786",
            key="scheduler",
        ) from None
    queue = deque(jobs)
    in_flight = max(1, workers) if workers else len(jobs)
    futures: dict[Any, _Job] = {}
    try:
        pool = as_completed()

        def submit() -> None:
            job = queue.popleft()
            fut = client.submit(_cluster_task, job.name, job.payload, timeout, pdf, pure=False)
            futures[fut] = job
            pool.add(fut)

        while queue and len(futures) < in_flight:
            submit()
        for fut in pool:
            job = futures.pop(fut)
            try:
                result, files = fut.result()
            except Exception as exc:  # the Dask worker itself was lost
                result, files = _crashed(job.name, None, 0.0, f"the cluster task failed: {type(exc).__name__}: {exc}"), ()
            done(job.index, result, files)
            if queue:
                submit()
    finally:
        for fut in futures:
            fut.cancel()
        client.close()


# ---------------------------------------------------------------------------
# Collecting cases
# ---------------------------------------------------------------------------

_SOLVE_KEYS = ("A", "f", "t", "x0", "t0", "params")
_BAD_NAME = re.compile(r"[^A-Za-z0-9_.-]")


@dataclass(frozen=True)
class _Entry:
    """One case to run, or the record of one that could not be loaded."""

    name: str
    source: str
    case: Case | None = None
    failure: CaseResult | None = None


def _failure(name: str, source: str, err: BaseException) -> _Entry:
    safe = _BAD_NAME.sub("_", name).lstrip(".") or "case"
    message = str(err) if isinstance(err, DeriveError) else f"{type(err).__name__}: {err}"
    return _Entry(safe, source, failure=CaseResult(name=safe, status="bad-input", source=source, message=message))


def _from_file(path: Path) -> list[_Entry]:
    from .casefile import load_cases

    try:
        return [_Entry(c.name, str(path), case=c) for c in load_cases(path)]
    except RecursionError:
        return [_failure(path.stem, str(path), InputError("the input is nested too deeply to process", file=str(path)))]
    except DeriveError as err:
        return [_failure(path.stem, str(path), err)]


def _from_kwargs(name: object, kwargs: object) -> _Entry:
    from .pipeline import build_system

    source = "(script)"
    if not isinstance(name, str):
        return _failure(str(name), source, InputError(f"a case given as (name, arguments) needs a string name, found {type(name).__name__}", key="name"))
    if not isinstance(kwargs, Mapping):
        return _failure(name, source, InputError(f"case {name!r}: expected a mapping of solve() arguments, found {type(kwargs).__name__}", key=name))
    unknown = [k for k in kwargs if k not in _SOLVE_KEYS]
    if unknown:
        return _failure(name, source, InputError(
            f"case {name!r}: unknown argument(s) {', '.join(map(repr, unknown))}; expected any of {', '.join(_SOLVE_KEYS)}",
            key=f"{name}.{unknown[0]}",
        ))
    if "A" not in kwargs:
        return _failure(name, source, InputError(f"case {name!r}: no matrix A; expected an 'A' entry", key=f"{name}.A"))
    try:
        system, notices = build_system(**dict(kwargs))
    except DeriveError as err:
        return _failure(name, source, err.with_location(key=name))
    return _Entry(name, source, case=Case(name=name, system=system, source=source, notices=notices))


def collect_cases(items: Iterable[Any]) -> tuple[_Entry, ...]:
    """Expand paths (files, folders searched recursively for ``*.toml``), Case objects
    and ``(name, solve-arguments)`` pairs into entries, in order; failures become records.

    >>> [e.name for e in collect_cases([("decay", {"A": [[-1]]})])]
    ['decay']
    """
    from .output import check_stem

    entries: list[_Entry] = []
    for item in items:
        if isinstance(item, Case):
            entries.append(_Entry(item.name, item.source or "(script)", case=item))
        elif isinstance(item, tuple) and len(item) == 2 and not isinstance(item[0], os.PathLike):
            entries.append(_from_kwargs(*item))
        elif isinstance(item, (str, os.PathLike)):
            path = Path(item)
            if path.is_dir():
                files = sorted(p for p in path.rglob("*.toml") if p.is_file())
                for f in files:
                    entries.extend(_from_file(f))
            elif path.exists():
                entries.extend(_from_file(path))
            else:
                raise InputError(f"{path}: no such file or folder; expected a case file (*.toml) or a folder of them", file=str(path))
        else:
            raise InputError(
                f"cannot use {type(item).__name__} as a case; expected a path, a Case or a (name, solve-arguments) pair",
                key="cases",
            )
    seen: dict[str, str] = {}
    out: list[_Entry] = []
    for e in entries:
        if e.case is not None:
            try:
                check_stem(e.name)
            except InputError as err:
                e = _failure(e.name, e.source, InputError(f"case name {e.name!r}: {err.message}", file=e.source))
            else:
                if e.name in seen:
                    e = _failure(e.name, e.source, InputError(
                        f"duplicate case name {e.name!r}: also from {seen[e.name]}; expected unique names "
                        "(their outputs would overwrite each other)",
                        file=e.source,
                    ))
                else:
                    seen[e.name] = e.source
        out.append(e)
    return tuple(out)


# ---------------------------------------------------------------------------
# Cache, summary, index
# ---------------------------------------------------------------------------


def case_key(case: Case, *, formats: Sequence[str], pdf: bool) -> str:
    """Content hash of a case and of what would be written for it (with derive's version).

    >>> from derive.casefile import loads_case
    >>> len(case_key(loads_case('[system]\\nmatrix = [[-1]]'), formats=("latex",), pdf=False))
    64
    """
    s = case.system
    parts = [
        __version__,
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
    ]
    return hashlib.sha256("\x1f".join(parts).encode("utf-8")).hexdigest()


def _write_text(path: Path, text: str) -> None:
    from .output import atomic_write_text

    atomic_write_text(path, text)


def _read_cache(out_dir: Path) -> dict[str, dict[str, Any]]:
    try:
        data = json.loads((out_dir / CACHE_NAME).read_text(encoding="utf-8"))
    except (OSError, ValueError):
        return {}
    if not isinstance(data, dict) or data.get("format") != 1 or not isinstance(data.get("cases"), dict):
        return {}
    return {k: v for k, v in data["cases"].items() if isinstance(v, dict)}


def _cached(entry: dict[str, Any] | None, key: str, out_dir: Path) -> CaseResult | None:
    if not entry or entry.get("key") != key:
        return None
    try:
        result = CaseResult.from_row(entry["result"])
    except (KeyError, TypeError):
        return None
    if result.status != "ok" or not all((out_dir / o).is_file() for o in result.outputs):
        return None
    return replace(result, cached=True, key=key)


_CSV_COLUMNS = (
    "case", "status", "spectrum", "eigenvalues", "residual_method", "residual_zero", "initial_ok",
    "numeric_method", "max_rel_gap", "seconds", "cached", "outputs", "message", "source",
)


def _csv(results: Sequence[CaseResult]) -> str:
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(_CSV_COLUMNS)
    for r in results:
        row = r.row()
        row["eigenvalues"] = "; ".join(r.eigenvalues)
        row["outputs"] = "; ".join(r.outputs)
        w.writerow(["" if row[c] is None else row[c] for c in _CSV_COLUMNS])
    return buf.getvalue()


def _write_summary(out_dir: Path, results: Sequence[CaseResult], *, total: int, interrupted: bool) -> None:
    report = BatchReport(results=tuple(results))
    data = {
        "program": "derive",
        "version": __version__,
        "complete": len(results) == total and not interrupted,
        "interrupted": interrupted,
        "total": total,
        "finished": len(results),
        "counts": report.counts,
        "cases": [r.row() for r in results],
    }
    # CSV first, JSON last: the JSON's "finished" never claims more than the CSV holds.
    _write_text(out_dir / "summary.csv", _csv(results))
    _write_text(out_dir / "summary.json", json.dumps(data, indent=2) + "\n")


def _write_cache(out_dir: Path, cache: Mapping[str, dict[str, Any]]) -> None:
    _write_text(out_dir / CACHE_NAME, json.dumps({"format": 1, "version": __version__, "cases": dict(cache)}, indent=1))


# ---------------------------------------------------------------------------
# Progress
# ---------------------------------------------------------------------------


class _Progress:
    """One ``\\r`` line on a terminal: done, failed, remaining. Silent otherwise."""

    def __init__(self, total: int, *, enabled: bool, stream: TextIO) -> None:
        self.total, self.enabled, self.stream = total, enabled, stream
        self.done = self.failed = 0

    def update(self, result: CaseResult) -> None:
        self.done += 1
        self.failed += not result.ok
        if self.enabled:
            self.stream.write(
                f"\rderive batch: {self.done}/{self.total} done, {self.failed} failed, "
                f"{self.total - self.done} remaining "
            )
            self.stream.flush()

    def close(self) -> None:
        if self.enabled and self.done:
            self.stream.write("\n")
            self.stream.flush()


# ---------------------------------------------------------------------------
# The API
# ---------------------------------------------------------------------------


def batch(
    cases: Iterable[Any],
    *,
    jobs: int | None = None,
    timeout: float = DEFAULT_TIMEOUT,
    out_dir: str | os.PathLike[str] | None = None,
    formats: Sequence[str] = ("latex",),
    pdf: bool | None = False,
    force: bool = False,
    scheduler: str | None = None,
    progress: bool | None = None,
    keep_solutions: bool = True,
) -> BatchReport:
    """Solve many cases, each in its own worker under its own time limit.

    ``cases`` holds paths (case files, or folders searched for ``*.toml``;
    a file with a ``[sweep]`` gives one case per combination), ``Case``
    objects, or ``(name, {"A": ..., "f": ..., "x0": ..., ...})`` pairs of
    :func:`derive.solve` arguments.  With ``out_dir`` every case's sheet goes
    to ``out_dir/cases/<name>/``, with ``summary.json``, ``summary.csv``, the
    index (``index.tex``) and a cache beside them; unchanged cases that
    succeeded before are reused unless ``force``.  ``pdf=None`` builds PDFs
    when latexmk is available.  ``scheduler`` is a Dask scheduler address.

    >>> report = batch([("decay", {"A": [[-1]], "x0": [1]})], jobs=1)  # doctest: +SKIP
    >>> report.exit_code, report["decay"].solution.x[0]                # doctest: +SKIP
    (0, exp(-t))
    """
    from .output import latex_available

    if jobs is not None and (isinstance(jobs, bool) or not isinstance(jobs, int) or jobs < 1):
        raise InputError(f"jobs is {jobs!r}; expected a whole number of at least 1", key="jobs")
    if isinstance(timeout, bool) or not isinstance(timeout, (int, float)) or timeout < 0:
        raise InputError(f"timeout is {timeout!r}; expected seconds >= 0 (0: no limit)", key="timeout")
    if isinstance(cases, (str, os.PathLike, Case)):
        cases = [cases]
    entries = collect_cases(cases)
    if not entries:
        raise InputError("no cases found; expected case files (*.toml), folders of them, Case objects or (name, arguments) pairs", key="cases")
    want_pdf = latex_available() if pdf is None else bool(pdf)
    formats = tuple(dict.fromkeys(formats))
    folder = Path(out_dir) if out_dir is not None else None
    if folder is not None:
        if folder.exists() and not folder.is_dir():
            raise OutputError(f"{folder}: exists and is not a folder; expected an output folder", file=str(folder))
        folder.mkdir(parents=True, exist_ok=True)
    total = len(entries)
    results: dict[int, CaseResult] = {}
    cache = _read_cache(folder) if folder is not None else {}
    show = sys.stderr.isatty() if progress is None else progress
    bar = _Progress(total, enabled=show, stream=sys.stderr)
    interrupted = False

    def finished() -> list[CaseResult]:
        return [results[i] for i in sorted(results)]

    # [time of the last rewrite, results not yet in the summary]
    flushed: list[Any] = [0.0, False]

    def flush() -> None:
        if folder is not None:
            _write_cache(folder, cache)
            _write_summary(folder, finished(), total=total, interrupted=False)
        flushed[:] = [time.monotonic(), False]

    def tick() -> bool:
        """Rewrite the summary if results wait and the last rewrite is old enough; True if some still wait."""
        if flushed[1] and time.monotonic() - flushed[0] >= _FLUSH_EVERY:
            flush()
        return bool(flushed[1])

    def done(index: int, result: CaseResult, files: Files, *, write: bool = True) -> None:
        entry = entries[index]
        key = keys.get(index, "")
        result = replace(result, source=entry.source, key=key)
        if folder is not None:
            for rel, data in files:
                target = folder / rel
                target.parent.mkdir(parents=True, exist_ok=True)
                atomic_write_bytes(target, data)
        results[index] = result
        if folder is not None:
            if result.ok and key:
                cache[result.name] = {"key": key, "result": result.row()}
            else:
                cache.pop(result.name, None)
        # At most a few rewrites a second: each is a whole-file atomic replace, so a
        # batch of hundreds would otherwise spend its time rewriting the summary.
        # Whatever the summary lists is complete on disk at every moment.
        if write:
            flushed[1] = True
            tick()
        bar.update(result)

    keys: dict[int, str] = {}
    work: list[_Job] = []
    for i, e in enumerate(entries):
        if e.failure is not None or e.case is None:
            done(i, e.failure or CaseResult(name=e.name, status="error", message="no case"), (), write=False)
            continue
        keys[i] = case_key(e.case, formats=formats, pdf=want_pdf) if folder is not None else ""
        reuse = None if force or folder is None else _cached(cache.get(e.name), keys[i], folder)
        if reuse is not None:
            done(i, reuse, (), write=False)
            continue
        task = _Task(
            case=e.case,
            out_root=None if folder is None else str(folder.resolve()),
            formats=formats,
            pdf=want_pdf,
            timeout=float(timeout),
            keep_solution=keep_solutions,
            collect=scheduler is not None and folder is not None,
        )
        work.append(_Job(index=i, name=e.name, payload=pickle.dumps(task)))

    # Results known before any worker runs (load failures, reuse) are written once.
    flush()
    workers = jobs or (len(os.sched_getaffinity(0)) if hasattr(os, "sched_getaffinity") else os.cpu_count() or 1)
    index_error = ""
    try:
        if scheduler is not None:
            _run_cluster(work, scheduler=scheduler, workers=jobs, timeout=float(timeout), pdf=want_pdf, done=done)
        else:
            _run_local(work, workers=workers, timeout=float(timeout), pdf=want_pdf, done=done, tick=tick)
    except KeyboardInterrupt:
        interrupted = True
        raise
    finally:
        bar.close()
        if folder is not None:
            _write_cache(folder, cache)
            _write_summary(folder, finished(), total=total, interrupted=interrupted)
            try:
                # No TeX run after Ctrl-C: the user wants the prompt back.
                write_index(folder, finished(), counts=BatchReport(results=tuple(finished())).counts, pdf=want_pdf and not interrupted, interrupted=interrupted, total=total)
            except DeriveError as err:
                index_error = str(err)
    return BatchReport(results=tuple(finished()), out_dir=folder, index_error=index_error)


