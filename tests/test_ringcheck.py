"""The polynomial-ring substitution check (derive.ringcheck).

Its one promise is soundness: a True verdict means x' - A x - f is zero.  The
reference is sympy's own diff and simplify (an independent route), and
wrong answers must never be settled as zero.  False means "not settled
here" and sends verify() to expansion and the numeric identity test.
"""

from __future__ import annotations

import pytest
import sympy as sp
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

import derive
from derive.ringcheck import initial_is_zero, residual_is_zero

t = sp.Symbol("t")
Z = sp.zeros(2, 2)


def _sympy_agrees(x, A, f) -> bool:
    """The independent reference: sympy's diff and simplify say x' - A x - f = 0; where
    simplify cannot reduce an entry (indexed roots), sympy's evalf at 30 digits at three
    points must give |entry| < 1e-20 (sympy's own evaluator, not derive's zero test)."""
    r = sp.Matrix(x).diff(t) - sp.Matrix(A) * sp.Matrix(x) - sp.Matrix(f)
    for e in r:
        if not e.has(sp.CRootOf) and sp.simplify(e) == 0:
            continue
        if any(abs(sp.N(e.subs(t, sp.Rational(p, 7)), 30)) > 1e-20 for p in (-3, 2, 9)):
            return False
    return True


def test_rotation_decay_solution_is_settled():
    # x' = [[-1, 2], [-2, -1]] x: e^{-t}(cos 2t, -sin 2t) solves it (common practice)
    A = sp.Matrix([[-1, 2], [-2, -1]])
    x = [sp.exp(-t) * sp.cos(2 * t), -sp.exp(-t) * sp.sin(2 * t)]
    assert residual_is_zero(x, A, [0, 0], t)
    assert _sympy_agrees(x, A, [0, 0])
    assert initial_is_zero(x, [1, 0], t)
    assert not initial_is_zero(x, [1, 1], t)


def test_radicals_in_exponents_and_coefficients_cancel():
    # A = [[1, 1], [1, -1]] has eigenvalues +-sqrt 2, eigenvector (1 + sqrt 2, 1)
    A = sp.Matrix([[1, 1], [1, -1]])
    r = sp.sqrt(2)
    x = [(1 + r) * sp.exp(r * t), sp.exp(r * t)]
    assert residual_is_zero(x, A, [0, 0], t)
    assert _sympy_agrees(x, A, [0, 0])
    # the other eigenvector with the wrong eigenvalue is not a solution
    assert not residual_is_zero([(1 - r) * sp.exp(r * t), sp.exp(r * t)], A, [0, 0], t)


def test_parameters_in_the_coefficient_domain():
    k, m = sp.symbols("k m", positive=True)
    w = sp.sqrt(k / m)
    A = sp.Matrix([[0, 1], [-k / m, 0]])
    x = [sp.cos(w * t), -w * sp.sin(w * t)]
    assert residual_is_zero(x, A, [0, 0], t)
    assert _sympy_agrees(x, A, [0, 0])
    assert not residual_is_zero([sp.cos(w * t), w * sp.sin(w * t)], A, [0, 0], t)


def test_forced_resonant_term():
    # x'' + x = cos t as a system: x = t sin t / 2 (Boyce & DiPrima 10th ed. §3.5, from memory)
    A = sp.Matrix([[0, 1], [-1, 0]])
    x = [t * sp.sin(t) / 2, sp.sin(t) / 2 + t * sp.cos(t) / 2]
    assert residual_is_zero(x, A, [0, sp.cos(t)], t)
    assert _sympy_agrees(x, A, [0, sp.cos(t)])
    assert not residual_is_zero(x, A, [0, sp.sin(t)], t)


def test_indexed_roots_reduced_by_their_polynomial():
    z = sp.Symbol("z")
    lam = sp.CRootOf(z**5 - z - 1, 0)  # the real root; x = e^{lam t} solves x' = lam x
    x = [sp.exp(lam * t)]
    assert residual_is_zero(x, sp.Matrix([[lam]]), [0], t)
    assert _sympy_agrees(x, sp.Matrix([[lam]]), [0])
    assert not residual_is_zero(x, sp.Matrix([[lam + 1]]), [0], t)


@pytest.mark.parametrize(
    "x",
    [
        [sp.log(t + 2), 0],  # not an exponential polynomial
        [sp.Heaviside(t - 1) * sp.exp(-t), 0],  # a switch
        [sp.exp(-t) / (1 + t), 0],  # t in a denominator
        [sp.exp(t**2), 0],  # an argument not linear in t
    ],
)
def test_outside_the_ring_is_not_settled(x):
    assert residual_is_zero(x, Z, [0, 0], t) is False


