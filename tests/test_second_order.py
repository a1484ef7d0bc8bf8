"""M q'' + C q' + K q = F: the block first-order form, the API, the case-file keys and the modes."""

from __future__ import annotations

import pytest
import sympy as sp

import derive
from derive.casefile import loads_case
from derive.errors import CaseFileError, InputError
from derive.second_order import block_form, modes, solve_second_order

m, k = sp.symbols("m k", positive=True)


def residual_zero(expr: sp.Expr, t: sp.Symbol) -> bool:
    """Exactly zero, or (for roots of cubics) below 1e-30 at three instants to 40 digits."""
    if sp.simplify(expr) == 0:
        return True
    return all(abs(sp.N(expr.subs(t, at), 40)) < 1e-30 for at in (0, sp.Rational(7, 10), 3))


def test_two_equal_masses_three_springs() -> None:
    """omega^2 = k/m and 3k/m, in-phase and out-of-phase modes.

    Source: W. T. Thomson, Theory of Vibration with Applications, chapter on
    systems with two degrees of freedom (from memory).
    """
    M = sp.Matrix([[m, 0], [0, m]])
    K = sp.Matrix([[2 * k, -k], [-k, 2 * k]])
    md = modes(M, K)
    assert md.omega_squared == (k / m, 3 * k / m)
    assert md.frequencies == (sp.sqrt(k / m), sp.sqrt(3 * k / m))
    P = md.shapes
    assert sp.simplify(P.T * M * P - sp.eye(2)) == sp.zeros(2, 2)
    assert sp.simplify(P.T * K * P - sp.diag(k / m, 3 * k / m)) == sp.zeros(2, 2)
    assert P[0, 0] == P[1, 0] and P[0, 1] == -P[1, 1]
    assert md.rayleigh == (0, 0) and md.damping_ratios == (0, 0)


def test_three_mass_fixed_free_chain() -> None:
    """Equal masses m and springs k, fixed at one end: omega^2 m/k = 0.1981, 1.555, 3.247.

    Source: the closed form omega_j = 2 sqrt(k/m) sin((2j - 1) pi / 14) of a
    uniform fixed-free chain of three masses, e.g. A. K. Chopra, Dynamics of
    Structures, chapter on free vibration of multi-degree-of-freedom systems
    (from memory).
    """
    K = sp.Matrix([[2, -1, 0], [-1, 2, -1], [0, -1, 1]])
    md = modes(sp.eye(3), K)
    got = [complex(sp.N(w, 30)).real for w in md.omega_squared]
    expected = [float(4 * sp.sin((2 * j - 1) * sp.pi / 14) ** 2) for j in (1, 2, 3)]
    assert got == pytest.approx(expected, rel=1e-12)
    assert expected == pytest.approx([0.1981, 1.555, 3.247], abs=1e-3)
    P = md.shapes.evalf(30)
    assert max(abs(sp.N(e, 30)) for e in P.T * P - sp.eye(3)) < 1e-25


def test_rayleigh_damping_ratios() -> None:
    """zeta_i = (alpha + beta omega_i^2) / (2 omega_i) for C = alpha M + beta K (common practice)."""
    M = sp.diag(2, 1)
    K = sp.Matrix([[6, -2], [-2, 4]])
    a, b = sp.Rational(1, 10), sp.Rational(1, 20)
    md = modes(M, K, a * M + b * K)
    assert md.rayleigh == (a, b)
    for w2, zeta, i in zip(md.omega_squared, md.damping_ratios or (), range(2)):
        phi = md.shapes[:, i]
        assert sp.simplify((phi.T * (a * M + b * K) * phi)[0] - 2 * zeta * sp.sqrt(w2)) == 0
    assert modes(M, K, sp.Matrix([[1, 0], [0, 0]])).damping_ratios is None


def test_repeated_frequencies_get_m_orthonormal_shapes() -> None:
    M = sp.diag(1, 2, 3)
    md = modes(M, 5 * M)
    assert md.omega_squared == (5, 5, 5)
    assert md.shapes.T * M * md.shapes == sp.eye(3)


def test_block_form_refuses_a_singular_mass() -> None:
    with pytest.raises(InputError) as err:
        block_form(sp.Matrix([[1, 1], [1, 1]]), sp.zeros(2, 2), sp.eye(2), sp.zeros(2, 1))
    assert "singular" in err.value.message


