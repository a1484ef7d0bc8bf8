"""Spectra beyond real rational data: symbolic chains with zero rows, complex
(Gaussian-rational) entries, characteristic polynomials in lambda^2 alone.

Each answer is checked by substitution (the pipeline's verification) and, at
parameter values, against an outside reference named beside the check.
"""

from __future__ import annotations

import sympy as sp

import derive
from derive.exact import root_value
from derive.spectral import decompose
from reference import assert_close, expm_values, solution_values

t = sp.Symbol("t")
b, c = sp.symbols("b c", positive=True)


def _zero_row_chain() -> sp.Matrix:
    """Five storage nodes; the two ends are held (zero rows), conductances like 1/(b c)."""
    return sp.Matrix(
        [
            [0, 0, 0, 0, 0],
            [1 / (b * c), -1 / (b * c) - 1 / c, 1 / c, 0, 0],
            [0, 1 / b, -2 / b, 1 / b, 0],
            [0, 0, 1 / c, -1 / c - 1 / (b * c), 1 / (b * c)],
            [0, 0, 0, 0, 0],
        ]
    )


def test_symbolic_chain_with_zero_rows_solves_and_verifies():
    A = _zero_row_chain()
    sol = derive.solve(A, x0=[1, 0, 0, 0, 2])
    assert sol.verification.ok
    assert sol.verification.residual_zero
    assert sp.Integer(0) in sol.eigenvalues
    # det P is exact in the parameters (no decimal exists for it)
    inverse = next(s for s in sol.steps if s.kind == "inverse")
    assert inverse.det.free_symbols <= {b, c}
    assert not inverse.det.has(sp.Float)
    assert sp.simplify(sp.Matrix(inverse.P).det() - inverse.det) == 0


def test_symbolic_chain_with_zero_rows_matches_expm_at_values():
    A = _zero_row_chain()
    x0 = [1, 0, 0, 0, 2]
    sol = derive.solve(A, x0=x0, params={b: 2, c: 3})
    assert sol.verification.ok
    assert sol.verification.numeric is not None and sol.verification.numeric.ok
    values = {b: 2, c: 3}
    times = [0.0, 0.7, 3.0, 11.0]
    ours = solution_values(sp.Matrix(sol.x).xreplace(values), times)
    # reference: scipy.linalg.expm (reference library)
    assert_close(ours, expm_values(A.xreplace(values), x0, times))


def test_symbolic_chain_with_zero_rows_and_a_forcing():
    A = _zero_row_chain()
    sol = derive.solve(A, [0, 1, 0, 0, 0], x0=[1, 0, 0, 0, 2], params={b: 2, c: 3})
    assert sol.verification.ok
    assert sol.verification.residual_zero


# ---------------------------------------------------------------------------
# complex-valued data: Gaussian-rational entries


I = sp.I


def _complex_cases():
    return [
        sp.Matrix([[I, 1], [0, 2 + 3 * I]]),  # distinct roots in Q(i)
        sp.Matrix([[I, 1], [0, I]]),  # a defective root in Q(i)
        sp.Matrix([[1 + I, 2], [1, -1]]),  # roots sqrt of a Gaussian number
        sp.Matrix([[2 + 3 * I, 1, 0], [0, -1, I], [1, 0, -2]]),  # an irreducible cubic over Q(i)
    ]


def test_complex_data_solves_verifies_and_says_why_it_is_complex():
    from derive.eigenvalues import COMPLEX_DATA_NOTICE

    for A in _complex_cases():
        x0 = [1] + [0] * (A.rows - 1)
        sol = derive.solve(A, x0=x0)
        assert sol.verification.ok, A
        assert sol.verification.residual_zero, A
        assert sol.verification.numeric is not None and sol.verification.numeric.ok, A
        assert COMPLEX_DATA_NOTICE in sol.notices
        times = [0.0, 0.4, 1.3, 2.0]
        # reference: scipy.linalg.expm (reference library), in complex arithmetic
        x = sp.Matrix(sol.x).xreplace({r: root_value(r) for r in sol.x.atoms(sp.CRootOf)})  # cached decimals
        assert_close(solution_values(x, times), expm_values(A, x0, times))


