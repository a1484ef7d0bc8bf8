"""The compact Result of a case with indexed complex roots: stand-ins, named coefficients, decimals, phases.

The case is our own: a third-order plant x''' + 2 x'' + 3 x' + x = sin 2t, whose
cubic has one real root and a complex pair without a short radical form, so
the answer holds indexed roots in real form sigma_1 +- i omega_1.  Each
display form is compared with the verified x(t) at sample times.
"""

from __future__ import annotations

import json

import pytest
import sympy as sp

import derive
from derive.documents.coefficients import compact, naming_for, readable_phase, steady_sinusoids
from derive.documents.result import result_forms
from derive.documents.sheet_steps import StepContext
from derive.model import Solution
from derive.reading.sinusoid import sinusoidal_reading
from derive.render import render
from derive.render.printing import MathFormatter, collect_roots
from derive.render.root_parts import TERMS_PER_PIECE, polynomial_pieces
from derive.render.terms import Terms

T = sp.Symbol("t")
TIMES = (0, sp.Rational(7, 10), 3, 11)


@pytest.fixture(scope="module")
def plant() -> Solution:
    sol = derive.solve([[0, 1, 0], [0, 0, 1], [-1, -3, -2]], [0, 0, sp.sin(2 * T)], t=T, x0=[1, 0, 0])
    assert any(e.has(sp.CRootOf) for e in sol.eigenvalues)
    return sol


@pytest.fixture(scope="module")
def ctx(plant: Solution) -> StepContext:
    roots = collect_roots(plant.eigenvalues, plant.steps, plant.x)
    return StepContext(solution=plant, fmt=MathFormatter.for_roots(roots), lam=sp.Symbol("lambda"))


def _at(expr: sp.Expr, at: sp.Expr) -> complex:
    e = expr.subs(T, at)
    return complex(sp.N(e.xreplace({r: sp.N(r, 40) for r in e.atoms(sp.CRootOf)}), 30))


def _close(a: complex, b: complex, rel: float) -> bool:
    return abs(a - b) <= rel * max(1.0, abs(a), abs(b))


def test_the_display_works_on_stand_ins_and_names_them_back(plant: Solution, ctx: StepContext) -> None:
    naming = ctx.naming
    assert {sym.name for _, sym in naming.roots} >= {"sigma_1", "omega_1", "lambda_1"}
    for x in plant.x:
        shown = compact(x, T, naming)
        assert isinstance(shown, Terms) and not shown.has(sp.CRootOf)
        back = naming.back(shown.value)
        assert back.has(sp.CRootOf)
        for at in TIMES:
            assert _close(_at(back, at), _at(x, at), 1e-20), at


def test_long_coefficients_are_named_and_their_values_give_back_the_result(plant: Solution, ctx: StepContext) -> None:
    forms = result_forms(plant, ctx)
    named = dict(forms.coefficients)
    assert named and all(sym.name.startswith("a_") for sym in named)
    waves = {s.amplitude_name: s.amplitude for s in forms.sinusoids.values()} | {s.phase_name: s.phase for s in forms.sinusoids.values()}
    for x, shown, dec in zip(plant.x, forms.exact, forms.decimal):
        assert isinstance(shown, Terms)
        # the sinusoid's argument omega t + phi_k is itself a Terms (kept in the order written)
        flat = shown.value.replace(lambda e: isinstance(e, Terms), lambda e: e.value)
        value = ctx.naming.back(flat.xreplace(named).xreplace(waves))
        assert not value.free_symbols - {T}
        for at in TIMES:
            assert _close(_at(value, at), _at(x, at), 1e-20), at
            # the engineer's line of decimals: 4 figures per number
            assert _close(_at(dec.value.replace(lambda e: isinstance(e, Terms), lambda e: e.value), at), _at(x, at), 5e-3), at