def test_verify_falls_back_when_the_ring_cannot_settle():
    # e^{2t} written as (e^t)^2 against x' = 2x: the ring treats e^t and e^{2t} as
    # independent, so expansion settles it instead
    sol_x = [sp.exp(t) ** 2]
    assert sp.simplify(sp.diff(sol_x[0], t) - 2 * sol_x[0]) == 0
    from derive.model import System
    from derive.verify import verify

    system = System(
        A=sp.ImmutableMatrix([[2]]), f=sp.ImmutableMatrix([0]), t=t, states=(sp.Symbol("x_1"),)
    )
    ver = verify(system, sp.Matrix(sol_x), numeric=False)
    assert ver.residual_zero
    assert _sympy_agrees(sol_x, [[2]], [0])


# ---------------------------------------------------------------------------
# soundness against sympy's diff: x' = f with f := dx/dt by sympy


_rates = st.sampled_from([sp.Integer(0), sp.Integer(-1), sp.Rational(-1, 2), sp.Integer(2), sp.sqrt(3), -1 + sp.sqrt(2)])
_freqs = st.sampled_from([sp.Integer(0), sp.Integer(1), sp.Integer(3), sp.sqrt(2), sp.Rational(1, 2)])
_coeffs = st.sampled_from([sp.Integer(1), sp.Integer(-3), sp.Rational(2, 5), sp.sqrt(2), 1 + sp.sqrt(3), sp.I / 2])


@st.composite
def exp_poly(draw):
    terms = []
    for _ in range(draw(st.integers(1, 4))):
        c, a, b = draw(_coeffs), draw(_rates), draw(_freqs)
        k = draw(st.integers(0, 2))
        trig = draw(st.sampled_from([sp.cos, sp.sin]))
        terms.append(c * t**k * sp.exp(a * t) * trig(b * t))
    return sp.Add(*terms)


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(exp_poly(), exp_poly())
def test_true_verdicts_agree_with_sympy_diff(x1, x2):
    x = [x1, x2]
    f = [sp.diff(e, t) for e in x]
    assert residual_is_zero(x, Z, f, t)  # every such pair lies in the ring
    # perturbed: f is off by a term that is not a derivative of x, never settled as zero
    bad = [f[0] + sp.exp(sp.Rational(1, 7) * t), f[1]]
    assert not residual_is_zero(x, Z, bad, t)


