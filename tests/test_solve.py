"""The solver end to end through the public API: derive.solve.

Three kinds of evidence, each independent of the derivation itself:
- systems built by construction (A = P D P^-1 with a unimodular integer P),
  so the eigenvalues are known in advance;
- published worked examples (source named beside each);
- reference libraries: sympy's own Matrix.exp for e^{At} x0 and scipy's
  solve_ivp, neither of which the solver uses on its path.
"""

from __future__ import annotations

import numpy as np
import pytest
import sympy as sp
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from scipy.integrate import solve_ivp

import derive
from derive.errors import DeriveError, InputError, UnsupportedError
from reference import assert_close, ivp_values, solution_values

t = sp.Symbol("t")


def residual(A, f, x, tt=t):
    A = sp.Matrix(A)
    f = sp.zeros(A.rows, 1) if f is None else sp.Matrix(f)
    return sp.simplify(sp.Matrix(x).diff(tt) - A * sp.Matrix(x) - f)


# ---------------------------------------------------------------------------
# by construction


@st.composite
def unimodular(draw, n):
    """A random integer matrix with determinant +-1 (a product of elementary ones)."""
    M = sp.eye(n)
    for _ in range(draw(st.integers(1, 2 * n))):
        i = draw(st.integers(0, n - 1))
        j = draw(st.integers(0, n - 1))
        if i == j:
            continue
        k = draw(st.integers(-2, 2))
        E = sp.eye(n)
        E[i, j] = k
        M = M * E
    if draw(st.booleans()):
        i, j = draw(st.permutations(range(n)))[:2]
        M.row_swap(i, j)
    return M


FORCING = [
    lambda: sp.Integer(0),
    lambda: sp.Integer(1),
    lambda: t,
    lambda: sp.exp(-t),
    lambda: sp.sin(2 * t),
    lambda: sp.cos(t) * sp.exp(-t),
    lambda: t**2,
    lambda: t * sp.exp(2 * t),
]