def test_amplitudes_are_algebraic_and_phases_match_the_phasor_reading(plant: Solution, ctx: StepContext) -> None:
    sines = steady_sinusoids(plant, naming_for(plant, roots=ctx.fmt.roots))
    reading = sinusoidal_reading(plant, {})
    assert reading is not None and len(sines) == 3
    for k, s in sines.items():
        r = reading[plant.system.states[k].name]
        # amplitude: no pi, no angle function; equal to |X_k| of (2 i I - A)^-1 b
        assert not s.amplitude_shown.has(sp.pi, sp.atan, sp.atan2) and not s.amplitude.has(sp.pi)
        assert sp.simplify(s.amplitude - r.amplitude) == 0
        # phase: the angle held as atan2 (or a multiple of pi), equal to the reading's modulo 2 pi
        assert not s.phase_shown.has(sp.atan) or isinstance(s.phase_shown, sp.atan2)
        turns = (float(s.phase_shown) - float(r.phase)) / (2 * float(sp.pi))
        assert abs(turns - round(turns)) < 1e-12


def test_readable_phase_keeps_atan2_unless_the_angle_is_a_multiple_of_pi() -> None:
    assert readable_phase(sp.Integer(-1), sp.Integer(-1)) == -3 * sp.pi / 4
    held = readable_phase(sp.Integer(1), sp.Integer(-2))
    assert isinstance(held, sp.atan2) and held.args == (1, -2)
    assert abs(float(held) - float(sp.pi - sp.atan(sp.Rational(1, 2)))) < 1e-15


def test_a_long_legend_polynomial_is_set_as_short_formulas_that_join_to_it() -> None:
    z = sp.Symbol("z")
    poly = 1048576 * z**15 - 1310720 * z**14 - 7471104 * z**13 - 28913 * z**2 + 1742 * z - 24
    fmt = MathFormatter.for_roots(())
    pieces = polynomial_pieces(poly, z, fmt)
    formulas = [p for p in pieces if isinstance(p, tuple)]
    assert len(formulas) == -(-6 // TERMS_PER_PIECE) > 1
    joined = " ".join(plain for _, plain in formulas)
    assert joined.replace(" ", "") == (fmt.plain(poly) + " = 0").replace(" ", "")
    assert all(tex.count("z") <= TERMS_PER_PIECE for tex, _ in formulas)
    # a piece after the first starts with its sign, made binary by "{}"; the last closes the equation
    assert formulas[1][0].startswith("{} - ") and formulas[-1][0].endswith("= 0")
    assert all(tex.startswith(("{} + ", "{} - ")) for tex, _ in formulas[1:])


def test_the_sheet_lists_every_named_coefficient_in_the_appendix(plant: Solution) -> None:
    md = render(plant, "markdown")
    main, appendix = md.split("## Appendix A")
    assert "a_{11}" in main and r"\kappa_{1}" in main
    exact = appendix[appendix.index("Exact coefficients"):]
    assert "a_{11} &= " in exact and r"\kappa_{1} &= " in exact
    record = json.loads(render(plant, "json"))
    assert "a_11" in record["result_forms"]["coefficients"]


def test_a_decimal_det_p_has_no_rounding_residue_and_is_said_to_be_approximate() -> None:
    # P of x''' = -x' - 3x (companion, one real root and a complex pair without a short radical
    # form): its columns (1, lam, lam^2) make a Vandermonde determinant, a product of root
    # differences, which for a conjugate pair is purely imaginary (common practice).  The
    # decimal comes from mpmath; numpy's det of the same numeric P is the outside check.
    import numpy as np

    from derive.steps import InverseStep

    sol = derive.solve([[0, 1, 0], [0, 0, 1], [-3, -1, 0]])
    det = next(s for s in sol.steps if isinstance(s, InverseStep)).det
    re, im = det.as_real_imag()
    assert re == 0 and im != 0
    P = np.array(sol.P.evalf(30).tolist(), dtype=complex)
    assert abs(complex(det) - np.linalg.det(P)) < 1e-9 * abs(np.linalg.det(P))
    assert r"\det P \approx" in render(sol, "latex")
