"""One case, in whatever process runs it: solve, verify, write, and say how it ended.

:func:`run_task` never raises: every failure becomes a :class:`Status` with
its reason.  The case's own, graceful limit is :func:`derive.limits.time_limit`
around the solve (SIGALRM stops pure-Python algebra between bytecodes).  The
executor adds a hard limit per task (:func:`hard_limit`): the case's limit,
the allowance for writing its outputs, and a grace period.  A worker still
busy then (stuck in C code, say) is stopped and replaced, and :func:`settle`
turns that, or a worker that died, into a result.  The hard limit is one
number for the whole task: the pool cannot tell solving from writing, so a
case stuck in C code while solving is stopped only after the writing
allowance too.

A task travels to the worker pickled once, in the parent, and is unpickled
by :func:`run_payload` inside the task itself: a case whose unpickling fails,
hangs or kills the process then does so while the pool already knows which
task its worker runs, so the pool can blame, time and replace it.
"""

from __future__ import annotations

import os
import pickle
import shutil
import signal
import tempfile
import time
from concurrent.futures import Future
from concurrent.futures import TimeoutError as FutureTimeout
from dataclasses import dataclass, replace
from pathlib import Path

from ..documents.batch_index import response_thumbnail
from ..errors import DeriveError, InputError, OutputError, TimeLimitError, VerificationError
from ..limits import time_limit
from ..model import Case, Solution
from ..settings import DEFAULT_SETTINGS, Settings
from .records import CaseResult, Status, reading_figures, solution_figures
from .store import CASES_DIR

__all__ = [
    "CaseTask",
    "Files",
    "Outcome",
    "run_task",
    "run_payload",
    "hard_limit",
    "settle",
    "crashed",
    "stopped",
    "pool_failed",
]

#: Files written by a remote worker: (path relative to the output folder, content).
Files = tuple[tuple[str, bytes], ...]
Outcome = tuple[CaseResult, Files]


@dataclass(frozen=True)
class CaseTask:
    """Everything a worker needs for one case.

    With ``collect`` the outputs are written to a scratch folder and come back
    as bytes (for a client that writes them itself: a cluster's workers need
    no shared folder).
    """

    case: Case
    out_root: str | None
    formats: tuple[str, ...]
    pdf: bool
    timeout: float
    keep_solution: bool
    collect: bool = False
    #: the solve's knobs and the TeX allowance
    settings: Settings = DEFAULT_SETTINGS
    #: values into the algebra (True), symbolic (False), or as the case file says (None)
    substitute: bool | None = None


def hard_limit(timeout: float, *, pdf: bool, settings: Settings = DEFAULT_SETTINGS) -> float | None:
    """Seconds after which the pool stops a task's worker (None: a case without a limit).

    >>> hard_limit(10, pdf=False)
    85.0
    """
    if not timeout or timeout <= 0:
        return None
    writing = settings.batch_write_seconds + settings.batch_reading_seconds + (settings.batch_tex_seconds if pdf else 0.0)
    return float(timeout) + writing + settings.batch_grace


