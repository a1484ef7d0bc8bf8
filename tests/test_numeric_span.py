"""The numeric check's time span comes from the slowest time constant (one rule, shared with the reading)."""

from __future__ import annotations

import math

import pytest
import sympy as sp

import derive
from derive.casefile import loads_case
from derive.verify.numeric import time_span
from derive.verify.span import settling_span

t = sp.Symbol("t")

LAG = """
[system]
t = "t"
# a room warming behind a heater: time constant 5 h
equations = ["T' = (Q - T)/5"]

[initial]
t0 = 1
values = [2]

[parameters.Q]
assume = ["positive"]
value = 6
"""


def test_first_order_lag_is_checked_over_five_time_constants():
    sol = derive.solve_case(loads_case(LAG, name="lag"))
    num = sol.verification.numeric
    assert num is not None and num.ok
    assert num.t_start == pytest.approx(1.0)
    assert num.t_end - num.t_start >= 25.0 - 1e-12


def test_slow_mode_sets_the_span_beside_a_fast_one():
    # tau = 5 beside tau = 0.01: the span follows the slow mode, not the fast one
    sol = derive.solve([[sp.Rational(-1, 5), 0], [1, -100]], [1, 0], x0=[0, 1])
    num = sol.verification.numeric
    assert num is not None and num.ok
    assert num.t_end - num.t_start == pytest.approx(25.0)


def test_undamped_mode_gets_three_periods():
    sol = derive.solve([[0, 1], [-4, 0]], x0=[1, 0])
    num = sol.verification.numeric
    assert num is not None and num.ok
    assert num.t_end - num.t_start == pytest.approx(3 * 2 * math.pi / 2)


def test_growing_mode_beside_a_slow_one_stays_honest():
    # x0 on the decaying mode only: round-off excites e^t over 25 s; the high-precision repeat decides
    sol = derive.solve([[1, 1], [0, sp.Rational(-1, 5)]], x0=[5, -6])
    num = sol.verification.numeric
    assert num is not None and num.ok
    assert num.t_end == pytest.approx(25.0)
    assert num.max_rel_gap < 1e-12


def test_fast_growth_caps_the_span():
    assert time_span([sp.Integer(3), sp.Rational(-1, 5)], {}) == pytest.approx(10.0)
    assert settling_span([3, -0.2]) == pytest.approx(25.0)


def test_stiff_convolution_is_integrated_implicitly_over_the_long_span():
    sol = derive.solve([[sp.Rational(-1, 5), 0], [1, -100]], [sp.sqrt(1 + t**2), 0], x0=[0, 1])
    num = sol.verification.numeric
    assert num is not None and num.ok
    assert num.t_end == pytest.approx(25.0)
    assert "Radau" in num.method


def test_reading_uses_the_same_rule():
    sol = derive.solve([[sp.Rational(-1, 5), 0], [1, -100]], x0=[0, 1])
    assert sol.response.span == pytest.approx(sol.verification.numeric.t_end - sol.verification.numeric.t_start)
