"""The model forms on the sheet: the reduction step, the modal step and their agreement with outside values."""

from __future__ import annotations

import numpy as np
import pytest
import scipy.linalg
import sympy as sp

import derive
from derive.casefile import loads_case
from derive.modal import form_steps, modal_coordinates
from derive.render import render
from derive.second_order import solve_second_order

m, k = sp.symbols("m k", positive=True)

TWO_MASSES = """
[parameters.m]
assume = ["positive"]
[parameters.k]
assume = ["positive"]
[system]
mass = [["m", 0], [0, "m"]]
stiffness = [["2*k", "-k"], ["-k", "2*k"]]
[initial]
values = [1, 0, 0, 0]
"""


def steps_of(sol: derive.Solution, kind: str) -> list:
    return [s for s in sol.steps if s.kind == kind]


def test_reduction_rows_reproduce_a_and_f() -> None:
    case = loads_case(
        "[parameters.w]\nassume = [\"positive\"]\n"
        "[system]\nequations = [\"x1'' = -w^2*x1 + x2 + sin(t)\", \"x2' = x1 - 2*x2\"]\n"
    )
    (red,) = form_steps(case.system)
    states = case.system.states
    assert [s.name for s in states] == ["x1", "x1'", "x2"]
    assert [d[0] for d in red.definitions] == list(states)
    assert [(d[1].name, d[2]) for d in red.definitions] == [("x1", 0), ("x1", 1), ("x2", 0)]
    rows = dict(red.rows)
    A = sp.Matrix([[sp.diff(rows[si], sj) for sj in states] for si in states])
    f = sp.Matrix([rows[si].xreplace({sj: 0 for sj in states}) for si in states])
    assert A == case.system.A == red.A
    assert f == case.system.f == red.f
    sol = derive.solve_case(loads_case("[system]\nequations = [\"y'' + 3*y' + 2*y = exp(-t)\"]\n"))
    assert [s.kind for s in sol.steps[:3]] == ["equations", "reduction", "charpoly"]


def test_first_order_equations_have_no_reduction_step() -> None:
    sol = derive.solve_case(loads_case("[system]\nequations = [\"x' = -x\"]\n[initial]\nvalues = [1]\n"))
    assert steps_of(sol, "reduction") == [] and steps_of(sol, "modal") == []


def test_second_order_reduction_is_the_block_form() -> None:
    sol = derive.solve_case(loads_case(TWO_MASSES))
    (red,) = steps_of(sol, "reduction")
    M, C, K, F = red.second_order
    assert M == sp.diag(m, m) and C == sp.zeros(2, 2) and F == sp.zeros(2, 1)
    n = 2
    block = sp.zeros(n, n).row_join(sp.eye(n)).col_join((-M.inv() * K).row_join(-M.inv() * C))
    assert (block - red.A).applyfunc(sp.simplify) == sp.zeros(4, 4)
    states = sol.system.states
    rows = dict(red.rows)
    assert sp.Matrix([[sp.diff(rows[a], b) for b in states] for a in states]) == sol.system.A
    assert [(d[0].name, d[2]) for d in red.definitions] == [("q1", 0), ("q2", 0), ("q1'", 1), ("q2'", 1)]


def test_two_equal_masses_between_three_springs_on_the_sheet() -> None:
    """omega^2 = k/m (in phase) and 3k/m (out of phase).

    Source: W. T. Thomson, Theory of Vibration with Applications, the chapter on
    systems with two degrees of freedom (from memory).
    """
    sol = derive.solve_case(loads_case(TWO_MASSES))
    (modal,) = steps_of(sol, "modal")
    md = modal.modes
    assert md.omega_squared == (k / m, 3 * k / m)
    assert [e.name for e in modal.eta] == ["eta_1", "eta_2"]
    omega = sp.Symbol("omega", positive=True)
    assert sp.expand(modal.frequency_equation - ((2 * k - m * omega**2) ** 2 - k**2)) == 0
    P = md.shapes
    assert (P.T * modal.M * P - sp.eye(2)).applyfunc(sp.simplify) == sp.zeros(2, 2)
    text = render(sol, "text")
    assert "Modes of the second-order model" in text and "K phi = omega^2 M phi" in text
    assert "η_2'' + 3 k/m η_2 = 0" in text


