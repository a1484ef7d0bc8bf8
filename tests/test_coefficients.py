"""The compact display of a result: modes, tidy coefficients, names, decimals, amplitude and phase.

Display only: each form is checked against the verified x(t) it stands for,
numerically at sample times (30 digits for the exact forms, 4 figures for the
decimals).  The cases in ``tests/data/sheets`` are scenarios of our own.
"""

from __future__ import annotations

import json
from pathlib import Path

import pytest
import sympy as sp

from derive.casefile import load_case
from derive.documents.coefficients import (
    compact,
    decimal_terms,
    mode_terms,
    naming_for,
    naming_for_roots,
    parameter_values,
    steady_sinusoids,
    tidy,
)
from derive.model import Solution
from derive.pipeline import solve_case
from derive.render import render
from derive.render.printing import MathFormatter, Terms

DATA = Path(__file__).parent / "data" / "sheets"
TIMES = (0, sp.Rational(7, 10), 3, 11, 30)


@pytest.fixture(scope="module")
def rooms() -> Solution:
    return solve_case(load_case(DATA / "rooms.toml"))


@pytest.fixture(scope="module")
def radicals() -> Solution:
    return solve_case(load_case(DATA / "radicals.toml"))


@pytest.fixture(scope="module")
def cascade() -> Solution:
    """Four symbolic tanks in a cascade: coefficients in Q(a, b, c, d, q) with products of differences below."""
    return solve_case(load_case(DATA / "sym4.toml"))


def _value(expr: sp.Expr, t: sp.Symbol, at: sp.Expr, digits: int = 30) -> complex:
    return complex(sp.N(expr.subs(t, at), digits))


def _close(a: complex, b: complex, rel: float) -> bool:
    return abs(a - b) <= rel * max(1.0, abs(a), abs(b))


@pytest.mark.parametrize("case", ["rooms", "radicals", "cascade"])
def test_the_compact_form_is_the_verified_result(case: str, request: pytest.FixtureRequest) -> None:
    sol = request.getfixturevalue(case)
    t = sol.system.t
    naming = naming_for(sol)
    sines = steady_sinusoids(sol, naming)
    # the symbolic case is compared at its parameter values, and at a second point of its own
    points = [parameter_values(sol) or {}]
    if points[0]:
        points.append({p: v + sp.Rational(k + 1, 7) for k, (p, v) in enumerate(points[0].items())})
    for k, x in enumerate(sol.x):
        shown = compact(x, t, naming, sinusoid=sines.get(k))
        assert isinstance(shown, Terms)
        back = naming.back(shown.value).replace(lambda e: isinstance(e, Terms), lambda e: e.value)
        if k in sines:
            back = back.xreplace({sines[k].amplitude_name: sines[k].amplitude, sines[k].phase_name: sines[k].phase})
        for values in points:
            assert not back.xreplace(values).free_symbols - {t}
            for at in TIMES:
                assert _close(_value(back.xreplace(values), t, at), _value(x.xreplace(values), t, at), 1e-25), (k, at, values)


@pytest.mark.parametrize("case", ["rooms", "radicals", "cascade"])
def test_the_decimal_line_equals_the_exact_value(case: str, request: pytest.FixtureRequest) -> None:
    sol = request.getfixturevalue(case)
    t = sol.system.t
    naming = naming_for(sol)
    sines = steady_sinusoids(sol, naming)
    values = parameter_values(sol)
    assert values is not None and (values == {}) == (case != "cascade")
    for k, x in enumerate(sol.x):
        dec = decimal_terms(x, t, values, sinusoid=sines.get(k))
        assert dec is not None
        assert all(n.is_Float or n.is_Integer for n in dec.atoms(sp.Number) if n not in (-1, 1, 2))
        for at in TIMES:
            # four significant figures in each coefficient and rate: agreement to about 1e-3
            assert _close(_value(dec.value, t, at, 15), _value(x.xreplace(values), t, at), 2e-3), (k, at)


