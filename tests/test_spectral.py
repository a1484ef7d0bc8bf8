"""Every spectrum: repeated, defective, zero, complex defective, non-radical, symbolic.

The Jordan structure is checked against sympy's own ``jordan_form`` (an
independent implementation, used only here, never on the solving path) and
every solution is checked by substitution.
"""

from __future__ import annotations

import pytest
import sympy as sp
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

import derive
from derive.spectral import decompose
from reference import assert_close, expm_values, ivp_values, solution_values

t = sp.Symbol("t")


def residual(A, f, x):
    A = sp.Matrix(A)
    f = sp.zeros(A.rows, 1) if f is None else sp.Matrix(f)
    return sp.simplify(sp.Matrix(x).diff(t) - A * sp.Matrix(x) - f)


@st.composite
def unimodular(draw, n):
    M = sp.eye(n)
    for _ in range(draw(st.integers(n, 2 * n + 2))):
        i = draw(st.integers(0, n - 1))
        j = draw(st.integers(0, n - 1))
        if i != j:
            E = sp.eye(n)
            E[i, j] = draw(st.integers(-1, 1))
            M = M * E
    return M


def jordan_block(lam, size):
    J = sp.eye(size) * lam
    for i in range(size - 1):
        J[i, i + 1] = 1
    return J


def block_signature(J):
    """Sorted (eigenvalue, size) pairs of a Jordan matrix."""
    n = J.rows
    out = []
    i = 0
    while i < n:
        size = 1
        while i + size < n and J[i + size - 1, i + size] == 1:
            size += 1
        out.append((J[i, i], size))
        i += size
    return sorted(out, key=lambda p: (sp.default_sort_key(p[0]), p[1]))


@st.composite
def jordan_structure(draw):
    """Blocks (eigenvalue, size) with total size 2..6, eigenvalues possibly shared."""
    n = draw(st.integers(2, 6))
    blocks = []
    left = n
    pool = draw(st.lists(st.integers(-3, 2), min_size=1, max_size=3, unique=True))
    while left:
        size = draw(st.integers(1, min(3, left)))
        blocks.append((draw(st.sampled_from(pool)), size))
        left -= size
    return blocks