def test_three_mass_fixed_free_chain_against_scipy_eigh() -> None:
    """Three unit masses on springs 2, 1, 1 from a fixed support, free at the end (a scenario of our own).

    Reference: scipy.linalg.eigh(K, M), the generalized symmetric eigensolver
    (LAPACK), which normalises the shapes to phi^T M phi = 1 as the sheet does.
    """
    M = sp.eye(3)
    K = sp.Matrix([[3, -1, 0], [-1, 2, -1], [0, -1, 1]])
    case = loads_case(
        "[system]\nmass = [[1, 0, 0], [0, 1, 0], [0, 0, 1]]\n"
        "stiffness = [[3, -1, 0], [-1, 2, -1], [0, -1, 1]]\n"
    )
    red, modal = form_steps(case.system)
    assert red.second_order[0] == M and red.second_order[2] == K
    md = modal.modes
    assert md.omega_squared == (2 - sp.sqrt(3), 2, 2 + sp.sqrt(3))
    values, vectors = scipy.linalg.eigh(np.array(K, dtype=float), np.array(M, dtype=float))
    ours = [complex(sp.N(w, 30)) for w in md.omega_squared]
    assert max(abs(z.imag) for z in ours) < 1e-20
    assert [z.real for z in ours] == pytest.approx(list(values), rel=1e-12)
    shapes = np.array([[complex(sp.N(e, 30)).real for e in row] for row in md.shapes.tolist()])
    for r in range(3):
        sign = np.sign(shapes[:, r] @ vectors[:, r])
        assert shapes[:, r] == pytest.approx(sign * vectors[:, r], abs=1e-10)


def test_proportional_damping_gives_ratios_and_oscillators() -> None:
    """zeta_r = (alpha + beta omega_r^2) / (2 omega_r) for C = alpha M + beta K (common practice);
    the result satisfies M q'' + C q' + K q = F by substitution."""
    M = sp.diag(1, 1)
    K = sp.Matrix([[2, -1], [-1, 2]])
    C = sp.Rational(1, 5) * M + sp.Rational(1, 10) * K
    sol = solve_second_order(M, C, K, F=["sin(t)", 0], q0=[0, 0], v0=[0, 0])
    (modal,) = steps_of(sol, "modal")
    assert modal.rayleigh == (sp.Rational(1, 5), sp.Rational(1, 10))
    md = modal.modes
    assert md.omega_squared == (1, 3)
    assert md.damping_ratios == (sp.Rational(3, 20), sp.factor(sp.Rational(1, 2) / (2 * sp.sqrt(3))))
    t = sol.t
    q = sol.x[:2, :]
    r = M * q.diff(t, 2) + C * q.diff(t) + K * q - sp.Matrix([sp.sin(t), 0])
    assert all(sp.simplify(e) == 0 for e in r)
    text = render(sol, "text")
    assert "zeta_r" in text and "η_1'' + 3/10 η_1' + η_1 = sqrt(2) sin(t)/2" in text


def test_nonproportional_damping_has_no_modal_step() -> None:
    sol = solve_second_order(sp.eye(2), sp.diag(1, 0), sp.Matrix([[2, -1], [-1, 2]]), q0=[1, 0], v0=[0, 0])
    assert steps_of(sol, "reduction") and not steps_of(sol, "modal")


def test_a_relation_that_changes_a_hides_the_second_order_steps() -> None:
    """With k = c^2/(4m) put in, M, C, K as written no longer give A: the steps would mislead."""
    case = loads_case(
        "[parameters.m]\nassume = [\"positive\"]\n[parameters.k]\nassume = [\"positive\"]\n"
        "[parameters.c]\nassume = [\"positive\"]\n"
        "[system]\nmass = [[\"m\"]]\ndamping = [[\"c\"]]\nstiffness = [[\"k\"]]\n[initial]\nvalues = [1, 0]\n"
    )
    plain = derive.solve_case(case)
    assert steps_of(plain, "reduction")
    critical = derive.solve_case(case, assume=["c^2 = 4*k*m"])
    assert critical.ok and not steps_of(critical, "reduction") and not steps_of(critical, "modal")


def test_modal_coordinates_avoid_the_users_names() -> None:
    system = loads_case("[system]\nequations = [\"eta' = -eta\"]\n").system
    assert [s.name for s in modal_coordinates(system, 2)] == ["xi_1", "xi_2"]
    system = loads_case("[system]\nequations = [\"y' = -y\"]\n").system
    assert [s.name for s in modal_coordinates(system, 1)] == ["eta_1"]


def test_a_cubic_frequency_equation_is_stated_without_its_modes() -> None:
    case = loads_case(
        "[system]\nmass = [[2, 0, 0], [0, 1, 0], [0, 0, 1]]\nstiffness = [[5, -2, 0], [-2, 3, -1], [0, -1, 1]]\n"
    )
    _, modal = form_steps(case.system)
    assert modal.modes is None
    omega = sp.Symbol("omega", positive=True)
    assert sp.degree(modal.frequency_equation, omega) == 6


def test_the_sheet_says_what_the_steps_could_not_show() -> None:
    """A modal step without modes and a Laplace step that disagrees or did not run, in plain text."""
    from dataclasses import replace

    from model_samples import model_step_samples
    from test_render import make_solution

    samples = model_step_samples()
    steps = (
        replace(samples["modal"], modes=None),
        replace(samples["laplace_check"], agrees=False),
        replace(samples["laplace_check"], ran=False, reason="it did not finish within 5 s"),
    )
    text = render(make_solution(steps), "text")
    flat = " ".join(text.split())
    assert "its roots and mode shapes are not written out here" in flat
    assert "the two routes disagree" in flat
    assert "This check was not run: it did not finish within 5 s." in flat