def test_amplitude_and_phase_reproduce_the_steady_sinusoid(rooms: Solution) -> None:
    """A_k sin(omega t + phi_k) against the sine and cosine terms of the exact result at sample times."""
    t = rooms.system.t
    naming = naming_for(rooms)
    sines = steady_sinusoids(rooms, naming)
    assert sorted(sines) == [0, 1]
    for k, x in enumerate(rooms.x):
        waves = sum((c * m for c, m in mode_terms(x, t) or () if isinstance(m, (sp.sin, sp.cos))), sp.Integer(0))
        s = sines[k]
        wave = s.amplitude * sp.sin(s.argument + s.phase)
        shown = naming.back(s.amplitude_shown) * sp.sin(s.argument + naming.back(s.phase_shown))
        for at in TIMES:
            assert _close(_value(wave, t, at), _value(waves, t, at), 1e-25), (k, at)
            assert _close(_value(shown, t, at), _value(waves, t, at), 1e-25), (k, at)
    # the amplitude of T2 is 15/sqrt(Gamma): the shared denominator is named
    assert str(sines[1].amplitude_shown) == "15/sqrt(Gamma)"


def test_names_are_given_once_and_listed_under_where(rooms: Solution) -> None:
    naming = naming_for(rooms)
    names = {s.name: v for s, v in naming.rows}
    omega = next(s for s, _ in naming.rows if s.name == "omega")
    assert names["omega"] == sp.pi / 12 and names["Delta"] == sp.sqrt(97)
    assert names["Gamma"] == 576 * omega**4 + 532 * omega**2 + 9
    text = render(rooms, "text")
    result = text[text.index("RESULT"):text.index("VERIFICATION")]
    for line in ("  ω = π/12", "  Δ = sqrt(97)", "  Γ = 576 ω^4 + 532 ω^2 + 9", "  A_2 = 15/sqrt(Γ)"):
        assert line in result, line
    assert "T2(t) = 10 + " in result and "A_2 sin(ω t + φ_2)" in result
    assert "   ≈ 10 - 1.438 exp(-0.952 t) + 5.558 exp(-0.1313 t) + 2.161 sin(0.2618 t - 1.374)" in result
    assert "Γ ≈ 48.17" in result and "φ_1 ≈ -0.5658 rad" in result
    # the derivation defines the names where they first appear, before the Result
    assert text.index("  ω = π/12") < text.index("RESULT")
    tex = render(rooms, "latex")
    assert r"\Gamma &= 576 \omega^{4} + 532 \omega^{2} + 9" in tex and r"&\approx 10 - 1.438 e^{- 0.952 t}" in tex


def test_a_case_symbol_keeps_its_name() -> None:
    """A parameter called omega: the forcing frequency takes the next free name."""
    from derive.casefile import loads_case

    text = '''
[system]
equations = ["x' = -omega*x + sin(pi*t/6)"]
[initial]
values = [0]
[parameters.omega]
assume = ["positive"]
value = 2
'''
    sol = solve_case(loads_case(text, name="clash"))
    names = [s.name for s, _ in naming_for(sol).rows]
    assert "omega" not in names and "nu" in names


def test_tidy_clears_a_named_root_and_i_from_the_denominator() -> None:
    naming = naming_for_roots((2161,))
    c = 1 / (7 + sp.sqrt(2161)) + sp.I / (1 + sp.I)
    out = tidy(c, naming)
    assert str(out) == "(Delta + 1049 + 1056*I)/2112"  # one integer denominator
    assert abs(complex(sp.N(naming.back(out) - c, 40))) < 1e-35


def test_modes_come_in_reading_order_and_print_in_that_order() -> None:
    t = sp.Symbol("t")
    e = sp.cos(2 * t) / 3 + 5 + sp.exp(-t) * sp.sin(3 * t) + sp.exp(-4 * t) / 7 + sp.exp(-t) * sp.cos(3 * t)
    shown = compact(e, t, naming_for_roots(()))
    f = MathFormatter.for_roots(())
    assert f.plain(shown) == "5 + exp(-4 t)/7 + exp(-t) cos(3 t) + exp(-t) sin(3 t) + cos(2 t)/3"
    assert mode_terms(sp.Heaviside(t - 1) * sp.exp(-t), t) is None


def test_json_carries_the_compact_and_decimal_forms(rooms: Solution) -> None:
    record = json.loads(render(rooms, "json"))["result_forms"]
    assert record["x_decimal"][1] == "10 - 1.438 exp(-0.952 t) + 5.558 exp(-0.1313 t) + 2.161 sin(0.2618 t - 1.374)"
    assert "A_1 sin(ω t + φ_1)" in record["x_compact"][0]
    assert record["where"]["ω"] == "pi/12"
