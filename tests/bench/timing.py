"""The one timing rule of the benchmark scripts: the best wall-clock time of a few runs."""

from __future__ import annotations

import time
from typing import Any, Callable


def best_time(fn: Callable[[], Any], repeat: int = 3) -> tuple[float, Any]:
    """(the shortest of ``repeat`` runs of ``fn`` in seconds, the last run's result).

    >>> seconds, out = best_time(lambda: 2 + 2, repeat=2)
    >>> out, seconds >= 0
    (4, True)
    """
    best, out = float("inf"), None
    for _ in range(repeat):
        start = time.perf_counter()
        out = fn()
        best = min(best, time.perf_counter() - start)
    return best, out