def test_real_data_carries_no_complex_notice():
    from derive.eigenvalues import COMPLEX_DATA_NOTICE

    sol = derive.solve([[0, 1], [-2, -2]], x0=[1, 0])
    assert COMPLEX_DATA_NOTICE not in sol.notices


def test_complex_forcing_and_initial_values_are_checked_in_complex_arithmetic():
    A = sp.Matrix([[I, 1], [-2, -1 + 3 * I]])
    sol = derive.solve(A, [0, sp.exp(2 * I * t)], x0=[1, I])
    assert sol.verification.ok
    num = sol.verification.numeric
    assert num is not None and num.ok and num.max_rel_gap < 1e-9
    # the solution is genuinely complex: its imaginary part at t = 1 is far from zero
    assert abs(complex(sp.N(sol.x[0].subs(t, 1))).imag) > 1e-3


def test_complex_convolution_is_integrated_in_complex_arithmetic():
    sol = derive.solve([[-1, I], [I, -1]], [sp.sqrt(1 + t**2), 0], x0=[0, 1])
    assert sol.verification.ok
    assert sol.verification.numeric is not None and sol.verification.numeric.ok


# ---------------------------------------------------------------------------
# characteristic polynomials in lambda^2 alone: undamped chains through mu = lambda^2

m, k = sp.symbols("m k", positive=True)
m1, m2, k1, k2, k3 = sp.symbols("m1 m2 k1 k2 k3", positive=True)


def _two_masses(m1, m2, k1, k2, k3):
    """m1 x1'' = -k1 x1 + k2 (x2 - x1), m2 x2'' = -k2 (x2 - x1) - k3 x2; states x1, x2, x1', x2'."""
    return sp.Matrix(
        [
            [0, 0, 1, 0],
            [0, 0, 0, 1],
            [-(k1 + k2) / m1, k2 / m1, 0, 0],
            [k2 / m2, -(k2 + k3) / m2, 0, 0],
        ]
    )


def _squared_frequencies(sol, values):
    return {sp.simplify(sp.factor(-(lam**2)).xreplace(values)) for lam in sol.eigenvalues}


def test_symbolic_undamped_two_mass_chain_solves_through_lambda_squared():
    sol = derive.solve(_two_masses(m1, m2, k1, k2, 0), x0=[1, 0, 0, 0])
    assert sol.verification.ok
    assert sol.verification.residual_zero
    # real form: cosines of omega t, no complex exponential
    assert not any(e.has(sp.I) for e in sol.x)
    assert all(e.has(sp.cos) for e in sol.x[:2])
    rule = next(s for s in sol.steps if s.kind == "eigenvalues").entries[0].rule
    assert "mu = lambda^2" in rule
    # fixed-free chain of equal masses and springs: omega^2 = (3 -+ sqrt 5)/2 k/m (common practice)
    expected = {(3 - sp.sqrt(5)) / 2 * k / m, (3 + sp.sqrt(5)) / 2 * k / m}
    found = _squared_frequencies(sol, {m1: m, m2: m, k1: k, k2: k})
    assert len(found) == 2
    assert all(any(sp.simplify(f - e) == 0 for e in expected) for f in found)


def test_two_equal_masses_between_three_equal_springs():
    # omega^2 = k/m (in phase) and 3k/m (out of phase): common practice in structural dynamics
    # (e.g. A. K. Chopra, Dynamics of Structures, the two-storey shear frame, from memory)
    sol = derive.solve(_two_masses(m1, m2, k1, k2, k3), x0=[1, 0, 0, 0], params={m1: 2, m2: 2, k1: 3, k2: 3, k3: 3})
    assert sol.verification.ok
    assert sol.verification.numeric is not None and sol.verification.numeric.ok
    found = _squared_frequencies(sol, {m1: m, m2: m, k1: k, k2: k, k3: k})
    assert found == {k / m, 3 * k / m}
    # at the values, against scipy.linalg.expm (reference library)
    values = {m1: 2, m2: 2, k1: 3, k2: 3, k3: 3}
    times = [0.0, 0.9, 2.5, 7.0]
    ours = solution_values(sp.Matrix(sol.x).xreplace(values), times)
    assert_close(ours, expm_values(_two_masses(m1, m2, k1, k2, k3).xreplace(values), [1, 0, 0, 0], times))