@settings(max_examples=30, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(blocks=jordan_structure(), data=st.data())
def test_every_block_structure_by_construction(blocks, data):
    n = sum(s for _, s in blocks)
    J = sp.diag(*[jordan_block(lam, s) for lam, s in blocks])
    P = data.draw(unimodular(n))
    A = P * J * P.inv()
    forced = data.draw(st.booleans())
    f = [sp.exp(-t) if i == 0 else 0 for i in range(n)] if forced else None
    sol = derive.solve(A, f, x0=[1] + [0] * (n - 1))
    assert sol.verification.ok
    # by sympy's own substitution and the initial value (common practice: the two
    # together determine the solution of a linear constant-coefficient system)
    assert residual(A, f, sol.x) == sp.zeros(n, 1)
    assert sp.simplify(sol.x.subs(t, 0)) == sp.Matrix([1] + [0] * (n - 1))
    # sympy's jordan_form as the independent reference for J (up to block order)
    _, J_ref = sp.Matrix(A).jordan_form()
    assert block_signature(sol.D) == block_signature(J_ref)
    assert sol.is_diagonalizable == all(s == 1 for _, s in blocks)
    assert sp.simplify(sol.P * sol.D * sol.P_inv - A) == sp.zeros(n, n)


@pytest.mark.parametrize("defective", [False, True])
def test_complex_pair_repeated_and_defective_in_real_form(defective):
    C = sp.Matrix([[-1, 2], [-2, -1]])  # eigenvalues -1 +- 2i
    E = sp.eye(2) if defective else sp.zeros(2)
    R = sp.Matrix(sp.BlockMatrix([[C, E], [sp.zeros(2), C]]))
    P = sp.Matrix([[1, 1, 0, 0], [0, 1, 1, 0], [0, 0, 1, 1], [1, 0, 0, 2]])
    assert P.det() != 0
    A = P * R * P.inv()
    # P^-1 x0 has a component along the second block (the top of each Jordan chain),
    # so the defective response carries secular terms; x0 = P e1 would have none
    x0 = [1, 0, 0, 0]
    assert (P.inv() * sp.Matrix(x0))[2:, 0] != sp.zeros(2, 1)
    sol = derive.solve(A, x0=x0)
    assert not sol.x.has(sp.I)
    assert sol.verification.ok
    assert sol.is_diagonalizable is (not defective)
    # secular terms: e^{t} x(t) is a polynomial in t, cos 2t and sin 2t, of degree 1
    # in t (t e^{-t} cos 2t, t e^{-t} sin 2t) exactly when the pair is defective
    c, s = sp.cos(2 * t), sp.sin(2 * t)
    degrees = [sp.Poly(sp.expand(sp.powsimp(sp.expand(e * sp.exp(t)))), t, c, s).degree(t) for e in sol.x]
    assert max(degrees) == (1 if defective else 0)
    # reference: scipy.linalg.expm of A t applied to x0 (see tests/reference.py)
    times = (0.4, 1.3, 2.9)
    assert_close(solution_values(sol.x, times), expm_values(A, x0, times))


def test_published_defective_boyce_diprima():
    # Boyce & DiPrima, Elementary Differential Equations and Boundary Value
    # Problems, 10th ed., section 7.8, Example 1 (from memory):
    # x' = [[1, -1], [1, 3]] x has the double eigenvalue r = 2 with the single
    # eigenvector (1, -1); a second solution is x = (1,-1) t e^{2t} + eta e^{2t}
    # with (A - 2I) eta = (1, -1).
    A = sp.Matrix([[1, -1], [1, 3]])
    sol = derive.solve(A)
    assert sol.eigenvalues == (2, 2)
    assert not sol.is_diagonalizable
    assert sol.D == sp.Matrix([[2, 1], [0, 2]])
    v1 = sol.P[:, 0]
    assert v1[0] == -v1[1]
    eta = sol.P[:, 1]
    assert (A - 2 * sp.eye(2)) * eta == v1
    assert any(step.kind == "jordan_chain" for step in sol.steps)
    assert residual(A, None, sol.x) == sp.zeros(2, 1)
    assert sol.x.has(t * sp.exp(2 * t))


def test_published_repeated_diagonalizable_boyce_diprima():
    # Boyce & DiPrima, 10th ed., section 7.3 (symmetric example, from memory):
    # [[0, 1, 1], [1, 0, 1], [1, 1, 0]] has eigenvalues 2, -1, -1 and a
    # two-dimensional eigenspace for -1, so it is diagonalisable.
    A = sp.Matrix([[0, 1, 1], [1, 0, 1], [1, 1, 0]])
    sol = derive.solve(A)
    assert sorted(sol.eigenvalues) == [-1, -1, 2]
    assert sol.is_diagonalizable
    vec_step = next(s for s in sol.steps if s.kind == "eigenvector" and s.eigenvalue == -1)
    assert len(vec_step.basis) == 2 and len(vec_step.free) == 2


def test_zero_eigenvalues_free_integrator():
    # double integrator with a constant push: x1'' = 1, so x1 = t^2/2 from rest
    sol = derive.solve([[0, 1], [0, 0]], [0, 1], x0=[0, 0])
    assert sp.simplify(sol.x[0] - t**2 / 2) == 0
    assert sol.eigenvalues == (0, 0)
    assert not sol.is_diagonalizable
    scal = [s for s in sol.steps if s.kind == "scalar"]
    assert all(s.factor == 1 for s in scal)


def test_casus_irreducibilis_uses_indexed_roots_and_says_why():
    A = sp.Matrix([[0, 1, 0], [0, 0, 1], [1, 3, 0]])  # lambda^3 - 3 lambda - 1
    dec = decompose(A)
    ent = next(s for s in dec.steps if s.kind == "eigenvalues").entries
    assert all(e.form == "indexed root" for e in ent)
    assert "casus irreducibilis" in ent[0].rule
    sol = derive.solve(A, x0=[1, 0, 0])
    assert sol.verification.ok
    # the polynomial-ring check reduces the indexed roots with their cubic: exact
    assert sol.verification.residual_method == "exact"
    # reference: scipy.linalg.expm of A t applied to x0 (see tests/reference.py)
    times = (0.3, 1.1)
    assert_close(solution_values(sol.x, times), expm_values(A, [1, 0, 0], times))


@pytest.mark.slow
def test_irreducible_quintic_verified_numerically_against_scipy():
    # companion matrix of z^5 - z - 1 (irreducible, not solvable by radicals),
    # shifted by -2 so every mode decays: eigenvalues are the roots minus 2
    C = sp.zeros(5)
    for i in range(4):
        C[i + 1, i] = 1
    C[0, 4] = 1
    C[1, 4] = 1
    A = C - 2 * sp.eye(5)
    sol = derive.solve(A, x0=[0, 1, 0, 0, 0])
    assert all(isinstance(e, sp.CRootOf) for e in sol.eigenvalues)
    assert sol.verification.ok
    num = sol.verification.numeric
    assert num is not None and num.ok and num.max_rel_gap < 1e-6
    assert num.method.startswith("scipy")
    # reference outside the program: scipy.linalg.expm of A t applied to x0
    times = (0.5, 1.5)
    assert_close(solution_values(sol.x, times), expm_values(A, [0, 1, 0, 0, 0], times))


def test_radical_cubic_within_the_size_rule():
    # (lambda - 1)(lambda^2 + 1) is reducible; take an irreducible cubic with one
    # real root and small radicals: lambda^3 - 2
    A = sp.Matrix([[0, 1, 0], [0, 0, 1], [2, 0, 0]])
    dec = decompose(A)
    ent = next(s for s in dec.steps if s.kind == "eigenvalues").entries
    assert ent[0].form == "radical"
    assert sp.simplify(ent[0].value**3 - 2) == 0


def test_three_compartments_symbolic_rates_state_conditions():
    k1, k2, k3 = sp.symbols("k1 k2 k3", positive=True)
    A = sp.Matrix([[-k1, 0, 0], [k1, -k2, 0], [0, k2, -k3]])
    sol = derive.solve(A, x0=[1, 0, 0])
    conds = {sp.factor(c.expr) for c in sol.conditions}
    for a, b in ((k1, k2), (k1, k3), (k2, k3)):
        assert (a - b) in conds or (b - a) in conds
    assert residual(A, None, sol.x) == sp.zeros(3, 1)
    assert sol.verification.ok


def test_spring_mass_damper_generic_regime_and_critical_case():
    k, m, c = sp.symbols("k m c", positive=True)
    A = sp.Matrix([[0, 1], [-k / m, -c / m]])
    gen = derive.solve(A, params={k: 4, m: 1, c: 1})
    assert any(sp.expand(cd.expr - (c**2 - 4 * k * m)) == 0 for cd in gen.conditions)
    assert any("complex-conjugate pair" in n for n in gen.notices)
    crit = derive.solve(A, x0=[1, 0], assume=["c^2 = 4*k*m"])
    assert not crit.is_diagonalizable
    assert crit.eigenvalues == (-c / (2 * m), -c / (2 * m))
    assert any(cd.relation == "= 0" for cd in crit.conditions)
    # the textbook critically damped response from rest at x = 1
    wn = c / (2 * m)
    assert sp.simplify(crit.x[0] - (1 + wn * t) * sp.exp(-wn * t)) == 0


def test_six_by_six_defective_rational():
    J = sp.diag(jordan_block(-1, 3), jordan_block(-1, 1), jordan_block(2, 2))
    P = sp.Matrix(
        [
            [1, 0, 1, 0, 0, 0],
            [0, 1, 0, 1, 0, 0],
            [0, 0, 1, 0, 1, 0],
            [0, 0, 0, 1, 0, 1],
            [1, 0, 0, 0, 1, 0],
            [0, 1, 0, 0, 0, 1],
        ]
    )
    assert P.det() != 0
    A = P * J * P.inv()
    f = [1, 0, 0, 0, 0, sp.exp(-t)]
    sol = derive.solve(A, f, x0=[1, 0, 0, 0, 0, 0])
    assert sol.verification.ok
    assert block_signature(sol.D) == block_signature(J)
    # reference: scipy's solve_ivp, DOP853 at 1e-12 (see tests/reference.py)
    times = (0.5, 1.0, 1.5)
    assert_close(solution_values(sol.x, times), ivp_values(A, f, [1, 0, 0, 0, 0, 0], times), rtol=1e-8)


def test_underdamped_regime_gives_sines_and_states_the_regime():
    # common practice: with c^2 < 4 k m the free response of a spring-mass-damper
    # is e^{-c t/(2m)} (cos w t + c/(2 m w) sin w t), w = sqrt(4 k m - c^2)/(2 m)
    k, m, c = sp.symbols("k m c", positive=True)
    A = sp.Matrix([[0, 1], [-k / m, -c / m]])
    sol = derive.solve(A, x0=[1, 0], assume=["c^2 < 4*k*m"])
    assert not sol.x.has(sp.I)
    assert sol.x.has(sp.cos) and sol.x.has(sp.sin)
    w = sp.sqrt(4 * k * m - c**2) / (2 * m)
    expected = sp.exp(-c * t / (2 * m)) * (sp.cos(w * t) + c / (2 * m * w) * sp.sin(w * t))
    assert sp.simplify(sol.x[0] - expected) == 0
    assert any(cd.relation == "< 0" and sp.expand(cd.expr - (c**2 - 4 * k * m)) == 0 for cd in sol.conditions)
    assert sol.verification.ok
    # the overdamped regime: two real exponentials, no sines
    over = derive.solve(A, x0=[1, 0], assume=["c^2 > 4*k*m"])
    assert not over.x.has(sp.sin) and not over.x.has(sp.I)
    assert over.verification.ok
    # reference: scipy.linalg.expm at k = 1, m = 1, c = 3 (c^2 > 4 k m)
    vals = {k: 1, m: 1, c: 3}
    times = (0.5, 2.0)
    assert_close(solution_values(over.x.subs(vals), times), expm_values(A.subs(vals), [1, 0], times))


def test_regime_with_a_switched_input_puts_the_root_back():
    # a step input goes the interval-by-interval route; the placeholder for the
    # square root of the discriminant must not reach the result there either
    k, c = sp.symbols("k c", positive=True)
    A = sp.Matrix([[0, 1], [-k, -c]])  # unit mass
    sol = derive.solve(A, [0, sp.Heaviside(t - 1)], x0=[0, 0], assume=["c^2 < 4*k"])
    assert sol.verification.ok
    assert sol.x.free_symbols <= {t, k, c}
    assert all(e.free_symbols <= {k, c} for e in sol.eigenvalues)
    assert any(cd.relation == "< 0" and sp.expand(cd.expr - (c**2 - 4 * k)) == 0 for cd in sol.conditions)
    # after the step, the unit step response of x'' + c x' + k x = u(t - 1) from rest
    # (common practice): 1/k - e^{-c s/2} (cos w s + c/(2w) sin w s)/k, s = t - 1
    w = sp.sqrt(4 * k - c**2) / 2
    s_ = t - 1
    step = (1 - sp.exp(-c * s_ / 2) * (sp.cos(w * s_) + c / (2 * w) * sp.sin(w * s_))) / k
    after = sol.x[0].args[-1][0]
    assert sp.simplify(sp.expand_trig(after - step)) == 0


@pytest.mark.parametrize(
    "A",
    [
        sp.Matrix([[1, -2], [4, -3]]),  # -1 +- 2i: checked exactly over Q(i)
        sp.Matrix([[1, 1], [1, -1]]),  # +-sqrt 2: exactly over Q(sqrt 2)
        sp.Matrix([[0, 1, 0], [0, 0, 1], [1, 3, 0]]),  # indexed roots: numerically
    ],
)
def test_similarity_check_catches_a_wrong_instantiation(A):
    from derive.spectral import _similarity_check, small_field

    dec = decompose(A)
    assert _similarity_check(dec.A, dec.P, dec.J, dec.P_inv, {}, small_field(dec.P, dec.J, dec.P_inv, dec.A))
    # the eigenvalues of D swapped against the columns of P: a slip the check must see
    n = A.rows
    perm = list(range(n))
    perm[0], perm[1] = perm[1], perm[0]
    J_bad = sp.diag(*[dec.J[p, p] for p in perm])
    assert not _similarity_check(dec.A, dec.P, J_bad, dec.P_inv, {}, small_field(dec.P, J_bad, dec.P_inv, dec.A))


_Q5 = sp.Poly(sp.Symbol("x") ** 5 - sp.Symbol("x") - 1)


@pytest.mark.parametrize(
    "build",
    [
        # rational coefficients, two roots of one quintic, a denominator in one root
        lambda r, s: (3 * r**7 + r * s**6 - 2) / (r**2 + 1),
        # powers beyond the degree in both roots, no denominator
        lambda r, s: sp.Rational(5, 3) * r**9 * s**5 - r**5 + 7,
        # a radical in the coefficients takes the root-by-root route
        lambda r, s: (sp.sqrt(2) * r**6 + 1) / (r - 3),
    ],
)
def test_reduce_roots_keeps_the_value_and_cuts_the_degree(build):
    """reduce_roots must preserve the value of its argument exactly while every power
    of an indexed root drops below the degree of its minimal polynomial.  The value is
    checked at 50 digits with mpmath's polynomial roots (an independent route)."""
    from derive.expoly import reduce_roots

    r, s = sp.CRootOf(_Q5, 0), sp.CRootOf(_Q5, 1)
    e = sp.expand(build(r, s))
    out = reduce_roots(e)
    for root in (r, s):
        z = sp.Dummy("z")
        assert sp.Poly(out.xreplace({root: z}), z).degree() < 5
    # the roots from mpmath.polyroots at 50 digits, each matched to its index by sympy's
    # 15-digit value (sp.N of the whole expression refines the roots for minutes)
    import mpmath

    with mpmath.workdps(50):
        found = mpmath.polyroots([1, 0, 0, 0, -1, -1], maxsteps=200, extraprec=200)
        value = {}
        for root in (r, s):
            guess = complex(root.evalf(15))
            value[root] = min(found, key=lambda z: abs(z - guess))
        syms = sp.symbols("u v")
        num = sp.lambdify(syms, (e - out).xreplace(dict(zip((r, s), syms))), "mpmath")
        assert abs(num(value[r], value[s])) < mpmath.mpf("1e-40")


@pytest.mark.parametrize(
    "A",
    [
        sp.Matrix([[2, 1], [1, 2]]),  # distinct rational
        sp.Matrix([[3, 1, 0], [0, 3, 0], [0, 0, -1]]),  # a Jordan block
        sp.Matrix([[0, 1], [-sp.Symbol("k"), -1 - sp.Symbol("k")]]),  # roots -1 and -k, in QQ(k)
    ],
)
def test_a_wrong_inverse_fails_the_exact_check_over_k(A, monkeypatch):
    """All eigenvalues in K: P^-1 from the left vectors is compared with elimination on
    [P | I] and P J P^-1 with A, in K.  A slip in the left vectors must stop the solve."""
    import derive.spectral as spectral
    from derive.errors import VerificationError

    dec = spectral.decompose(A)
    assert dec.steps[-1].ok
    assert sp.simplify(dec.P * dec.J * dec.P_inv - A) == sp.zeros(*A.shape)
    real_to_matrix = spectral._to_matrix

    def slipped(M, fld, lam=None):
        out = real_to_matrix(M, fld, lam)
        if M.shape == (1, A.rows) or (M.shape[0] < A.rows and M.shape[1] == A.rows):  # the left rows W
            out = out + sp.ImmutableMatrix(M.shape[0], M.shape[1], lambda i, j: 1 if (i, j) == (0, 0) else 0)
        return out

    monkeypatch.setattr(spectral, "_to_matrix", slipped)
    with pytest.raises(VerificationError, match="P D P\\^-1 = A"):
        spectral.decompose(A)


@pytest.mark.parametrize(
    "A",
    [
        sp.Matrix([[-sp.Symbol("a"), 0, 0], [sp.Symbol("a"), -sp.Symbol("b"), 0], [0, sp.Symbol("b"), -sp.Symbol("c")]]),
        sp.Matrix([[0, 1], [-sp.Symbol("k"), -sp.Symbol("c")]]),
        sp.Matrix([[0, 1, 0], [-sp.Symbol("k"), -1, 0], [0, 0, -sp.Symbol("k")]]),
    ],
)
def test_distinct_eigenvalue_conditions_are_the_factors_of_the_discriminant(A):
    """The conditions for distinct eigenvalues are built from the discriminants and
    resultants of the factors; sympy's discriminant of the whole characteristic
    polynomial, factored, is the independent reference (common practice: the
    discriminant vanishes exactly where two roots meet)."""
    lam = sp.Symbol("lambda")
    dec = decompose(A)
    got = {c.expr for c in dec.conditions if "distinct" in c.reason}
    ref = set()
    for f in sp.Mul.make_args(sp.factor(sp.discriminant((A - lam * sp.eye(A.rows)).det(), lam))):
        base = f.base if f.is_Pow else f
        if base.free_symbols and not (base.is_positive or base.is_negative or base.is_nonzero):
            base = sp.expand(base)
            ref.add(-base if base.could_extract_minus_sign() else base)
    assert got == ref


_chain_entry = st.tuples(
    st.fractions(min_value=-6, max_value=6, max_denominator=12),
    st.fractions(min_value=-6, max_value=6, max_denominator=12),
    st.fractions(min_value=-6, max_value=6, max_denominator=12),
)


@settings(max_examples=60, deadline=None)
@given(st.lists(st.lists(_chain_entry, min_size=3, max_size=3), min_size=1, max_size=2), st.sampled_from([2, 3]))
def test_generic_chain_scaling_in_the_field_matches_the_expression_route(chain, degree):
    """The scaling of a generic-root chain worked on the coefficients in Q[theta]/(q)
    must give exactly the vectors of the expression route (_scale_chain)."""
    from sympy.polys.agca.extensions import FiniteExtension
    from sympy.polys.matrices import DomainMatrix

    from derive.spectral import _TH, _Field, _scale_chain, _scale_generic_chain, _to_matrix

    q = sp.Poly(_TH**3 - 3 * _TH - 1 if degree == 3 else _TH**2 + 2 * _TH + 5, _TH, domain=sp.QQ)
    F = FiniteExtension(q)
    fld = _Field(dom=F, K=sp.QQ, q=q, root=None)
    vecs = []
    for v in chain:
        entries = [F.convert(sum(sp.Rational(c.numerator, c.denominator) * _TH**k for k, c in enumerate(e[:degree]))) for e in v]
        vecs.append(DomainMatrix([[x] for x in entries], (3, 1), F))
    if all(not x for v in vecs for row in v.to_dense().rep.to_ddm() for x in row):
        return
    got = [_to_matrix(v, fld) for v in _scale_generic_chain(vecs)]
    ref = _scale_chain([_to_matrix(v, fld) for v in vecs], _TH)
    assert got == ref
