"""Many cases, each isolated: a worker pool, a summary, an index, a cache.

Each case is solved, verified and written in a worker process under its own
time limit.  A case that fails, runs out of time or kills its worker (a
segfault in a C extension, ``os._exit``, the out-of-memory killer) is
recorded with its reason and never stops the others.

The parts, in the order a batch uses them:

- :mod:`.collect` turns paths, folders, sweeps, ``Case`` objects and
  ``(name, arguments)`` pairs into entries;
- :mod:`.store` keeps the results, the cache and ``summary.csv``/``.json``;
- :mod:`.task` runs one case (solve, verify, write) and sets its status;
- :mod:`.executors` runs the tasks: a local ``pebble`` pool, or Dask;
- :mod:`.progress` draws the progress line; :mod:`.api` is :func:`batch`.
"""

from __future__ import annotations

from .api import batch
from .collect import collect_cases
from .records import STATUSES, BatchReport, CaseResult, Status, spectrum_kind
from .store import CACHE_NAME, case_key
from .task import run_task

__all__ = [
    "STATUSES",
    "Status",
    "CaseResult",
    "BatchReport",
    "batch",
    "collect_cases",
    "case_key",
    "spectrum_kind",
    "run_task",
    "CACHE_NAME",
]
