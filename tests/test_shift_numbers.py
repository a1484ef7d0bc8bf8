"""The time shift's stand-ins for cos(w t0), sin(w t0), e^{a t0} are numbers, not parameters.

A numeric initial value problem at t0 != 0 is solved in tau = t - t0 with real
stand-in symbols; they are grouped like numbers (expanded, never factored like
parameters), and the result is the exact solution, written in (t - t0).
"""

from __future__ import annotations

import sympy as sp

from derive import solve
from derive.expoly import ExpPoly
from derive.recombine import grouped, tidy

t = sp.Symbol("t", real=True)
s = sp.Symbol("s", real=True)
A3 = [[0, 1, 0], [0, 0, 1], [-6, -11, -6]]  # a third-order lag chain of our own, eigenvalues -1, -2, -3
X0 = [1, -1, 2]


def _exactly_equal(a: sp.Expr, b: sp.Expr) -> bool:
    """a = b as exponential polynomials: sin, cos as exponentials, exponentials of sums split."""
    return sp.expand((a - b).rewrite(sp.exp)) == 0


def test_a_time_invariant_input_gives_the_solution_from_zero_shifted() -> None:
    # a constant input (and no input): the problem at t0 = 1 is the problem at t0 = 0 delayed by 1
    for f in ([0, 0, 3], [0, 0, 0]):
        at_zero = solve(A3, f, t=t, x0=X0, t0=0)
        at_one = solve(A3, f, t=t, x0=X0, t0=1)
        assert at_one.verification.ok
        for a, b in zip(at_one.x, at_zero.x):
            assert _exactly_equal(a, b.subs(t, t - 1))


def test_the_numeric_chain_at_t0_one_against_the_matrix_exponential_formula() -> None:
    # reference: x(t) = e^{A (t - t0)} x0 + e^{A t} int_{t0}^t e^{-A s} f(s) ds (variation of constants;
    # common practice), the exponential by sympy's Matrix.exp and the integral by sympy's integrate
    A = sp.Matrix(A3)
    forcing = sp.sin(2 * t) + sp.exp(-t / 2)
    f = sp.Matrix([0, 0, forcing.subs(t, s)])
    integrand = ((-A * s).exp() * f).applyfunc(sp.expand)
    integral = integrand.applyfunc(lambda e: sp.integrate(e, (s, 1, t)))
    reference = (A * t).exp() * ((-A).exp() * sp.Matrix(X0) + integral)
    sol = solve(A3, [0, 0, forcing], t=t, x0=X0, t0=1)
    assert sol.verification.ok
    for a, b in zip(sol.x, reference):
        assert _exactly_equal(a, b)
    # written in (t - t0): the free response's exponentials read e^{-k (t - 1)}, the input's own modes in t
    rates = {e.args[0] for x in sol.x for e in x.atoms(sp.exp) if e.has(t)}
    assert rates == {1 - t, 2 - 2 * t, 3 - 3 * t, -t / 2}


def test_each_exponential_of_the_free_response_has_one_coefficient() -> None:
    # e^{-1/2} (the input e^{-t/2} at t0 = 1) joins its mode's coefficient, not a term of its own
    sol = solve(A3, [0, 0, sp.sin(2 * t) + sp.exp(-t / 2)], t=t, x0=X0, t0=1)
    for x in sol.x:
        for mode in (sp.exp(1 - t), sp.exp(2 - 2 * t), sp.exp(3 - 3 * t)):
            holding = [term for term in sp.Add.make_args(x) if term.has(mode)]
            assert len(holding) == 1
            assert holding[0].has(sp.exp(-sp.Rational(1, 2)))


def test_stand_ins_are_expanded_like_numbers_and_parameters_still_factored() -> None:
    C, k = sp.Dummy("C", real=True), sp.Symbol("k", positive=True)
    p = ExpPoly.from_dict({(0, sp.Integer(-1)): C / 5 + sp.Rational(3, 2)})
    assert grouped([(sp.Integer(1), p)], (), t, real=True, numbers={C}) == (C / 5 + sp.Rational(3, 2)) * sp.exp(-t)
    assert grouped([(sp.Integer(1), p)], (), t, real=True) == (2 * C + 15) * sp.exp(-t) / 10
    # with a parameter beside it, the coefficient is factored as before
    q = ExpPoly.from_dict({(0, sp.Integer(-1)): C * k / 5 + 3 * k / 2})
    assert grouped([(sp.Integer(1), q)], (), t, real=True, numbers={C}) == k * (2 * C + 15) * sp.exp(-t) / 10
    # tidy reads the same rule off an expression
    e = (C / 5 + sp.Rational(3, 2)) * sp.exp(-t)
    assert tidy(e, (), t, numbers={C}) == e
    assert tidy(e, (), t) == (2 * C + 15) * sp.exp(-t) / 10
