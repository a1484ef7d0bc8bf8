"""The Laplace route (derive.laplace): G(s), responses against sympy's inverse_laplace_transform, the sheet step."""

from __future__ import annotations

import pytest
import sympy as sp

import derive
from derive.errors import InputError
from derive.casefile import loads_case
from derive.laplace import frequency_response, input_matrix, laplace_response, transfer_function

t = sp.Symbol("t", positive=True)
s = sp.Symbol("s")


def reference(A: sp.Matrix, x0: sp.Matrix, F: sp.Matrix) -> sp.Matrix:
    """x(t) for t > 0 by sympy's inverse_laplace_transform of (sI - A)^-1 (x0 + F(s)) (an outside routine)."""
    X = (s * sp.eye(A.rows) - A).inv() * (x0 + F)
    out = [sp.inverse_laplace_transform(sp.apart(sp.cancel(e), s), s, t) for e in X]
    return sp.Matrix([e.subs(sp.Heaviside(t), 1) for e in out])


CASES = [
    # distinct real eigenvalues, exponential input
    (sp.Matrix([[0, 1], [-2, -3]]), sp.Matrix([1, 0]), sp.Matrix([0, sp.exp(-3 * t)]), [-2, -1]),
    # complex pair, a sine at another frequency
    (sp.Matrix([[0, 1], [-5, -2]]), sp.Matrix([0, 1]), sp.Matrix([0, sp.sin(3 * t)]), [-1 - 2 * sp.I, -1 + 2 * sp.I]),
    # defective eigenvalue and resonant input t e^{-t}
    (sp.Matrix([[-1, 1], [0, -1]]), sp.Matrix([2, 1]), sp.Matrix([0, t * sp.exp(-t)]), [-1, -1]),
    # undamped, resonant cosine
    (sp.Matrix([[0, 1], [-4, 0]]), sp.Matrix([1, 0]), sp.Matrix([0, sp.cos(2 * t)]), [-2 * sp.I, 2 * sp.I]),
]


@pytest.mark.parametrize("A, x0, f, eigenvalues", CASES)
def test_responses_match_inverse_laplace_transform(A, x0, f, eigenvalues) -> None:  # type: ignore[no-untyped-def]
    """Reference: sympy.inverse_laplace_transform (sympy's own table and integration routines)."""
    F = sp.Matrix([sp.laplace_transform(e, t, s, noconds=True) for e in f])
    ours = laplace_response(A, f, x0, eigenvalues, t=t, s=s)
    ref = reference(A, x0, F)
    for a, b in zip(ours, ref):
        for at in (sp.Rational(1, 3), 1, sp.Rational(5, 2)):
            assert abs(complex(sp.N((a - b).subs(t, at), 30))) < 1e-25


def test_transfer_function_of_a_damped_oscillator() -> None:
    """x'' + 3x' + 2x = u: G(s) = 1/(s^2 + 3s + 2) from u to x (common practice)."""
    G = transfer_function(sp.Matrix([[0, 1], [-2, -3]]), sp.Matrix([0, 1]), s=s)
    assert G == sp.Matrix([1 / ((s + 1) * (s + 2)), s / ((s + 1) * (s + 2))])
    Gy = transfer_function(sp.Matrix([[0, 1], [-2, -3]]), sp.Matrix([0, 1]), sp.Matrix([[1, 0]]), sp.Matrix([[0]]), s=s)
    assert sp.simplify(Gy[0] - 1 / (s**2 + 3 * s + 2)) == 0


def test_input_matrix_choices() -> None:
    B, u, how = input_matrix(sp.Matrix([0, 4 * sp.sin(t)]), t)
    assert B == sp.Matrix([0, 4]) and u == (sp.sin(t),) and "one function of time" in how
    B, u, how = input_matrix(sp.Matrix([2, 3]), t)
    assert B == sp.Matrix([2, 3]) and u == (1,) and "constant" in how
    B, u, how = input_matrix(sp.Matrix([sp.sin(t), sp.exp(-t)]), t)
    assert B == sp.eye(2) and u == (sp.sin(t), sp.exp(-t))
    B, u, how = input_matrix(sp.zeros(2, 1), t)
    assert B == sp.eye(2) and u == () and "unforced" in how


def test_the_sheet_step_agrees_for_a_forced_symbolic_case_from_t0() -> None:
    case = loads_case(
        "[parameters.c]\nassume = [\"positive\"]\n"
        "[system]\nequations = [\"y'' + c*y' = exp(-t)\"]\n[initial]\nt0 = 1\nvalues = [0, 1]\n"
    )
    sol = derive.solve_case(case)
    (step,) = [st for st in sol.steps if st.kind == "laplace_check"]
    assert step.ran and step.agrees is True and step.method == "exact"
    c = case.system.params[0].symbol
    assert sp.simplify(step.G[0] - 1 / (step.s * (step.s + c))) == 0
    assert "the two routes agree" in derive.render(sol, "text")


def test_a_wrong_solution_is_caught() -> None:
    """The check compares for real: a solution altered by e^{-2t} in one state is reported as disagreeing."""
    from derive.laplace import laplace_check

    sol = derive.solve([[0, 1], [-2, -3]], ["0", "exp(-t)"], x0=[1, 0])
    wrong = sol.x + sp.Matrix([sp.exp(-2 * sol.t), 0])
    step = laplace_check(sol.system, wrong, sol.eigenvalues)
    assert step.ran and step.agrees is False
    right = laplace_check(sol.system, sol.x, sol.eigenvalues)
    assert right.agrees is True


def test_not_run_reasons() -> None:
    switched = derive.solve([[-1]], ["step(t - 1)"], x0=[0])
    (step,) = [st for st in switched.steps if st.kind == "laplace_check"]
    assert not step.ran and "interval by interval" in step.reason
    convolved = derive.solve([[-1]], ["1/(1 + t^2)"], x0=[0])
    (step,) = [st for st in convolved.steps if st.kind == "laplace_check"]
    assert not step.ran and "by convolution" in step.reason
    big = derive.solve(sp.diag(-1, -2, -3, -4, -5), x0=[1, 1, 1, 1, 1])
    (step,) = [st for st in big.steps if st.kind == "laplace_check"]
    assert not step.ran and "at most 4 states" in step.reason
    assert "This check was not run: it is made for systems of at most 4 states." in derive.render(big, "text")


def test_frequency_response_of_a_first_order_lag() -> None:
    """|G(i omega)| = 1/sqrt(1 + (omega T)^2), phase = -atan(omega T) for G = 1/(T s + 1) (common practice)."""
    T = sp.Symbol("T", positive=True)
    r = frequency_response(1 / (T * s + 1), s, values={T: 2}, omega_min=0.01, omega_max=100, points=41)
    import math

    for w, mag, ph in zip(r.omega, r.magnitude, r.phase_degrees):
        assert mag == pytest.approx(1 / math.sqrt(1 + (2 * w) ** 2), rel=1e-12)
        assert ph == pytest.approx(-math.degrees(math.atan(2 * w)), abs=1e-9)
    with pytest.raises(InputError, match="T without values"):
        frequency_response(1 / (T * s + 1), s)
    with pytest.raises(sp.SympifyError):  # text is never read as an expression here
        frequency_response("1/(s + 1)", s)  # type: ignore[arg-type]
