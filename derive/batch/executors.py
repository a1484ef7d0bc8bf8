"""Executors: where the cases of a batch run, behind one small interface.

An executor takes :class:`Job` records (a case pickled once, in the parent)
and hands every outcome to ``done(index, result, files)`` as it arrives; it
calls ``tick()`` while it waits, so the store can save the summary, and
``tick()`` says whether it wants to be called again soon.  Every case ends
with a result: a case that fails, runs past its hard limit or kills its
worker is recorded and the others go on.

- :class:`LocalPool`: a ``pebble`` process pool on this machine.  pebble
  stops a worker whose task runs past its timeout, notices a worker that
  died, and starts a replacement either way.
- :class:`DaskCluster`: a Dask cluster.  Each task runs the case in a child
  interpreter of the Dask worker (:func:`run_isolated`), so a crash or a hang
  never takes the Dask worker down.  Dask's workers are daemonic processes,
  which ``multiprocessing`` (and so pebble) may not give children; a plain
  subprocess with a timeout is what is left.
"""

from __future__ import annotations

import importlib
import multiprocessing as mp
import pickle
import subprocess
import sys
from collections import deque
from collections.abc import Callable, Sequence
from concurrent.futures import FIRST_COMPLETED, Future, wait
from concurrent.futures.process import BrokenProcessPool
from dataclasses import dataclass
from typing import Any, Protocol

from ..errors import InputError
from .records import CaseResult
from .store import FLUSH_EVERY
from .task import Files, Outcome, crashed, pool_failed, run_payload, settle, stopped

__all__ = ["Job", "Executor", "LocalPool", "DaskCluster", "run_isolated", "local_context"]

#: What a case needs beyond derive's own imports (they are lazy for a fast CLI):
#: imported once in the parent, so every forked worker starts with them.
PRELOAD = ("derive.pipeline", "derive.output", "derive.render", "scipy.integrate")
#: Seconds a fresh interpreter on a cluster worker may take to import derive.
_STARTUP = 60.0

Done = Callable[[int, CaseResult, Files], None]


@dataclass(frozen=True)
class Job:
    """One case to run: its place in the batch, its name and its pickled :class:`~derive.batch.task.CaseTask`."""

    index: int
    name: str
    payload: bytes


class Executor(Protocol):
    """Runs jobs; reports every outcome through ``done`` and calls ``tick`` while it waits."""

    def run(self, jobs: Sequence[Job], *, done: Done, tick: Callable[[], bool]) -> None: ...


def local_context() -> Any:
    """The process start method of the local pool: ``fork`` on Linux, ``spawn`` elsewhere.

    Why fork: a ``spawn`` or ``forkserver`` worker first re-runs the parent's
    ``__main__`` file (as ``__mp_main__``) to rebuild its state, so a plain
    script that calls :func:`derive.batch` outside ``if __name__ ==
    "__main__":`` starts the batch again inside every worker, which dies
    trying; a forked worker is a copy of the parent and runs nothing again
    (a script, ``python -c`` and a notebook alike).  It also starts in
    milliseconds with derive already imported (the parent imports
    :data:`PRELOAD` first).  The threads a fork leaves behind are pebble's
    own bookkeeping threads, which hold nothing a case needs.  macOS's
    system libraries are not safe to use after a fork and Windows has none,
    so there the batch needs the ``__main__`` guard, as Python documents for
    ``spawn``.
    """
    if sys.platform.startswith("linux"):
        return mp.get_context("fork")
    return mp.get_context("spawn")


