"""Wall-clock limits: one for a case, and shorter ones inside it.

The algebra is pure Python, so a SIGALRM timer interrupts it between
bytecodes and the run stops instead of hanging.  Signals only work in the
main thread; elsewhere (a worker thread) the case limit is enforced by the
caller's process isolation (see ``derive.batch``).

Both limits share one timer discipline (``_alarm_after``): the alarm repeats
every ``REPEAT`` seconds, so an exception swallowed by a broad ``except``
inside sympy is raised again instead of letting the block run on.  Python
itself swallows an exception raised inside a ``__del__`` or a garbage
collector callback; the handler records that it fired, so a block that then
ends before the next repeat, normally or with another exception, still ends
with the limit's exception at its exit.  Of two
nested limits the earlier deadline wins, and the outer timer is re-armed with
its remaining time when the inner block ends.
"""

from __future__ import annotations

import contextlib
import signal
import threading
import time
from typing import Callable, Iterator

from .errors import TimeLimitError

__all__ = ["DEFAULT_TIMEOUT", "REPEAT", "LimitExpired", "time_limit", "inner_limit"]

#: Seconds allowed for one case unless --timeout says otherwise.
DEFAULT_TIMEOUT = 120.0
#: Seconds between repeats of an expired alarm.
REPEAT = 0.05


class LimitExpired(BaseException):
    """An inner limit ran out (BaseException: sympy catches Exception in places)."""


def _on_main_thread() -> bool:
    return threading.current_thread() is threading.main_thread()


@contextlib.contextmanager
def _alarm_after(seconds: float, expired: Callable[[], BaseException]) -> Iterator[bool]:
    """Raise ``expired()`` in the block after ``seconds``; yield False when an outer limit fires first."""
    outer_left, _ = signal.getitimer(signal.ITIMER_REAL)
    if outer_left and outer_left <= seconds:
        yield False
        return
    done = False
    raised: list[type[BaseException]] = []

    def _alarm(signum, frame):  # noqa: ARG001 - signal handler signature
        if done:  # the block is already leaving
            return
        error = expired()
        raised.append(type(error))
        raise error

    started = time.monotonic()
    previous = signal.signal(signal.SIGALRM, _alarm)
    try:
        # armed inside the try: an alarm that fires at once still disarms in finally
        signal.setitimer(signal.ITIMER_REAL, seconds, REPEAT)
        try:
            yield True
        except Exception as error:
            # time ran out and a handler turned our exception into another one
            if raised and not isinstance(error, tuple(raised)):
                raise expired() from error
            raise
        if raised:
            # the raise was swallowed (a __del__, a gc callback) and the block then
            # finished before the repeat: time is still up
            raise expired()
    finally:
        done = True
        signal.setitimer(signal.ITIMER_REAL, 0)
        signal.signal(signal.SIGALRM, previous)
        if outer_left:
            remaining = outer_left - (time.monotonic() - started)
            signal.setitimer(signal.ITIMER_REAL, max(remaining, 1e-3), REPEAT)


@contextlib.contextmanager
def time_limit(seconds: float | None, *, what: str = "the case") -> Iterator[None]:
    """Raise TimeLimitError in the block after ``seconds`` (None or 0: no limit).

    >>> with time_limit(5):
    ...     pass
    """
    if not seconds or seconds <= 0 or not _on_main_thread():
        yield
        return

    def expired() -> TimeLimitError:
        return TimeLimitError(
            f"{what} did not finish within the time limit of {seconds:g} s; "
            "raise it with --timeout, or simplify the case (fewer symbolic parameters, "
            "numeric values for them)",
        )

    with _alarm_after(seconds, expired):
        yield


@contextlib.contextmanager
def inner_limit(seconds: float) -> Iterator[bool]:
    """A shorter limit inside a case: raise ``LimitExpired`` in the block after ``seconds``.

    Yields True when the block runs under a limit (its own, or an outer one
    that fires first and is left in charge), False off the main thread, where
    no signal can be used: the caller then skips work that could hang.

    >>> with inner_limit(5) as armed:
    ...     armed
    True
    """
    if not _on_main_thread():
        yield False
        return
    with _alarm_after(seconds, LimitExpired):
        yield True
