"""A switched result read interval by interval: modes from each interval's start, named coefficients, decimals.

Our own cases: a third-order plant x''' + 2 x'' + 3 x' + 5 x = H(t - 1) in
companion form (tests/data/sheets/cubic_step.toml), whose cubic has one real
root and a complex pair without a short radical form, so each interval's
answer holds indexed roots sigma_1 +- i omega_1, lambda_1 and, after the
switch, e^{sigma_1}, cos(omega_1) of the state handed over; and the
two-compartment pulse-and-impulse model (tests/data/sheets/compartments.toml).
Every display form is compared with the verified x(t) at sample times on each
interval.
"""

from __future__ import annotations

import shutil
import subprocess
from pathlib import Path

import pytest
import sympy as sp

import derive
from derive.documents.coefficients import decimal_terms, parameter_values, tidy, Naming
from derive.documents.interval_blocks import handed
from derive.documents.result import interval_conditions, result_forms
from derive.documents.sheet import sheet_lambda
from derive.documents.sheet_steps import StepContext
from derive.model import Solution
from derive.output import write_outputs
from derive.render import render
from derive.render.console import summary_lines
from derive.render.printing import MathFormatter, collect_roots
from derive.render.terms import Terms
from derive.steps import IntervalStep

DATA = Path(__file__).parent / "data" / "sheets"
#: operations allowed in one coefficient shown on a Result line (the unnamed ones ran to ~300)
MOST_OPS = 40


@pytest.fixture(scope="module")
def cubic() -> Solution:
    sol = derive.solve_case(derive.load_case(DATA / "cubic_step.toml"))
    assert all(isinstance(x, sp.Piecewise) for x in sol.x) and any(e.has(sp.CRootOf) for e in sol.eigenvalues)
    return sol


@pytest.fixture(scope="module")
def compartments() -> Solution:
    return derive.solve_case(derive.load_case(DATA / "compartments.toml"))


def _ctx(sol: Solution) -> StepContext:
    roots = collect_roots(sol.eigenvalues, sol.steps, sol.x)
    return StepContext(solution=sol, fmt=MathFormatter.for_roots(roots), lam=sheet_lambda(sol))


def _flat(e: sp.Expr) -> sp.Expr:
    return e.replace(lambda a: isinstance(a, Terms), lambda a: a.value)


def _at(expr: sp.Expr, at: sp.Expr) -> complex:
    # the case's t may carry assumptions: the one symbol named t in the expression
    e = expr.subs({s: at for s in expr.free_symbols if s.name == "t"})
    return complex(sp.N(e.xreplace({r: sp.N(r, 40) for r in e.atoms(sp.CRootOf)}), 30))


def _close(a: complex, b: complex, rel: float) -> bool:
    return abs(a - b) <= rel * max(1.0, abs(a), abs(b))


#: sample times inside each interval of the cubic step (switch at t = 1)
CUBIC_TIMES = ((sp.Rational(1, 2), sp.Rational(9, 10)), (sp.Rational(11, 10), 2, 7))


def test_each_interval_is_collected_by_mode_with_short_or_named_coefficients(cubic: Solution) -> None:
    ctx = _ctx(cubic)
    forms = result_forms(cubic, ctx)
    named = dict(forms.coefficients)
    assert named and all(sym.name.startswith("a_") for sym in named)
    t = cubic.system.t
    for x, shown in zip(cubic.x, forms.exact):
        assert isinstance(shown, sp.Piecewise) and len(shown.args) == len(x.args) == 2
        for (value, cond), (_, cond_x), times in zip(shown.args, x.args, CUBIC_TIMES):
            assert cond == cond_x and isinstance(value, Terms)
            for term in value.args:
                coefficient = sp.Mul(*(f for f in sp.Mul.make_args(term) if not f.has(t)))
                assert sp.count_ops(coefficient) <= MOST_OPS, term
            # the names given back (a_kj, then the roots) are the verified x(t) on this interval
            back = ctx.naming.back(_flat(value).xreplace(named))
            assert not back.free_symbols - {t}
            for at in times:
                assert _close(_at(back, at), _at(x, at), 1e-20), at
    # after the switch the modes run from the interval's start: e^{sigma_1 (t - 1)} cos(omega_1 (t - 1))
    after = ctx.fmt.m(forms.exact[0].args[1][0])
    assert r"\left(t - 1\right)}" in after and r"\cos{\left(\omega_{1} \left(t - 1\right) \right)}" in after


def test_a_line_of_decimals_per_interval_matches_the_exact_result(cubic: Solution) -> None:
    ctx = _ctx(cubic)
    forms = result_forms(cubic, ctx)
    for x, dec in zip(cubic.x, forms.decimal):
        assert isinstance(dec, sp.Piecewise) and len(dec.args) == 2
        for (value, _), times in zip(dec.args, CUBIC_TIMES):
            assert not value.has(sp.CRootOf) and value.atoms(sp.Float)
            for at in times:
                # 4 significant figures per number
                assert _close(_at(_flat(value), at), _at(x, at), 5e-3), at