class LocalPool:
    """Cases on up to ``workers`` processes of this machine, each task stopped after ``limit`` seconds."""

    def __init__(self, *, workers: int, limit: float | None) -> None:
        self.workers = workers
        self.limit = limit

    def run(self, jobs: Sequence[Job], *, done: Done, tick: Callable[[], bool]) -> None:
        from pebble import ProcessPool

        if not jobs:
            return
        ctx = local_context()
        if ctx.get_start_method() == "fork":
            for module in PRELOAD:
                importlib.import_module(module)
        # Never more workers than cases: each one costs a process.
        pool = ProcessPool(max_workers=min(self.workers, len(jobs)), context=ctx)
        try:
            futures: dict[Future[bytes], Job] = {
                pool.schedule(run_payload, args=(j.payload, j.name), timeout=self.limit): j for j in jobs
            }
            while futures:
                ready, _ = wait(futures, timeout=FLUSH_EVERY if tick() else None, return_when=FIRST_COMPLETED)
                for fut in sorted(ready, key=lambda f: futures[f].index):
                    job = futures.pop(fut)
                    if isinstance(fut.exception(), BrokenProcessPool):
                        # The pool itself gave up (not a case); the cases it never finished would wait forever.
                        for rest in sorted([job, *futures.values()], key=lambda j: j.index):
                            done(rest.index, pool_failed(rest.name, fut.exception()), ())
                        return
                    done(job.index, *settle(fut, job.name, self.limit))
        finally:
            pool.stop()
            pool.join()


def run_isolated(payload: bytes, name: str, limit: float | None) -> Outcome:
    """The Dask task: case ``name`` in a child interpreter of the Dask worker, stopped after ``limit`` s.

    The child reads the pickled task on stdin and writes one pickled outcome
    on stdout (:mod:`derive.batch.child`).
    """
    timeout = None if limit is None else limit + _STARTUP
    try:
        proc = subprocess.run(
            [sys.executable, "-m", "derive.batch.child", name], input=payload, capture_output=True, timeout=timeout
        )
    except subprocess.TimeoutExpired:
        return stopped(name, timeout or 0.0), ()
    lines = proc.stderr.decode("utf-8", "replace").strip().splitlines()
    if proc.returncode != 0:
        return crashed(name, proc.returncode, lines[-1] if lines else ""), ()
    try:
        result, files = pickle.loads(proc.stdout)
    except Exception:
        return crashed(name, proc.returncode, "it left no result"), ()
    return result, files


class DaskCluster:
    """Cases on the Dask cluster at ``scheduler``, at most ``in_flight`` at once (None: all)."""

    def __init__(self, *, scheduler: str, in_flight: int | None, limit: float | None) -> None:
        self.scheduler = scheduler
        self.in_flight = in_flight
        self.limit = limit

    def run(self, jobs: Sequence[Job], *, done: Done, tick: Callable[[], bool]) -> None:
        try:
            from distributed import Client, as_completed
        except ImportError:
            raise InputError(
                "--scheduler needs the optional Dask extra, which is not installed; "
                "expected: pip install 'eigensheet[cluster]'",
                key="scheduler",
            ) from None
        if not jobs:
            return
        try:
            client = Client(self.scheduler, timeout=30)
        except (OSError, TimeoutError) as exc:
            raise InputError(
                f"cannot reach the Dask scheduler at {self.scheduler!r} ({exc}); expected a running scheduler address "
                "such as tcp://127.0.0.1:8786",
                key="scheduler",
            ) from None
        queue = deque(jobs)
        in_flight = max(1, self.in_flight) if self.in_flight else len(jobs)
        futures: dict[Any, Job] = {}
        try:
            finished = as_completed()

            def submit() -> None:
                job = queue.popleft()
                # pure=False: a forced re-run must run again, not be served a result the scheduler still holds.
                fut = client.submit(run_isolated, job.payload, job.name, self.limit, pure=False)
                futures[fut] = job
                finished.add(fut)

            while queue and len(futures) < in_flight:
                submit()
            for fut in finished:
                job = futures.pop(fut)
                try:
                    result, files = fut.result()
                except Exception as exc:  # the Dask worker itself was lost
                    result, files = crashed(job.name, None, f"the cluster task failed: {type(exc).__name__}: {exc}"), ()
                done(job.index, result, files)
                if queue:
                    submit()
        finally:
            for fut in futures:
                fut.cancel()
            client.close()