def run_task(task: CaseTask) -> Outcome:
    """Solve, verify and write one case; every failure becomes a status, never an exception.

    With ``task.collect`` the written files come back as bytes.
    """
    from ..output import write_outputs
    from ..pipeline import solve_case

    case = task.case
    start = time.perf_counter()
    sol: Solution | None = None
    status, message = Status.OK, ""
    outputs: tuple[str, ...] = ()
    files: Files = ()
    scratch: str | None = None
    try:
        with time_limit(task.timeout, what=f"case {case.name!r}"):
            try:
                sol = solve_case(case, settings=task.settings, substitute=task.substitute)
            except VerificationError as err:
                sol = getattr(err, "solution", None)
                if sol is None:
                    raise
                status, message = Status.VERIFICATION_FAILED, str(err)
        root = task.out_root
        if task.collect and root is not None:
            scratch = root = tempfile.mkdtemp(prefix="eigensheet-case-")
        if root is not None:
            folder = Path(root, CASES_DIR, case.name)
            paths = write_outputs(
                sol, folder, stem=case.name, formats=task.formats, pdf=task.pdf, tex_timeout=task.settings.batch_tex_seconds
            )
            outputs = tuple(Path(os.path.relpath(p, root)).as_posix() for p in paths)
            if scratch is not None:
                files = tuple((o, Path(root, o).read_bytes()) for o in outputs)
    except TimeLimitError as err:
        status, message = Status.TIMEOUT, str(err)
    except VerificationError as err:
        status, message = Status.VERIFICATION_FAILED, str(err)
    except InputError as err:
        status, message = Status.BAD_INPUT, str(err)
    except OutputError as err:
        status, message = Status.ERROR, f"{message + '; ' if message else ''}{err}"
    except DeriveError as err:
        status, message = Status.ERROR, str(err)
    except RecursionError:
        status, message = Status.BAD_INPUT, "the input is nested too deeply to process"
    except MemoryError:
        status, message = Status.ERROR, "the case ran out of memory"
    except Exception as exc:  # a bug: recorded for this case, the batch goes on
        status = Status.ERROR
        message = f"internal error: {type(exc).__name__}: {exc} (a bug in eigensheet; please report it with the case file)"
    finally:
        if scratch is not None:
            shutil.rmtree(scratch, ignore_errors=True)
    figures = solution_figures(sol) if sol is not None else {}
    if sol is not None and status is Status.OK:
        figures.update(reading_figures(sol, seconds=task.settings.batch_reading_seconds))
    result = CaseResult(
        name=case.name,
        status=status,
        source=case.source or "",
        seconds=round(time.perf_counter() - start, 3),
        outputs=outputs,
        message=message,
        solution=sol if task.keep_solution else None,
        thumbnail=response_thumbnail(sol, case.name) if sol is not None and status is Status.OK else None,
        **figures,
    )
    return result, files


def run_payload(payload: bytes, name: str) -> bytes:
    """Worker entry: unpickle the :class:`CaseTask` of case ``name``, run it, and pickle the outcome.

    A solution that cannot be pickled is dropped from the record rather than
    losing the record.
    """
    try:
        task = pickle.loads(payload)
    except Exception as exc:
        result = CaseResult(
            name=name,
            status=Status.ERROR,
            message=f"the case could not be unpickled in the worker: {type(exc).__name__}: {exc}",
        )
        return pickle.dumps((result, ()))
    outcome = run_task(task)
    try:
        return pickle.dumps(outcome)
    except Exception:
        return pickle.dumps((replace(outcome[0], solution=None), outcome[1]))


def _describe_exit(code: int | None) -> str:
    if code is None:
        return "no exit status"
    if code < 0:
        try:
            return f"killed by signal {signal.Signals(-code).name}"
        except ValueError:
            return f"killed by signal {-code}"
    return f"exit status {code}"


def crashed(name: str, code: int | None, detail: str = "") -> CaseResult:
    """The record of a case whose worker process died (``code``: its exit code)."""
    tail = f": {detail}" if detail else ""
    return CaseResult(
        name=name,
        status=Status.CRASHED,
        message=f"the worker process died while running case {name!r} ({_describe_exit(code)}){tail}; "
        "nothing was written for this case",
    )


def stopped(name: str, limit: float) -> CaseResult:
    return CaseResult(
        name=name,
        status=Status.TIMEOUT,
        seconds=round(limit, 3),
        message=f"case {name!r} did not finish within {limit:g} s (its time limit, the allowance for "
        "writing its outputs and a grace period) and its worker was stopped; "
        "raise the limit with --timeout, or simplify the case",
    )


def pool_failed(name: str, exc: BaseException | None) -> CaseResult:
    """The record of a case the worker pool could not run (a failure of the pool, not of the case)."""
    return CaseResult(
        name=name,
        status=Status.ERROR,
        message=f"the worker pool failed before case {name!r} finished: {type(exc).__name__}: {exc}; run it again",
    )


def settle(future: Future[bytes], name: str, limit: float | None) -> Outcome:
    """The outcome of a finished pool future that ran :func:`run_payload` for case ``name``."""
    from pebble import ProcessExpired

    try:
        result, files = pickle.loads(future.result())
    except FutureTimeout:
        # pebble reports a task past its hard limit as TimeoutError, after stopping its worker.
        return stopped(name, limit or 0.0), ()
    except ProcessExpired as exc:
        return crashed(name, exc.exitcode), ()
    except Exception as exc:  # the pool itself failed (not the case): recorded, the batch goes on
        return pool_failed(name, exc), ()
    return result, files