@settings(max_examples=25, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(exp_poly())
def test_initial_values_agree_with_substitution(x1):
    v = sp.nsimplify(sp.expand(x1.subs(t, 0)))
    assert initial_is_zero([x1], [v], t) == (sp.simplify(x1.subs(t, 0) - v) == 0)
    assert not initial_is_zero([x1], [v + 1], t)


_params = st.sampled_from([sp.Integer(1), sp.Symbol("k"), sp.Symbol("c_1"), 1 / sp.Symbol("m"), sp.pi])


@settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(exp_poly(), _params)
def test_the_walk_into_q_reads_as_sympys_polynomial_constructor(x1, p):
    """The one-walk reading of an expression into Q[gens] gives the same element as
    sympy's parallel_poly_from_expr (the independent reference), and declines
    what is not rational (1/m, pi) instead of reading it wrongly."""
    from derive.ringcheck import _NotRational, _Ring

    e = sp.expand(x1 * p) + x1**2
    ring = _Ring([e], t)
    held = [ring._alg_expr(e.xreplace(ring.hold))]
    try:
        fast = ring._rational_elements(held)[0]
    except _NotRational:
        assert p.has(sp.pi) or any(b.is_Pow and b.exp.is_negative for b in sp.preorder_traversal(p))
        return
    slow = ring._general_elements(held, 1)[0]
    assert fast.ring.domain == slow.ring.domain == sp.QQ
    assert dict(fast) == dict(slow)


def test_solutions_of_the_solver_are_settled_exactly():
    # the casus irreducibilis cubic: three indexed roots of one polynomial
    A = sp.Matrix([[0, 1, 0], [0, 0, 1], [1, 3, 0]])  # lambda^3 - 3 lambda - 1
    sol = derive.solve(A)
    assert residual_is_zero(list(sol.x), A, [0, 0, 0], t)
    values = {c: sp.Rational(k + 2, 3) for k, c in enumerate(sol.constants)}
    assert _sympy_agrees(list(sol.x.xreplace(values)), A, [0, 0, 0])


# ---------------------------------------------------------------------------
# the numeric functions of the numeric check (derive.verify.evaluate.numeric_function)


@pytest.mark.parametrize(
    "expr",
    [
        sp.exp(-t / 2) * (3 * sp.cos(sp.sqrt(3) * t / 2) - sp.sqrt(3) * sp.sin(sp.sqrt(3) * t / 2)),
        (1 + sp.sqrt(2)) * sp.exp(sp.sqrt(2) * t) + t**3 * sp.exp(-t) / 6,
        sp.I * sp.exp((-1 + 2 * sp.I) * t) - sp.I * sp.exp((-1 - 2 * sp.I) * t),
        1 / (1 + t**2) + sp.Rational(5, 7),
        sp.Integer(4),
    ],
)
def test_tree_evaluation_matches_lambdify(expr):
    """The tree walk that replaces lambdify for numpy must give lambdify's values
    (sympy's lambdify is the reference), real where lambdify's are real."""
    import numpy as np

    from derive.verify.evaluate import TreeFunction, numeric_function

    grid = np.linspace(-1.0, 3.0, 25)
    ours = numeric_function(t, [expr, t], "numpy")
    assert isinstance(ours, TreeFunction)
    got = np.broadcast_to(np.asarray(ours(grid)[0]), grid.shape)
    ref = np.broadcast_to(np.asarray(sp.lambdify(t, expr, "numpy")(grid)), grid.shape)
    assert np.max(np.abs(got - ref)) <= 1e-13 * max(1.0, float(np.max(np.abs(ref))))
    assert np.iscomplexobj(got) == np.iscomplexobj(ref) or not np.any(np.imag(ref))


def test_numeric_function_falls_back_to_lambdify_outside_the_tree():
    from derive.verify.evaluate import TreeFunction, numeric_function

    k = sp.Symbol("k")
    assert not isinstance(numeric_function(t, [sp.Heaviside(t - 1)], "numpy"), TreeFunction)
    assert not isinstance(numeric_function(t, [k * t], "numpy"), TreeFunction)  # a second symbol
    assert numeric_function(t, [sp.Heaviside(t - 1) * t], "numpy")(2.0)[0] == 2.0


def test_numeric_function_reads_given_values_of_other_symbols():
    """Sampled constants are read by the walk instead of substituted; lambdify on the
    substituted expression is the reference, and the lambdify route substitutes them."""
    import numpy as np

    from derive.verify.evaluate import TreeFunction, numeric_function

    c1, c2 = sp.symbols("c_1 c_2")
    expr = c1 * sp.exp(-t) * sp.cos(2 * t) + c2 * t * sp.exp(-t / 2)
    vals = {c1: sp.Rational(3, 4), c2: sp.Rational(-2, 3)}
    grid = np.linspace(0.0, 4.0, 17)
    ours = numeric_function(t, [expr], "numpy", values=vals)
    assert isinstance(ours, TreeFunction)
    ref = sp.lambdify(t, expr.xreplace(vals), "numpy")(grid)
    assert np.max(np.abs(ours(grid)[0] - ref)) <= 1e-14
    # outside the walk (a Heaviside) the values are put in before lambdify
    other = numeric_function(t, [c1 * sp.Heaviside(t - 1)], "numpy", values=vals)
    assert not isinstance(other, TreeFunction)
    assert other(2.0)[0] == 0.75


def test_text_is_never_read_as_an_expression():
    """The ring check takes sympy objects (and Python integers) only: strict sympify refuses
    a string instead of parsing it, so user text can never reach it unparsed."""
    A = sp.Matrix([[-1]])
    assert residual_is_zero([sp.exp(-t)], A, [0], t)
    with pytest.raises(sp.SympifyError):
        residual_is_zero(["exp(-t)"], A, [0], t)


def test_the_pieces_of_a_switched_input_are_read_into_one_ring():
    from derive.ringcheck import residuals_are_zero

    A = sp.ImmutableMatrix([[0, 1], [-2, -3]])
    # x(t) of x' = A x + (0, u(t - 1)) from x(0) = (1, 0), written out by hand on each interval
    before = [2 * sp.exp(-t) - sp.exp(-2 * t), -2 * sp.exp(-t) + 2 * sp.exp(-2 * t)]
    e1, e2 = sp.exp(-1), sp.exp(-2)
    after = [
        (2 * e1 - 1) * sp.exp(1 - t) + (sp.Rational(1, 2) - e2) * sp.exp(2 - 2 * t) + sp.Rational(1, 2),
        (1 - 2 * e1) * sp.exp(1 - t) + (2 * e2 - 1) * sp.exp(2 - 2 * t),
    ]
    wrong = [after[0] + sp.exp(-t), after[1]]
    assert residuals_are_zero([(before, [0, 0]), (after, [0, 1])], A, t) == [True, True]
    # a wrong piece is not settled, and does not hide or spoil its neighbours' verdicts
    assert residuals_are_zero([(before, [0, 0]), (wrong, [0, 1]), (after, [0, 1])], A, t) == [True, False, True]
    # a piece the shared ring cannot read (a nested function) is tried on its own
    nested = [sp.exp(sp.exp(t)), 0]
    assert residuals_are_zero([(nested, [0, 0]), (after, [0, 1])], A, t) == [False, True]