def test_damped_forced_two_mass_by_substitution() -> None:
    """The result satisfies M q'' + C q' + K q = F, checked with sympy on its own."""
    M = sp.eye(2)
    C = sp.diag(4, 4)
    K = sp.Matrix([[2, -1], [-1, 2]])
    sol = solve_second_order(M, C, K, F=["sin(t)", 0], q0=[1, 0], v0=[0, 1])
    t = sol.t
    assert sol.ok and [s.name for s in sol.system.states] == ["q1", "q2", "q1'", "q2'"]
    q = sol.x[:2, :]
    r = M * q.diff(t, 2) + C * q.diff(t) + K * q - sp.Matrix([sp.sin(t), 0])
    assert all(residual_zero(e, t) for e in r)
    assert all(residual_zero(e, t) for e in sol.x[2:, :] - q.diff(t))
    assert all(abs(sp.N(v - w, 40)) < 1e-30 for v, w in zip(sol.x.subs(t, 0), [1, 0, 0, 1]))


def test_symbolic_undamped_two_mass_by_substitution() -> None:
    M = sp.diag(m, m)
    K = sp.Matrix([[2 * k, -k], [-k, 2 * k]])
    sol = solve_second_order(M, None, K, q0=[1, 0], v0=[0, 0], params=[m, k])
    t = sol.t
    q = sol.x[:2, :]
    assert sp.simplify(M * q.diff(t, 2) + K * q) == sp.zeros(2, 1)
    assert sp.simplify(q.subs(t, 0)) == sp.Matrix([1, 0])


def test_api_refusals() -> None:
    with pytest.raises(InputError, match="give both q0 and v0"):
        solve_second_order([[1]], None, [[1]], q0=[1])
    with pytest.raises(InputError) as err:
        solve_second_order([[1, 0], [0, 1]], [[1]], [[1, 0], [0, 1]])
    assert err.value.key == "C"
    with pytest.raises(InputError) as err:
        solve_second_order([[1]], None, [["t"]])
    assert err.value.key == "K"


CASE = """
[parameters.m]
assume = ["positive"]
[parameters.k]
assume = ["positive"]
[system]
states = ["a", "b"]
mass = [["m", 0], [0, "m"]]
stiffness = [["2*k", "-k"], ["-k", "2*k"]]
{extra}
[initial]
a = 1
b = 0
"a'" = 0
"b'" = 0
"""


def test_case_file_keys_match_the_api() -> None:
    case = loads_case(CASE.format(extra='damping = [[0, 0], [0, 0]]\nforce = ["sin(t)", 0]'))
    assert [s.name for s in case.system.states] == ["a", "b", "a'", "b'"]
    mm, kk = (p.symbol for p in case.system.params)
    tt = case.system.t
    A = sp.Matrix([[0, 0, 1, 0], [0, 0, 0, 1], [-2 * kk / mm, kk / mm, 0, 0], [kk / mm, -2 * kk / mm, 0, 0]])
    assert case.system.A == A
    assert case.system.f == sp.Matrix([0, 0, sp.sin(tt) / mm, 0])
    assert case.system.x0 == sp.Matrix([1, 0, 0, 0])
    assert any("first-order form" in n for n in case.notices)


@pytest.mark.parametrize(
    ("text", "key", "says"),
    [
        ('[system]\nstiffness = [[1]]\nmatrix = [[1]]\n', "system.stiffness", "needs system.mass"),
        ('[system]\nmass = [[1]]\n', "system.stiffness", "expected both"),
        ('[system]\nmass = [[1]]\nmatrix = [[1]]\n', "system", "has both matrix and mass"),
        ('[system]\nmass = [[1, 2], [2, 4]]\nstiffness = [[1, 0], [0, 1]]\n', "system.mass", "singular"),
        ('[system]\nmass = [[1]]\nstiffness = [[1, 0], [0, 1]]\n', "system.stiffness", "expected 1"),
        ('[system]\nmass = [[1]]\nstiffness = [[1]]\nforce = [1, 2]\n', "system.force", "has 2 entries"),
        ('[system]\nmass = [[1]]\nstiffness = [[1]]\nforcing = [1]\n', "system.forcing", "system.force"),
        ('[system]\nmass = [["t"]]\nstiffness = [[1]]\n', "system.mass[0][0]", "depends on t"),
    ],
)
def test_case_file_refusals(text: str, key: str, says: str) -> None:
    with pytest.raises(CaseFileError) as err:
        loads_case(text, source="osc.toml")
    assert err.value.key == key and err.value.file == "osc.toml"
    assert says in err.value.message, err.value.message


def test_case_file_solves_and_verifies() -> None:
    case = loads_case(CASE.format(extra=""))
    sol = derive.solve_case(case)
    assert sol.ok
    t = sol.t
    q = sol.x[:2, :]
    mm, kk = (p.symbol for p in case.system.params)
    M, K = sp.diag(mm, mm), sp.Matrix([[2 * kk, -kk], [-kk, 2 * kk]])
    assert sp.simplify(M * q.diff(t, 2) + K * q) == sp.zeros(2, 1)