@settings(max_examples=25, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(
    n=st.integers(2, 4),
    data=st.data(),
)
def test_by_construction_distinct_real(n, data):
    P = data.draw(unimodular(n))
    eigs = data.draw(st.lists(st.integers(-4, 3), min_size=n, max_size=n, unique=True))
    A = P * sp.diag(*eigs) * P.inv()
    f = [FORCING[data.draw(st.integers(0, len(FORCING) - 1))]() for _ in range(n)]
    ivp = data.draw(st.booleans())
    x0 = [data.draw(st.integers(-3, 3)) for _ in range(n)] if ivp else None
    sol = derive.solve(A, f, x0=x0)
    assert sorted(sol.eigenvalues) == sorted(eigs)
    assert sol.verification.ok
    assert residual(A, f, sol.x) == sp.zeros(n, 1)
    assert sp.simplify(sol.P * sol.D * sol.P_inv - A) == sp.zeros(n, n)
    if ivp:
        assert sol.constants == ()
        assert sp.simplify(sol.x.subs(t, 0) - sp.Matrix(x0)) == sp.zeros(n, 1)
    else:
        assert len(sol.constants) == n
        # the constants are independent: the fundamental matrix is nonsingular
        Phi = sol.x.jacobian(sp.Matrix(sol.constants))
        assert sp.simplify(Phi.subs(t, 0).det()) != 0


@settings(max_examples=15, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(data=st.data())
def test_by_construction_complex_pair_is_real(data):
    """Real data with a complex pair a +- ib: the answer has no i in it."""
    a = data.draw(st.integers(-3, 1))
    b = data.draw(st.integers(1, 3))
    r = data.draw(st.integers(-4, 2))
    P = data.draw(unimodular(3))
    block = sp.Matrix([[a, b, 0], [-b, a, 0], [0, 0, r]])
    A = P * block * P.inv()
    f = [0, sp.cos(t), 1]
    sol = derive.solve(A, f, x0=[1, 0, -1])
    assert not sol.x.has(sp.I)
    assert sol.verification.ok
    # reference: scipy's solve_ivp, DOP853 at 1e-12 (tests/reference.py)
    times = (0.5, 1.7)
    assert_close(solution_values(sol.x, times).real, ivp_values(A, f, [1, 0, -1], times), rtol=1e-8)
    assert sp.I * b + a in sol.eigenvalues or a + sp.I * b in [sp.expand(e) for e in sol.eigenvalues]


# ---------------------------------------------------------------------------
# published worked examples


def test_published_distinct_real_boyce_diprima():
    # Boyce & DiPrima, Elementary Differential Equations and Boundary Value
    # Problems, 10th ed., section 7.5, Example 1 (from memory):
    # x' = [[1, 1], [4, 1]] x has r = 3, -1 with eigenvectors (1, 2), (1, -2).
    sol = derive.solve([[1, 1], [4, 1]])
    assert sol.eigenvalues == (-1, 3)
    v_m1 = sol.P[:, 0]
    v_3 = sol.P[:, 1]
    assert v_m1[1] / v_m1[0] == -2
    assert v_3[1] / v_3[0] == 2


def test_published_complex_pair_boyce_diprima():
    # Boyce & DiPrima, 10th ed., section 7.6, Example 1 (from memory):
    # x' = [[-1/2, 1], [-1, -1/2]] x; r = -1/2 +- i; real solutions
    # e^{-t/2} (cos t, -sin t) and e^{-t/2} (sin t, cos t).
    A = [[sp.Rational(-1, 2), 1], [-1, sp.Rational(-1, 2)]]
    sol = derive.solve(A)
    assert set(sol.eigenvalues) == {sp.Rational(-1, 2) + sp.I, sp.Rational(-1, 2) - sp.I}
    assert not sol.x.has(sp.I)
    u = sp.exp(-t / 2) * sp.Matrix([sp.cos(t), -sp.sin(t)])
    w = sp.exp(-t / 2) * sp.Matrix([sp.sin(t), sp.cos(t)])
    # the published pair spans the same solutions: x = alpha u + beta w for our constants
    al, be = sp.symbols("alpha beta")
    eqs = sp.expand(sol.x - al * u - be * w)
    sols = sp.solve([eqs.subs(t, 0)[0], eqs.subs(t, 0)[1]], [al, be], dict=True)
    assert sols
    assert sp.simplify(eqs.subs(sols[0])) == sp.zeros(2, 1)


def test_published_resonant_forcing_boyce_diprima():
    # Boyce & DiPrima, 10th ed., section 7.9, Example 1 (from memory):
    # x' = [[-2, 1], [1, -2]] x + (2 e^{-t}, 3 t); r = -3, -1 and the
    # forcing e^{-t} is resonant with r = -1.  Published particular solution:
    # (1,1) t e^{-t} + (1/2)(1,-1) e^{-t} + (1,2) t - (1/3)(4,5).
    A = sp.Matrix([[-2, 1], [1, -2]])
    f = [2 * sp.exp(-t), 3 * t]
    psi = (
        sp.Matrix([1, 1]) * t * sp.exp(-t)
        + sp.Rational(1, 2) * sp.Matrix([1, -1]) * sp.exp(-t)
        + sp.Matrix([1, 2]) * t
        - sp.Rational(1, 3) * sp.Matrix([4, 5])
    )
    assert residual(A, f, psi) == sp.zeros(2, 1)  # the published answer itself
    sol = derive.solve(A, f)
    assert sol.eigenvalues == (-3, -1)
    # ours and the published one differ by a solution of the homogeneous system
    diff = sol.particular - psi
    assert sp.simplify(diff.diff(t) - A * diff) == sp.zeros(2, 1)
    scal = [s for s in sol.steps if s.kind == "scalar"]
    assert any(s.resonant for s in scal)


def test_published_two_by_two_zill():
    # Zill, A First Course in Differential Equations with Modeling
    # Applications, 10th ed., section 8.2, Example 1 (from memory):
    # x' = 2x + 3y, y' = 2x + y; eigenvalues -1, 4, eigenvectors (1, -1), (3, 2).
    sol = derive.solve([[2, 3], [2, 1]])
    assert sol.eigenvalues == (-1, 4)
    assert list(sol.P[:, 0]) in ([1, -1], [-1, 1])
    assert list(sol.P[:, 1]) in ([3, 2], [-3, -2])


# ---------------------------------------------------------------------------
# reference libraries


@pytest.mark.parametrize(
    "A",
    [
        [[0, 1], [-2, -3]],
        [[1, 2], [2, 1]],
        [[0, 1], [-5, -2]],
        [[-2, 1, 0], [1, -2, 1], [0, 1, -2]],
        [[-3, 1, 1], [1, -3, 1], [1, 1, -3]],
        [[2, 1, 0], [0, 2, 0], [0, 0, -1]],
    ],
)
def test_homogeneous_ivp_equals_sympy_matrix_exponential(A):
    """x(t) = e^{At} x0 computed by sympy's Matrix.exp (an independent route)."""
    x0 = sp.Matrix([1, -1] + [2] * (len(A) - 2))
    sol = derive.solve(A, x0=list(x0))
    ref = (sp.Matrix(A) * t).exp() * x0
    for tv in (sp.Rational(1, 3), sp.Rational(7, 5)):
        ours = sol.x.subs(t, tv).evalf(30)
        theirs = ref.subs(t, tv).evalf(30)
        for a, b in zip(ours, theirs):
            assert abs(complex(a - b)) < 1e-20


def test_forced_ivp_against_scipy():
    """A forced 3x3 IVP against scipy's solve_ivp at tight tolerances."""
    A = sp.Matrix([[-1, 1, 0], [1, -3, 1], [0, 1, -2]])
    f = [sp.sin(t), 1, sp.exp(-t / 2)]
    x0 = [1, 0, 2]
    sol = derive.solve(A, f, x0=x0)
    An = np.array(A.tolist(), dtype=float)

    def rhs(tt, y):
        return An @ y + np.array([np.sin(tt), 1.0, np.exp(-tt / 2)])

    ts = np.linspace(0, 6, 13)
    num = solve_ivp(rhs, (0, 6), np.array(x0, float), method="DOP853", rtol=1e-12, atol=1e-12, t_eval=ts)
    x_num = sol.x.xreplace({r: sp.N(r, 30) for r in sol.x.atoms(sp.CRootOf)})
    fx = sp.lambdify(t, list(x_num), "numpy")
    exact = np.array([np.array(fx(tt), dtype=complex).real for tt in ts]).T
    assert np.max(np.abs(exact - num.y)) < 1e-8


def test_numeric_check_steps_the_forcing_modes_and_catches_a_wrong_answer():
    """A forcing of modes t^k e^{gamma t} (a resonant exponential and a sinusoid) is
    checked by stepping the state extended by those modes; the route reproduces
    scipy's solve_ivp (the reference here) and a wrong x(t) fails it."""
    from derive.verify import numeric_check

    A = sp.Matrix([[0, 1], [-2, -3]])
    f = [sp.exp(-t), t * sp.cos(2 * t)]  # e^{-t} resonates with the eigenvalue -1
    x0 = [1, -1]
    sol = derive.solve(A, f, x0=x0)
    num = sol.verification.numeric
    assert num.ok and num.modes == 5 and num.rtol is None and num.max_rel_gap < 1e-10
    ts = np.linspace(num.t_start, num.t_end, 9)
    ref = solve_ivp(lambda tt, y: np.array([[0, 1], [-2, -3]]) @ y + np.array([np.exp(-tt), tt * np.cos(2 * tt)]),
                    (ts[0], ts[-1]), np.array(x0, float), method="DOP853", rtol=1e-12, atol=1e-12, t_eval=ts)
    fx = sp.lambdify(t, list(sol.x), "numpy")
    assert np.max(np.abs(np.array([fx(tt) for tt in ts], dtype=float).T - ref.y)) < 1e-8
    wrong = sol.x + sp.Matrix([sp.Rational(1, 1000) * t * sp.exp(-2 * t), 0])
    bad = numeric_check(sol.system, wrong)
    assert not bad.ok and bad.max_rel_gap > 1e-5


def test_numeric_check_integrates_when_the_modes_do_not_reproduce_the_forcing(monkeypatch):
    """The modes are the solver's own reading of f; they are compared with f evaluated
    directly, and a misreading sends the check to solve_ivp instead of passing it on."""
    import derive.expoly as expoly
    from derive.verify import numeric_check

    sol = derive.solve([[0, 1], [-2, -3]], [0, sp.sin(t)], x0=[0, 1])
    right = expoly.to_expoly

    def misread(expr, var):  # drops every term but the first
        p = right(expr, var)
        return expoly.ExpPoly(p.terms[:1])

    monkeypatch.setattr(expoly, "to_expoly", misread)
    num = numeric_check(sol.system, sol.x)
    assert num.modes == 0 and num.rtol is not None and "DOP853" in num.method and num.ok


# ---------------------------------------------------------------------------
# behaviour a user relies on


def test_symbol_passed_as_t_is_kept_with_its_assumptions():
    tau = sp.Symbol("tau", positive=True)
    k = sp.Symbol("k", positive=True)
    sol = derive.solve([[-k, 0], [k, -2 * k]], t=tau, x0=[1, 0])
    assert tau in sol.x.free_symbols
    assert k in sol.x.free_symbols
    assert sp.Symbol("t") not in sol.x.free_symbols


def test_constants_appear_in_x_exactly():
    sol = derive.solve([[0, 1], [-2, -3]])
    assert len(sol.constants) == 2
    assert set(sol.constants) <= sol.x.free_symbols


def test_eigenvalue_order_real_then_complex_ascending():
    A = sp.diag(sp.Matrix([[0, 1], [-2, -2]]), sp.Matrix([[3]]), sp.Matrix([[-5]]))
    sol = derive.solve(A)
    assert sol.eigenvalues[:2] == (-5, 3)
    assert sp.im(sol.eigenvalues[2]) > 0 and sp.im(sol.eigenvalues[3]) < 0


def test_strings_and_floats_are_exact():
    sol = derive.solve([["-1/2", 0.25], [0, "-1"]], ["1", "exp(-t)"], x0=[0, 0])
    assert sol.system.A[0, 1] == sp.Rational(1, 4)
    assert any("0.25" in n for n in sol.notices)
    assert sol.verification.ok
    # reference: sympy's dsolve, one scalar equation at a time (the system is triangular)
    y = sp.Function("y")
    x2 = sp.dsolve(sp.Eq(y(t).diff(t), -y(t) + sp.exp(-t)), y(t), ics={y(0): 0}).rhs
    x1 = sp.dsolve(sp.Eq(y(t).diff(t), -y(t) / 2 + x2 / 4 + 1), y(t), ics={y(0): 0}).rhs
    assert [sp.simplify(r - x) for r, x in zip((x1, x2), sol.x)] == [0, 0]


def test_resonance_complex_pair_gives_t_sin_terms():
    sol = derive.solve([[0, 1], [-4, 0]], [0, sp.cos(2 * t)], x0=[0, 0])
    assert sp.simplify(sol.x[0] - t * sp.sin(2 * t) / 4) == 0


def test_nonzero_initial_time():
    sol = derive.solve([[-1, 0], [1, -2]], [1, 0], x0=[2, 1], t0=3)
    assert sp.simplify(sol.x.subs(t, 3) - sp.Matrix([2, 1])) == sp.zeros(2, 1)
    assert sol.verification.ok
    # reference: scipy's solve_ivp from t0 = 3, DOP853 at 1e-12 (tests/reference.py)
    times = (3.5, 5.0)
    assert_close(solution_values(sol.x, times).real, ivp_values([[-1, 0], [1, -2]], [1, 0], [2, 1], times, t0=3.0))


def test_non_square_is_bad_input():
    with pytest.raises(InputError) as e:
        derive.solve([[1, 2, 3], [4, 5, 6]])
    assert e.value.exit_code == 2
    assert "square" in str(e.value)


def test_wrong_forcing_length_names_both_sides():
    with pytest.raises(InputError) as e:
        derive.solve([[1, 0], [0, 2]], [1, 2, 3])
    assert "2x2" in str(e.value) and "3" in str(e.value)


def test_time_dependent_matrix_refused():
    with pytest.raises(InputError) as e:
        derive.solve([[t, 0], [0, 1]])
    assert "constant" in str(e.value)


def test_errors_share_one_root():
    assert issubclass(UnsupportedError, DeriveError)
    assert issubclass(derive.VerificationError, DeriveError)


def test_size_six_distinct_solves_and_verifies():
    P = sp.Matrix(
        [
            [1, 1, 0, 0, 0, 0],
            [0, 1, 1, 0, 0, 0],
            [0, 0, 1, 1, 0, 0],
            [0, 0, 0, 1, 1, 0],
            [0, 0, 0, 0, 1, 1],
            [1, 0, 0, 0, 0, 2],
        ]
    )
    assert P.det() != 0
    A = P * sp.diag(-1, -2, -3, 1, 2, sp.Rational(1, 2)) * P.inv()
    sol = derive.solve(A, [1, 0, t, 0, sp.exp(-t), 0], x0=[1, 0, 0, 0, 0, 0])
    assert sol.verification.ok
    assert residual(A, [1, 0, t, 0, sp.exp(-t), 0], sol.x) == sp.zeros(6, 1)


# ---------------------------------------------------------------------------
# recombine.grouped: the grouped x(t) built from exponential polynomials


_g_rates = st.sampled_from([sp.Integer(0), sp.Integer(-1), sp.Rational(-1, 2), sp.Integer(2), sp.sqrt(3)])
_g_freqs = st.sampled_from([sp.Integer(0), sp.Integer(1), sp.Integer(3), sp.sqrt(2)])
_g_coeffs = st.sampled_from([sp.Integer(1), sp.Integer(-3), sp.Rational(2, 5), sp.sqrt(2), 1 + sp.sqrt(3), sp.Symbol("k", real=True)])  # real data, as the real form requires


@st.composite
def _real_function(draw):
    T = sp.Symbol("t")
    terms = []
    for _ in range(draw(st.integers(1, 3))):
        c, a, b = draw(_g_coeffs), draw(_g_rates), draw(_g_freqs)
        trig = draw(st.sampled_from([sp.cos, sp.sin]))
        terms.append(c * T ** draw(st.integers(0, 2)) * sp.exp(a * T) * trig(b * T))
    return sp.Add(*terms)


@settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.lists(_real_function(), min_size=1, max_size=3), st.booleans(), st.booleans())
def test_grouped_form_equals_tidy_of_the_written_sum(funcs, real, with_constants):
    """grouped() must give exactly what tidy() gives on the sum written out (the form the
    sheets have always shown), and that must equal the sum itself (sympy's expand as the
    independent check)."""
    from derive.expoly import to_expoly
    from derive.recombine import grouped, tidy

    T = sp.Symbol("t")
    consts = sp.symbols("c_1:4")
    ps = [to_expoly(f, T) for f in funcs]
    cs = consts[: len(ps)] if with_constants else tuple(sp.Integer(j + 2) for j in range(len(ps)))
    pairs = list(zip(cs, ps))
    written = sp.Add(*[c * (p.real_form(T) if real else p.to_expr(T)) for c, p in pairs])
    keep = consts if with_constants else ()
    got = grouped(pairs, keep, T, real=real)
    assert got == tidy(written, keep, T)
    assert sp.expand((got - sp.Add(*[c * f for c, f in zip(cs, funcs)])).rewrite(sp.exp)) == 0
