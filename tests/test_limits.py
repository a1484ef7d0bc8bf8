"""The one timer (derive.limits): an alarm never outlives its block."""

from __future__ import annotations

import gc
import signal
import sys

import pytest

from derive.errors import TimeLimitError
from derive.limits import LimitExpired, inner_limit, time_limit


def _spin() -> None:
    total = 0
    for k in range(200_000):
        total += k


@pytest.mark.parametrize("seconds", [1e-9, 1e-6, 1e-4])
def test_an_alarm_that_fires_at_once_is_disarmed_on_leaving(seconds):
    # an alarm due before the block starts must not stay armed (it would fire later, elsewhere)
    for _ in range(50):
        with pytest.raises(LimitExpired):
            with inner_limit(seconds):
                _spin()
        assert signal.getitimer(signal.ITIMER_REAL) == (0.0, 0.0)
        assert signal.getsignal(signal.SIGALRM) in (signal.SIG_DFL, signal.default_int_handler, None)


def test_outer_limit_is_rearmed_after_an_inner_one():
    with time_limit(30):
        with inner_limit(5):
            pass
        left, repeat = signal.getitimer(signal.ITIMER_REAL)
        assert 25 < left <= 30 and repeat > 0
    assert signal.getitimer(signal.ITIMER_REAL) == (0.0, 0.0)


def test_case_limit_raises_time_limit_error_naming_the_option():
    with pytest.raises(TimeLimitError, match="--timeout"):
        with time_limit(1e-6):
            _spin()


class _SpinsOnCollection:
    """An object whose finaliser runs until the alarm interrupts it; Python swallows that raise."""

    def __del__(self) -> None:
        while True:
            _spin()


_collections: list[str] = []


def _spin_in_gc_callback(phase: str, info: dict) -> None:  # noqa: ARG001 - gc callback signature
    # only the first collection spins: another one may start before the test removes the hook
    if phase == "start" and not _collections:
        _collections.append(phase)
        while True:
            _spin()


@pytest.fixture
def swallowed(monkeypatch):
    """The exceptions Python reports as unraisable (raised in a finaliser or a gc callback) during the test."""
    seen: list[BaseException | None] = []
    monkeypatch.setattr(sys, "unraisablehook", lambda report: seen.append(report.exc_value))
    return seen


def test_a_limit_swallowed_in_a_finaliser_still_ends_the_block(swallowed):
    ran_on = []
    with pytest.raises(LimitExpired):
        with inner_limit(1e-3):
            obj = _SpinsOnCollection()
            del obj  # the alarm fires inside __del__, where the raise is lost
            ran_on.append(True)  # the block runs on: only its exit can still stop it
    assert ran_on == [True]
    assert swallowed and all(isinstance(e, LimitExpired) for e in swallowed)
    assert signal.getitimer(signal.ITIMER_REAL) == (0.0, 0.0)


def test_a_case_limit_swallowed_in_a_gc_callback_still_raises_time_limit_error(swallowed):
    _collections.clear()
    gc.callbacks.append(_spin_in_gc_callback)
    try:
        with pytest.raises(TimeLimitError, match="--timeout"):
            with time_limit(1e-3):
                gc.collect()
                gc.callbacks.remove(_spin_in_gc_callback)
    finally:
        if _spin_in_gc_callback in gc.callbacks:
            gc.callbacks.remove(_spin_in_gc_callback)
    # the alarm was lost inside the callback (once, or again on a repeat before the collection ended)
    assert swallowed and all(isinstance(e, TimeLimitError) for e in swallowed)
    assert signal.getitimer(signal.ITIMER_REAL) == (0.0, 0.0)


def test_a_limit_turned_into_another_error_ends_the_block_as_the_limit():
    # a broad handler that converts the interruption must not hide that time ran out
    with pytest.raises(LimitExpired) as info:
        with inner_limit(1e-3):
            try:
                while True:
                    _spin()
            except BaseException as exc:
                raise ValueError("converted") from exc
    assert isinstance(info.value.__cause__, ValueError)


def test_a_block_that_ends_in_time_is_left_alone():
    with inner_limit(30) as armed:
        value = sum(range(10))
    assert armed and value == 45
