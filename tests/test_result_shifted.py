"""The Result at t0 != 0 reads in (t - t0): sines and cosines are held whole, as exponentials are."""

from __future__ import annotations

import re

import sympy as sp

import derive
from derive.documents.coefficients import decimal_terms, mode_terms
from derive.render import render

t = sp.Symbol("t")


def _result_section(tex: str) -> str:
    start = re.search(r"section\*?\{Result\}", tex)
    assert start is not None
    end = tex.find(r"\derivesection", start.end())
    return tex[start.end(): end if end > 0 else len(tex)]


def _oscillator_from_one(*, forced: bool) -> derive.Solution:
    # a scenario of our own: x'' + x' + x = f started at x(1) = 1, x'(1) = 0; the free mode is
    # e^{-(t - 1)/2} times sines and cosines of sqrt(3) (t - 1)/2
    f = [0, sp.sin(t) / 2] if forced else [0, 0]
    return derive.solve([[0, 1], [-1, -1]], f, t=t, x0=[1, 0], t0=1)


def test_mode_terms_keep_a_shifted_sine_whole() -> None:
    w = sp.sqrt(3) / 2
    e = sp.exp(sp.Rational(1, 2) - t / 2) * (3 * sp.sin(w * (t - 1)) + sp.cos(w * (t - 1)))
    modes = [m for _, m in mode_terms(e, t) or []]
    trig = [f for m in modes for f in sp.Mul.make_args(m) if isinstance(f, (sp.sin, sp.cos))]
    assert len(trig) == 2
    # the argument is still the product w (t - 1), not the sum w t - w a plain expand makes
    assert all(not f.args[0].is_Add and (t - 1) in sp.Mul.make_args(f.args[0]) for f in trig), trig


def test_decimals_of_a_shifted_mode_keep_the_shift() -> None:
    w = sp.sqrt(3) / 2
    e = sp.exp(sp.Rational(1, 2) - t / 2) * sp.sin(w * (t - 1))
    dec = decimal_terms(e, t, {})
    assert dec is not None
    exps = [f for f in sp.Mul.make_args(dec) if isinstance(f, sp.exp)]
    sines = [f for f in sp.Mul.make_args(dec) if isinstance(f, sp.sin)]
    # e^{-0.5 (t - 1)}, not 1.649 e^{-0.5 t}: no number pulled out of the exponential
    assert len(exps) == 1 and (t - 1) in sp.Mul.make_args(exps[0].args[0]), dec
    assert len(sines) == 1 and (t - 1) in sp.Mul.make_args(sines[0].args[0]), dec
    assert all(not (f.is_Float and abs(float(f) - 1.6487) < 1e-3) for f in sp.Mul.make_args(dec)), dec
    # the same number at a point: the display changes the form, not the value
    value = float(dec.subs(t, sp.Rational(7, 3)).evalf())
    assert abs(value - float(e.subs(t, sp.Rational(7, 3)))) < 1e-3


def _trig_arguments(result: str) -> list[str]:
    return re.findall(r"\\(?:sin|cos)\{\\left\((.*?) \\right\)\}", result)


def test_result_at_t0_one_reads_in_t_minus_one() -> None:
    sol = _oscillator_from_one(forced=False)
    assert sol.verification.ok
    result = _result_section(render(sol, format="latex"))
    trig = _trig_arguments(result)
    assert trig, result
    # every sine and cosine, on the exact and the decimal line, in (t - 1)
    assert all(r"\left(t - 1\right)" in a for a in trig), trig
    assert any(r"\sqrt{3}" in a for a in trig) and any("0.866" in a for a in trig), trig
    # never the re-expanded argument sqrt(3) t/2 - sqrt(3)/2, nor its opened form sin(w t) cos(w)
    assert r"\frac{\sqrt{3} t}{2} - \frac{\sqrt{3}}{2}" not in result
    assert r"\cos{\left(\frac{\sqrt{3}}{2} \right)}" not in result and r"\sin{\left(\frac{\sqrt{3}}{2} \right)}" not in result
    # the decimal line keeps e^{-0.5 (t - 1)} too, with no e^{0.5} = 1.649 pulled out
    assert "1.649" not in result


def test_forced_result_at_t0_one_keeps_the_input_in_t() -> None:
    sol = _oscillator_from_one(forced=True)
    assert sol.verification.ok
    result = _result_section(render(sol, format="latex"))
    trig = _trig_arguments(result)
    # a coefficient -sqrt(3) (2 cos 1 - sin 1 + 4)/6 carries its sign in front, not as 1/6 (-1) sqrt(3) (...)
    assert r"\left(-1\right)" not in result
    # the free mode in (t - 1); the input's own mode in t, as the input writes it (sin t, cos t) or as
    # amplitude and phase (sin(t + phi_k)): never shifted, never re-expanded
    assert any(r"\sqrt{3} \left(t - 1\right)" in a for a in trig), trig
    own = [a for a in trig if a == "t" or re.fullmatch(r"t [+-] \\phi_\{\d\}", a)]
    assert own and not [a for a in trig if "t " in a and "t - 1" not in a and a not in own], trig
