"""The batch API: collect the cases, reuse what is cached, run the rest, write the summary and the index."""

from __future__ import annotations

import os
import pickle
import sys
from collections.abc import Iterable, Sequence
from dataclasses import replace
from pathlib import Path
from typing import Any

from ..documents.batch_index import write_index
from ..errors import DeriveError, InputError, OutputError
from ..limits import DEFAULT_TIMEOUT
from ..model import Case
from ..settings import DEFAULT_SETTINGS, Settings
from .collect import collect_cases
from .executors import DaskCluster, Executor, Job, LocalPool
from .progress import Progress
from .records import BatchReport, CaseResult, Status
from .store import ResultStore, case_key
from .task import CaseTask, Files, hard_limit

__all__ = ["batch"]


def _check_options(jobs: object, timeout: object) -> None:
    if jobs is not None and (isinstance(jobs, bool) or not isinstance(jobs, int) or jobs < 1):
        raise InputError(f"jobs is {jobs!r}; expected a whole number of at least 1", key="jobs")
    if isinstance(timeout, bool) or not isinstance(timeout, (int, float)) or timeout < 0:
        raise InputError(f"timeout is {timeout!r}; expected seconds >= 0 (0: no limit)", key="timeout")


def _out_folder(out_dir: str | os.PathLike[str] | None) -> Path | None:
    if out_dir is None:
        return None
    folder = Path(out_dir)
    if folder.exists() and not folder.is_dir():
        raise OutputError(f"{folder}: exists and is not a folder; expected an output folder", file=str(folder))
    folder.mkdir(parents=True, exist_ok=True)
    return folder


def _cpus() -> int:
    return len(os.sched_getaffinity(0)) if hasattr(os, "sched_getaffinity") else os.cpu_count() or 1


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
    settings: Settings = DEFAULT_SETTINGS,
    substitute: bool | None = None,
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
    ``settings`` holds the grace period and the writing allowance of the
    hard limit per case (:func:`derive.batch.task.hard_limit`).
    ``substitute`` puts every case's parameter values into the algebra
    (True), keeps them symbolic (False), or follows each case file's
    ``[solve] values`` (None).

    >>> report = batch([("decay", {"A": [[-1]], "x0": [1]})], jobs=1)  # doctest: +SKIP
    >>> report.exit_code, report["decay"].solution.x[0]                # doctest: +SKIP
    (0, exp(-t))
    """
    from ..output import latex_available

    _check_options(jobs, timeout)
    if isinstance(cases, (str, os.PathLike, Case)):
        cases = [cases]
    entries = collect_cases(cases)
    if not entries:
        raise InputError(
            "no cases found; expected case files (*.toml), folders of them, Case objects or (name, arguments) pairs",
            key="cases",
        )
    want_pdf = latex_available() if pdf is None else bool(pdf)
    formats = tuple(dict.fromkeys(formats))
    folder = _out_folder(out_dir)
    store = ResultStore(folder, total=len(entries))
    bar = Progress(len(entries), enabled=sys.stderr.isatty() if progress is None else progress, stream=sys.stderr)
    keys: dict[int, str] = {}

    def done(index: int, result: CaseResult, files: Files, *, save: bool = True) -> None:
        store.add(index, replace(result, source=entries[index].source, key=keys.get(index, "")), files, save=save)
        bar.update(store.results[index])

    work: list[Job] = []
    for i, e in enumerate(entries):
        if e.failure is not None or e.case is None:
            done(i, e.failure or CaseResult(name=e.name, status=Status.ERROR, message="no case"), (), save=False)
            continue
        keys[i] = case_key(e.case, formats=formats, pdf=want_pdf, substitute=substitute) if folder is not None else ""
        reuse = None if force else store.reuse(e.name, keys[i])
        if reuse is not None:
            done(i, reuse, (), save=False)
            continue
        task = CaseTask(
            case=e.case,
            out_root=None if folder is None else str(folder.resolve()),
            formats=formats,
            pdf=want_pdf,
            timeout=float(timeout),
            keep_solution=keep_solutions,
            collect=scheduler is not None and folder is not None,
            settings=settings,
            substitute=substitute,
        )
        # Pickled once, here: a case that cannot be pickled is this case's error, not the pool's.
        try:
            payload = pickle.dumps(task)
        except Exception as exc:
            done(i, CaseResult(name=e.name, status=Status.ERROR, message=f"the case cannot be sent to a worker: {type(exc).__name__}: {exc}"), (), save=False)
            continue
        work.append(Job(index=i, name=e.name, payload=payload))

    # Results known before any worker runs (load failures, reuse) are written once.
    store.save()
    limit = hard_limit(float(timeout), pdf=want_pdf, settings=settings)
    executor: Executor
    if scheduler is not None:
        executor = DaskCluster(scheduler=scheduler, in_flight=jobs, limit=limit)
    else:
        executor = LocalPool(workers=jobs or _cpus(), limit=limit)
    interrupted = False
    index_error = ""
    try:
        executor.run(work, done=done, tick=store.tick)
    except KeyboardInterrupt:
        interrupted = True
        raise
    finally:
        bar.close()
        store.save(interrupted=interrupted)
        if folder is not None:
            finished = tuple(store.finished())
            try:
                # No TeX run after Ctrl-C: the user wants the prompt back.
                write_index(
                    folder,
                    finished,
                    counts=BatchReport(results=finished).counts,
                    pdf=want_pdf and not interrupted,
                    interrupted=interrupted,
                    total=len(entries),
                )
            except DeriveError as err:
                index_error = str(err)
    return BatchReport(results=tuple(store.finished()), out_dir=folder, index_error=index_error)
