"""The one timer (derive.limits): an alarm never outlives its block."""

from __future__ import annotations

import signal

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
