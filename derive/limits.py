"""A wall-clock limit for one case.

The algebra is pure Python, so a SIGALRM timer interrupts it between
bytecodes and the run stops with ``TimeLimitError`` instead of hanging.
Signals only work in the main thread; elsewhere (a worker thread) the limit
is enforced by the caller's process isolation (see ``derive.batch``).
"""

from __future__ import annotations

import contextlib
import signal
import threading
import time
from typing import Iterator

from .errors import TimeLimitError

__all__ = ["DEFAULT_TIMEOUT", "time_limit"]

#: Seconds allowed for one case unless --timeout says otherwise.
DEFAULT_TIMEOUT = 120.0
#: Seconds between repeats of an expired alarm.
REPEAT = 0.05


@contextlib.contextmanager
def time_limit(seconds: float | None, *, what: str = "the case") -> Iterator[None]:
    """Raise TimeLimitError in the block after ``seconds`` (None or 0: no limit).

    >>> with time_limit(5):
    ...     pass
    """
    if not seconds or seconds <= 0 or threading.current_thread() is not threading.main_thread():
        yield
        return

    done = False

    def _alarm(signum, frame):  # noqa: ARG001 - signal handler signature
        if done:  # the block is already leaving
            return
        raise TimeLimitError(
            f"{what} did not finish within the time limit of {seconds:g} s; "
            "raise it with --timeout, or simplify the case (fewer symbolic parameters, "
            "numeric values for them)",
        )

    # nested limits: the earlier deadline wins, and the outer timer is re-armed after
    outer_left, _ = signal.getitimer(signal.ITIMER_REAL)
    if outer_left and outer_left < seconds:
        yield
        return
    started = time.monotonic()
    previous = signal.signal(signal.SIGALRM, _alarm)
    # the alarm repeats every REPEAT s: a TimeLimitError swallowed by a broad
    # except (in sympy, say) is raised again instead of letting the case run on
    signal.setitimer(signal.ITIMER_REAL, seconds, REPEAT)
    try:
        yield
    finally:
        done = True
        signal.setitimer(signal.ITIMER_REAL, 0)
        signal.signal(signal.SIGALRM, previous)
        if outer_left:
            remaining = outer_left - (time.monotonic() - started)
            signal.setitimer(signal.ITIMER_REAL, max(remaining, 1e-3), REPEAT)