def test_the_console_prints_the_results_decimal_lines(cubic: Solution) -> None:
    ctx = _ctx(cubic)
    forms = result_forms(cubic, ctx)
    lines = summary_lines(cubic)
    for k, dec in enumerate(forms.decimal):
        assert f"  x{k + 1}(t) ≈ {ctx.fmt.plain(dec)}" in lines


def test_the_latex_result_gives_each_interval_its_condition_and_decimals(cubic: Solution) -> None:
    tex = render(cubic, "latex")
    result = tex[tex.index(r"\derivesection{Result}"):]
    result = result[:result.index(r"\derivesection", 10)]
    assert result.count(r"\text{for } t < 1:") == 3 and result.count(r"\text{for } t \geq 1:") == 3
    # one decimal line per interval and state, the exact coefficients named a_kj
    assert result.count(r"&\approx") == 6 and "a_{1" in result
    assert r"\begin{cases}" not in result


def test_states_handed_across_the_switch_are_named_with_decimals(cubic: Solution) -> None:
    ctx = _ctx(cubic)
    step = next(s for s in cubic.steps if isinstance(s, IntervalStep) and s.index == 1)
    shown = handed(ctx, step.x_end)
    assert all(isinstance(e, sp.Symbol) and e.name.startswith("kappa_") for e in shown)
    names = {sym: value for value, sym in ctx.cache["named_coefficients"].items()}
    for e, exact in zip(shown, step.x_end):
        assert _close(_at(ctx.naming.back(names[e]), 0), _at(exact, 0), 1e-20)
    text = render(cubic, "text")
    assert "In decimals, x(1) ~ (0.54193, -1.0447, -0.87733)." in text


def test_compartments_read_as_before_in_meaning(compartments: Solution) -> None:
    ctx = _ctx(compartments)
    forms = result_forms(compartments, ctx)
    times = ((sp.Rational(1, 2),), (sp.Rational(3, 2), sp.Rational(5, 2)), (sp.Rational(7, 2),), (6, 20))
    for x, shown, dec in zip(compartments.x, forms.exact, forms.decimal):
        assert [c for _, c in shown.args] == [c for _, c in x.args]
        for (value, _), (number, _), at_times in zip(shown.args, dec.args, times):
            for at in at_times:
                assert _close(_at(_flat(value), at), _at(x, at), 1e-25), at
                assert _close(_at(_flat(number), at), _at(x, at), 5e-3), at
    fmt = ctx.fmt
    assert [p for _, p in interval_conditions(forms.exact[0], fmt)] == ["t < 1", "1 ≤ t < 3", "3 ≤ t < 5", "t ≥ 5"]


def test_a_coefficient_in_exponentials_of_numbers_keeps_its_rational_content_apart() -> None:
    # factoring over Q would give (e^{1/5} - 1)(e^{1/5} + 1)(e^{2/5} + 1) e^{-4/5}
    c = sp.Rational(10, 3) - 10 * sp.exp(sp.Rational(-4, 5)) / 3
    shown = tidy(c, Naming())
    assert shown.args == (sp.Rational(10, 3), 1 - sp.exp(sp.Rational(-4, 5)))
    assert tidy(-c, Naming()).args == (sp.Rational(-10, 3), 1 - sp.exp(sp.Rational(-4, 5)))


def test_decimal_terms_of_a_piecewise_value_keeps_its_conditions() -> None:
    t = sp.Symbol("t")
    pw = sp.Piecewise((sp.exp(-t) / 3, t < 2), (sp.exp(-(t - 2)) / 7 + 1, True))
    dec = decimal_terms(pw, t, parameter_values(derive.solve([[-1]], t=t)) or {})
    assert isinstance(dec, sp.Piecewise) and [c for _, c in dec.args] == [t < 2, sp.true]
    assert abs(float(_flat(dec.args[1][0]).subs(t, 3)) - float(sp.exp(-1) / 7 + 1)) < 1e-4


@pytest.mark.tex
@pytest.mark.skipif(shutil.which("latexmk") is None or shutil.which("pdftotext") is None, reason="latexmk or pdftotext missing")
def test_the_cubic_step_main_sheet_is_short(tmp_path: Path, cubic: Solution) -> None:
    write_outputs(cubic, tmp_path, stem="cubic_step", formats=("latex",), pdf=True)
    text = subprocess.run(["pdftotext", "-layout", "cubic_step.pdf", "-"], cwd=tmp_path, capture_output=True, text=True,
                          check=True, timeout=60).stdout
    pages = text.split("\f")
    start = next(k for k, page in enumerate(pages, start=1) if "Appendix A: intermediate algebra" in page)
    # 14 pages before the appendix when each interval's result was written out in full (24 in all); 9 now
    assert start - 1 <= 11, start
