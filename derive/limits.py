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
from typing import Iterator

from .errors import TimeLimitError

__all__ = ["DEFAULT_TIMEOUT", "time_limit"]

#: Seconds allowed for one case unless --timeout says otherwise.
DEFAULT_TIMEOUT = 120.0


@contextlib.contextmanager
def time_limit(seconds: float | None, *, what: str = "the case") -> Iterator[None]:
    """Raise TimeLimitError in the block after ``seconds`` (None or 0: no limit).

    >>> with time_limit(5):
    ...     pass
    """
    if not seconds or seconds <= 0 or threading.current_thread() is not threading.main_thread():
        yield
        return

    def _alarm(signum, frame):  # noqa: ARG001 - signal handler signature
        raise TimeLimitError(
            f"{what} did not finish within the time limit of {seconds:g} s; "
            "raise it with --timeout, or simplify the case (fewer symbolic parameters, "
            "numeric values for them)",
        )

    previous = signal.signal(signal.SIGALRM, _alarm)
    signal.setitimer(signal.ITIMER_REAL, seconds)
    try:
        yield
    finally:
        signal.setitimer(signal.ITIMER_REAL, 0)
        signal.signal(signal.SIGALRM, previous)
