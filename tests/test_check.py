"""Tests for checking a hand derivation (derive.check, derive.claimfile, the check command).

Reference for the method under test: common practice (substitution check: a
claimed eigenpair, modal matrix, inverse or solution is right exactly when it
satisfies its defining equation).  The expected results below follow from
that definition by hand; no outside worked example is used.  The scenarios in
tests/data/claims/ are invented for these tests.
"""

from __future__ import annotations

import doctest
import json
import re
import shutil
import subprocess
from pathlib import Path

import pytest
import sympy as sp
from hypothesis import HealthCheck, assume, given, settings
from hypothesis import strategies as st

import importlib

check_module = importlib.import_module("derive.check")  # the module: derive.check is the function
import derive.claimfile as claimfile_module
from derive.casefile import load_case, loads_case
from derive.check import CAUTION, STEP_ORDER, CheckReport, check
from derive.documents.check_report import render_check, write_check_outputs
from derive.claimfile import load_claim, loads_claim, read_claim
from derive.errors import CaseFileError, DeriveError, InputError

DATA = Path(__file__).parent / "data" / "claims"
t = sp.Symbol("t", real=True)


def _case_for(claim_name: str):
    return load_case(DATA / f"{claim_name.split('_')[0]}.case.toml")


def _run(claim_name: str) -> CheckReport:
    case = _case_for(claim_name)
    return check(**load_claim(DATA / f"{claim_name}.claim.toml", case=case))


def _item(report: CheckReport, name: str):
    found = [it for it in report.items if it.name == name]
    assert len(found) == 1, [it.name for it in report.items]
    return found[0]


# ---------------------------------------------------------------------------
# The independent reference: sympy's own routines, never derive's zero test


def _num(e) -> complex:
    return complex(sp.N(e, 30))


def _small(values, tol: float = 1e-18) -> bool:
    return all(abs(_num(v)) < tol for v in values)


def _confirmed(report: CheckReport, item) -> bool:
    """Does sympy agree with the item's claim?  Parameters get fixed positive values,
    constants too; sympy's Matrix.eigenvals, det, diff and evalf (30 digits) decide, at
    t = 3/10, 7/5 and 13/4 for the solution items (a step before 13/4 is crossed)."""
    params = {s: sp.Rational(7 + k, 3) for k, s in enumerate(sorted(report.A.free_symbols | report.f.free_symbols - {report.t}, key=str))}
    params.update({c: sp.Rational(k + 2, 5) * (-1) ** k for k, c in enumerate(report.constants)})
    A = report.A.xreplace(params)
    n = A.rows
    claimed = item.claimed.xreplace(params) if item.claimed is not None else None
    if item.step == "eigenvalues":
        if claimed.rows != n:
            return False
        want = sorted((_num(k) for k, m in A.eigenvals().items() for _ in range(m)), key=lambda z: (round(z.real, 12), round(z.imag, 12)))
        got = sorted((_num(v) for v in claimed), key=lambda z: (round(z.real, 12), round(z.imag, 12)))
        return all(abs(a - b) < 1e-18 for a, b in zip(want, got))
    if item.step == "eigenvectors" and item.name.endswith("independent"):
        import numpy as np

        return np.linalg.matrix_rank(np.array(claimed.evalf(20).tolist(), dtype=complex)) == claimed.cols
    if item.step == "eigenvectors":  # A v parallel to v and v nonzero: every 2x2 minor of [A v, v] vanishes
        Av = A * claimed
        return not _small(claimed) and _small([Av[i] * claimed[j] - Av[j] * claimed[i] for i in range(n) for j in range(n)])
    if item.step == "P":
        D = next((it.claimed for it in report.items if it.step == "D"), None)
        if abs(_num(claimed.det())) < 1e-18:
            return False
        if D is not None:
            return _small(A * claimed - claimed * D.xreplace(params))
        M = claimed.inv() * A * claimed  # must be diagonal or a Jordan matrix
        chain = [M[i, i + 1] * (M[i, i + 1] - 1) for i in range(n - 1)]
        chain += [M[i, i + 1] * (M[i, i] - M[i + 1, i + 1]) for i in range(n - 1)]
        return _small([M[i, j] for i in range(n) for j in range(n) if j not in (i, i + 1)] + chain)
    if item.step == "D":
        want = sorted((_num(k) for k, m in A.eigenvals().items() for _ in range(m)), key=lambda z: (round(z.real, 12), round(z.imag, 12)))
        got = sorted((_num(claimed[i, i]) for i in range(n)), key=lambda z: (round(z.real, 12), round(z.imag, 12)))
        off = [claimed[i, j] for i in range(n) for j in range(n) if j not in (i, i + 1)]
        return _small(off) and all(abs(a - b) < 1e-18 for a, b in zip(want, got))
    if item.step == "P_inv":
        P = next(it.claimed for it in report.items if it.step == "P").xreplace(params)
        return _small(P * claimed - sp.eye(n))
    x, tt = claimed, report.t
    if item.name.endswith("x' = A x + f"):
        r = x.diff(tt) - A * x - report.f.xreplace(params)
        return _small([e.subs(tt, v) for e in r for v in (sp.Rational(3, 10), sp.Rational(7, 5), sp.Rational(13, 4))])
    if item.name.endswith("independent constants"):
        if len(report.constants) != n:
            return False
        J = item.claimed.jacobian(sp.Matrix(report.constants)).xreplace(params)
        return abs(_num(J.det().subs(tt, sp.Rational(3, 10)))) > 1e-18
    if item.name.endswith("x(t0) = x0"):
        return _small(x.subs(tt, report.t0) - report.x0.xreplace(params))
    raise AssertionError(f"no reference for {item.name}")


def _reference_agrees(report: CheckReport) -> bool:
    """Every item's verdict is the reference's."""
    return all(_confirmed(report, it) == it.ok for it in report.items)


# ---------------------------------------------------------------------------
# Data-driven: one claim file per scenario, with the expected first wrong step

# claim file -> (first wrong step, failing item, phrase in its detail); None: all pass
CLAIMS: dict[str, tuple[str, str, str] | None] = {
    "tanks_ok": None,
    "tanks_recombined": None,
    "tanks_pinv_sign": ("P_inv", "P_inv", "the right value is P^-1 = [[1/2, 1/2], [1/2, -1/2]]"),
    "tanks_order": ("P", "P", "column order does not match"),
    "tanks_no_particular": ("general solution", "general solution: x' = A x + f", "particular solution is missing"),
    "tanks_dependent": ("general solution", "general solution: independent constants", "1 free constant (c1)"),
    "tanks_sum": ("general solution", "general solution: independent constants", "not independent"),
    "rc_ok": None,
    "rc_constants_slip": ("IVP solution", "IVP solution: x(t0) = x0", "x(0) - x0 = (-1/6, 1/6)"),
    "rc_integrating_factor": ("IVP solution", "IVP solution: x' = A x + f", "integrating factor"),
    "spring_ok": None,
    "spring_wrong_frequency": ("general solution", "general solution: x' = A x + f", "part with the constants"),
}


def test_every_claim_file_has_an_expectation() -> None:
    on_disk = {p.name[: -len(".claim.toml")] for p in DATA.glob("*.claim.toml")}
    assert on_disk == set(CLAIMS)


@pytest.mark.parametrize("name", sorted(CLAIMS))
def test_claim_file(name: str) -> None:
    report = _run(name)
    expected = CLAIMS[name]
    assert _reference_agrees(report), [(it.name, it.ok) for it in report.items if _confirmed(report, it) != it.ok]
    if expected is None:
        assert report.ok, [(it.name, it.detail) for it in report.items if not it.ok]
        assert report.first_failure is None
        assert report.exit_code == 0
        return
    step, item, phrase = expected
    assert not report.ok and report.exit_code == 1
    first = report.first_failure
    assert first is not None
    assert (first.step, first.name) == (step, item)
    assert phrase in first.detail
    # Every item of an earlier step passed: the slip really is the first wrong step.
    earlier = [it for it in report.items if STEP_ORDER.index(it.step) < STEP_ORDER.index(step)]
    assert all(it.ok for it in earlier)


def test_right_solution_is_stated_for_a_failed_ivp() -> None:
    first = _run("rc_constants_slip").first_failure
    assert first is not None and first.expected is not None
    expected = sp.Matrix([(sp.exp(-t) + sp.exp(-3 * t)) / 2, (sp.exp(-t) - sp.exp(-3 * t)) / 2])
    got = first.expected.subs({s: t for s in first.expected.free_symbols if s.name == "t"})
    assert (sp.Matrix(got) - expected).applyfunc(sp.simplify) == sp.zeros(2, 1)


def test_ode_passes_while_initial_values_fail() -> None:
    report = _run("rc_constants_slip")
    assert _item(report, "IVP solution: x' = A x + f").ok
    assert not _item(report, "IVP solution: x(t0) = x0").ok


def test_sum_of_constants_names_the_lost_direction() -> None:
    first = _run("tanks_sum").first_failure
    assert first is not None
    assert "direction (1, -1)" in first.detail
    assert first.residual == 0


# ---------------------------------------------------------------------------
# The API with sympy objects: equivalent forms pass

A2 = sp.Matrix([[1, 2], [2, 1]])  # eigenvalues 3 (1, 1) and -1 (1, -1)


def test_equivalent_forms_pass() -> None:
    c1, c2, K = sp.symbols("c1 c2 K")
    report = check(
        A2,
        t=t,
        eigenvalues=[-1, 3],
        eigenvectors=[[-2, 2], [-2, -2]],  # aligned with the eigenvalues, scaled by -2
        P=[[1, 1], [-1, 1]],
        D=[[-1, 0], [0, 3]],
        P_inv=[[sp.Rational(1, 2), -sp.Rational(1, 2)], [sp.Rational(1, 2), sp.Rational(1, 2)]],
        x=[5 * K * sp.exp(3 * t) + c1 * sp.exp(-t), 5 * K * sp.exp(3 * t) - c1 * sp.exp(-t)],
    )
    assert report.ok, [(it.name, it.detail) for it in report.items if not it.ok]
    assert _reference_agrees(report)
    assert set(report.constants) == {c1, K}
    assert c2 not in report.constants
    assert [it.step for it in report.items] == sorted((it.step for it in report.items), key=STEP_ORDER.index)


def test_eigenvectors_scaled_by_minus_two_and_any_order() -> None:
    report = check(A2, eigenvectors=[(-1, [-2, 2]), (3, [-2, -2])])
    assert report.ok and _reference_agrees(report)
    assert all("decided exactly" in it.detail for it in report.items)


def test_eigenvector_for_a_wrong_value_names_the_residual() -> None:
    report = check(A2, eigenvectors=[(3, [1, 3])])
    item = report.items[0]
    assert not item.ok
    assert "A v - 3 v = (4, -4)" in item.detail  # A v = (7, 5), 3 v = (3, 9)
    assert item.residual == sp.Matrix([4, -4])
    assert "a right eigenvector of 3 is (1, 1)" in item.detail


def test_eigenvector_of_a_value_that_is_no_eigenvalue() -> None:
    item = check(A2, eigenvectors=[(2, [1, 0])]).items[0]
    assert not item.ok and "2 is not an eigenvalue of A" in item.detail


def test_zero_vector_is_not_an_eigenvector() -> None:
    item = check(A2, eigenvectors=[(3, [0, 0])]).items[0]
    assert not item.ok and "zero vector" in item.detail


def test_eigenvalue_multiplicity_is_checked() -> None:
    A = sp.Matrix([[2, 0, 0], [0, 2, 0], [0, 0, 3]])
    good = check(A, eigenvalues=[3, 2, 2])
    assert good.ok and _reference_agrees(good)
    bad = check(A, eigenvalues=[2, 3, 3])
    assert not bad.ok and _reference_agrees(bad)
    assert "multiplicity" in bad.items[0].detail
    assert "the right eigenvalues are (2, 2, 3)" in bad.items[0].detail
    short = check(A, eigenvalues=[2, 3])
    assert not short.ok and "A is 3x3" in short.items[0].detail


def test_dependent_eigenvectors_of_a_repeated_eigenvalue() -> None:
    A = sp.Matrix([[2, 0, 0], [0, 2, 0], [0, 0, 3]])
    report = check(A, eigenvectors=[(2, [1, 1, 0]), (2, [2, 2, 0]), (3, [0, 0, 1])])
    assert _reference_agrees(report)
    indep = _item(report, "eigenvectors for 2: independent")
    assert not indep.ok and "rank 1" in indep.detail
    assert _item(report, "eigenvector for 2 (#1)").ok and _item(report, "eigenvector for 2 (#2)").ok


def test_p_checked_without_d() -> None:
    good = check(A2, P=[[1, 1], [1, -1]])
    assert good.ok and _reference_agrees(good)
    report = check(A2, P=[[1, 0], [1, 1]])
    assert _reference_agrees(report)
    assert not report.ok and "not diagonal or a Jordan matrix" in report.items[0].detail


def test_singular_p() -> None:
    item = check(A2, P=[[1, 2], [1, 2]], D=[[3, 0], [0, -1]]).items[0]
    assert item.step == "P" and not item.ok and "singular" in item.detail


def test_d_with_wrong_diagonal() -> None:
    report = check(A2, D=[[3, 0], [0, 1]])
    assert not report.ok and "not the list of eigenvalues" in report.items[0].detail


# ---------------------------------------------------------------------------
# Defective matrices and symbolic parameters


def test_jordan_form_claims() -> None:
    A = sp.Matrix([[3, 1], [-1, 1]])  # (lambda - 2)^2, one eigenvector (1, -1)
    P = sp.Matrix([[1, 1], [-1, 0]])  # chain: (A - 2I) w = v with v = (1, -1), w = (1, 0)
    J = sp.Matrix([[2, 1], [0, 2]])
    a, b = sp.symbols("a b")
    x = sp.exp(2 * t) * (a * P[:, 0] + b * (t * P[:, 0] + P[:, 1]))
    report = check(A, t=t, eigenvalues=[2, 2], P=P, D=J, P_inv=P.inv(), x=list(x))
    assert report.ok, [(it.name, it.detail) for it in report.items if not it.ok]
    assert _reference_agrees(report)
    diag = check(A, D=[[2, 0], [0, 2]])
    assert not diag.ok
    assert "not diagonalizable" in diag.items[0].detail


def test_parameters_are_checked_symbolically() -> None:
    k = sp.Symbol("k", positive=True)
    w = sp.sqrt(k)
    A = sp.Matrix([[0, 1], [-k, 0]])
    A_, B_ = sp.symbols("A B")
    good = check(
        A,
        t=t,
        eigenvalues=[sp.I * w, -sp.I * w],
        eigenvectors=[(sp.I * w, [1, sp.I * w]), (-sp.I * w, [1, -sp.I * w])],
        x=[A_ * sp.cos(w * t) + B_ * sp.sin(w * t), w * (B_ * sp.cos(w * t) - A_ * sp.sin(w * t))],
    )
    assert good.ok, [(it.name, it.detail) for it in good.items if not it.ok]
    assert _reference_agrees(good)
    assert good.constants == (A_, B_)  # k is a parameter, not a constant
    eig = _item(good, "eigenvalues")
    assert eig.method == "exact" and "k + lambda^2" in eig.detail
    bad = check(A, t=t, eigenvalues=[sp.I * k, -sp.I * k])
    assert not bad.ok and _reference_agrees(bad)
    assert bad.items[0].residual.free_symbols == {k}


def test_parameter_names_in_strings() -> None:
    case = loads_case(
        '[system]\nmatrix = [[0, 1], ["-k", "-2 z"]]\n'
        '[parameters.k]\nassume = ["positive"]\n[parameters.z]\nassume = ["positive"]\n'
    )
    claim = loads_claim('eigenvalues = ["-z + sqrt(z^2 - k)", "-z - sqrt(z^2 - k)"]', case=case)
    good = check(**claim.kwargs)
    assert good.ok and _reference_agrees(good)
    wrong = loads_claim('eigenvalues = ["-z + sqrt(z^2 + k)", "-z - sqrt(z^2 + k)"]', case=case)
    assert not check(**wrong.kwargs).ok


def test_step_forcing_is_sampled_on_both_sides_of_the_switch() -> None:
    # The switch at t = 30 is far outside the generic sample range: the
    # breakpoint sampling must still find an error that only shows after it.
    f = [sp.Heaviside(t - 30)]
    c = sp.Symbol("c")
    right = c * sp.exp(-t) + sp.Heaviside(t - 30) * (1 - sp.exp(30 - t))
    ok = check([[-1]], f, t=t, x=[right])
    assert ok.ok, [it.detail for it in ok.items]
    assert _reference_agrees(ok)  # sympy's diff leaves delta(t - 30) (1 - e^0) = 0 at the sample points
    # Continuous at the switch but wrong after it: (1 - exp(30 - t))^2 for 1 - exp(30 - t).
    wrong = c * sp.exp(-t) + sp.Heaviside(t - 30) * (1 - sp.exp(30 - t)) ** 2
    bad = check([[-1]], f, t=t, x=[wrong])
    item = _item(bad, "general solution: x' = A x + f")
    assert not item.ok and "nonzero by a numeric test" in item.detail
    assert any(s.name == "t" and v > 30 for s, v in _numeric_witness(item.detail))


def _numeric_witness(detail: str) -> list[tuple[sp.Symbol, sp.Rational]]:
    found = re.search(r"at ([^)]*)\)", detail)
    assert found, detail
    pairs = []
    for part in found.group(1).split(", "):
        name, value = part.split(" = ")
        num, _, den = value.partition("/")
        pairs.append((sp.Symbol(name), sp.Rational(int(num), int(den or 1))))
    return pairs


def test_a_wrong_jump_at_the_switch_is_caught() -> None:
    # Satisfies the equation on both sides of t = 30 but jumps there by 1 - e:
    # the impulse in x' is not matched by the forcing.
    f = [sp.Heaviside(t - 30)]
    c = sp.Symbol("c")
    jumping = c * sp.exp(-t) + sp.Heaviside(t - 30) * (1 - sp.exp(31 - t))
    item = _item(check([[-1]], f, t=t, x=[jumping]), "general solution: x' = A x + f")
    assert not item.ok
    assert "delta(t - 30)" in item.detail


def test_cubic_radicals_are_decided_numerically() -> None:
    lam = sp.Symbol("lam")
    A = sp.Matrix([[0, 1, 0], [0, 0, 1], [1, 3, 0]])  # det(lam I - A) = lam^3 - 3 lam - 1, irreducible
    cardano = list(sp.roots(lam**3 - 3 * lam - 1, lam, cubics=True))
    good = check(A, eigenvalues=cardano[::-1])
    assert good.ok and good.items[0].method == "numeric (50 digits)"
    assert _reference_agrees(good)
    assert "numeric identity test (50 digits)" in good.items[0].detail
    bad = check(A, eigenvalues=[cardano[0], cardano[1], cardano[1]])
    assert _reference_agrees(bad)
    assert not bad.ok and "nonzero by a numeric test" in bad.items[0].detail


def test_indexed_roots() -> None:
    lam = sp.Symbol("lam")
    A = sp.Matrix([[0, 1, 0], [0, 0, 1], [1, 3, 0]])
    roots = [sp.CRootOf(lam**3 - 3 * lam - 1, k) for k in range(3)]
    good = check(A, eigenvalues=roots[::-1])
    assert good.ok and _reference_agrees(good)
    other = [sp.CRootOf(lam**3 - 3 * lam + 1, k) for k in range(3)]
    assert not check(A, eigenvalues=other).ok
    # The report has no legend of root names, so a root is printed in full.
    assert r"\text{root } 0 \text{ of }" in render_check(good, "latex")


def test_imaginary_unit_in_claim_strings() -> None:
    case = loads_case("[system]\nmatrix = [[1, -2], [2, 1]]\n")
    claim = loads_claim('eigenvalues = ["1 + 2i", "1 - 2j"]\neigenvectors = [["1 + 2i", ["1", "-i"]]]', case=case)
    report = check(**claim.kwargs)
    assert report.ok and _reference_agrees(report)


# ---------------------------------------------------------------------------
# Bad input


def test_bad_api_input() -> None:
    with pytest.raises(InputError, match="nothing to check"):
        check(A2)
    with pytest.raises(InputError, match="P_inv is claimed without P"):
        check(A2, P_inv=[[1, 0], [0, 1]])
    with pytest.raises(InputError, match="bare vectors"):
        check(A2, eigenvectors=[[1, 1], [1, -1]])
    with pytest.raises(InputError) as err:
        check(A2, P=[[1, 1], [1, 1, 0]])
    assert err.value.key == "P[1]"
    with pytest.raises(InputError, match="square"):
        check([[1, 2]], eigenvalues=[1])
    with pytest.raises(InputError) as err:
        check(A2, x=["c1 exp(3t)", "c1"], constants=["t"])
    assert err.value.key == "constants[0]"


@pytest.mark.parametrize(
    "text",
    ["__import__('os').system('true')", "c1.__class__", "(lambda: 1)()", "exec('1')", "c1[0]"],
)
def test_hostile_strings_are_refused(text: str) -> None:
    with pytest.raises(DeriveError):
        check(A2, t=t, x=[text, "c2"])


# ---------------------------------------------------------------------------
# Claim files


def _tanks():
    return load_case(DATA / "tanks.case.toml")


def test_unknown_key_names_the_nearest() -> None:
    with pytest.raises(CaseFileError) as err:
        loads_claim('eigenvalue = ["-2", "-4"]', case=_tanks(), source="c.toml")
    assert err.value.key == "eigenvalue"
    assert err.value.hint == "did you mean 'eigenvalues'?"
    assert err.value.file == "c.toml"


@pytest.mark.parametrize(
    "text, key",
    [
        ('P = [["1", "1"], ["1"]]', "P[1]"),
        ('P = [["1", "1"]]', "P"),
        ('D = "diag"', "D"),
        ('x = ["c1"]', "x"),
        ('eigenvalues = []', "eigenvalues"),
        ('eigenvalues = [true, "1"]', "eigenvalues[0]"),
        ('eigenvectors = [["-2", ["1", "1"]], ["1", "1"]]', "eigenvectors[1]"),
        ('eigenvectors = [["1", "1"]]', "eigenvectors"),
        ('constants = ["c1"]', "constants"),
        ('x = ["c1", "c2"]\nconstants = ["c1", "c1"]', "constants[1]"),
        ('x = ["c1", "c2"]\nconstants = ["t", "c2"]', "constants[0]"),
        ('x = ["__class__", "c2"]', "x[0]"),
        ('x = ["m1 + c1", "c2"]', "x[0]"),
        ('P_inv = [["1", "0"], ["0", "1"]]', "P_inv"),
    ],
)
def test_claim_file_errors_name_the_key(text: str, key: str) -> None:
    with pytest.raises(DeriveError) as err:
        loads_claim(text, case=_tanks(), source="c.toml")
    assert err.value.key == key, str(err.value)
    assert err.value.exit_code == 2


def test_state_names_are_refused_in_solutions() -> None:
    with pytest.raises(DeriveError, match="'m1' is a state of the case"):
        loads_claim('x = ["m1 + c1", "c2"]', case=_tanks())


def test_undeclared_names_in_other_keys_are_refused() -> None:
    with pytest.raises(DeriveError, match="unknown name 'q'"):
        loads_claim('eigenvalues = ["q", "-4"]', case=_tanks())


def test_not_toml_and_empty_claims() -> None:
    with pytest.raises(CaseFileError, match="not valid TOML"):
        loads_claim("eigenvalues = [-2, ", case=_tanks())
    with pytest.raises(CaseFileError, match="holds no claim"):
        loads_claim("", case=_tanks())


def test_floats_become_exact_with_a_notice() -> None:
    claim = loads_claim("eigenvalues = [-2.0, -4]\nx = [\"c1 exp(-2t) + 1.5\", \"c2\"]", case=_tanks())
    assert claim.kwargs["eigenvalues"] == (-2, -4)
    assert any("1.5 read as the exact value 3/2" in n for n in claim.notices)


def test_read_claim_records_the_hash() -> None:
    claim = read_claim(DATA / "tanks_ok.claim.toml", case=_tanks())
    assert re.fullmatch(r"[0-9a-f]{64}", claim.source_hash)
    assert claim.kwargs["constants"] == (sp.Symbol("K_1"), sp.Symbol("K_2"))


# ---------------------------------------------------------------------------
# Rendering


def _failing_report() -> CheckReport:
    return _run("tanks_pinv_sign")


def test_text_table_has_aligned_columns() -> None:
    text = render_check(_failing_report(), "text")
    lines = text.splitlines()
    head = next(k for k, line in enumerate(lines) if line.startswith("#  "))
    header, rule = lines[head], lines[head + 1]
    starts = [m.start() for m in re.finditer(r"-+", rule)]
    assert len(starts) == 5
    for line in lines[head + 2 : head + 2 + len(_failing_report().items)]:
        for s in starts[1:]:
            assert line[s - 2 : s] == "  " and line[s] != " ", line
    for s in starts:
        assert header[s] != " "
    assert "First wrong step: P_inv (P_inv)" in text
    assert "exit code 1" in text
    assert CAUTION in text


def test_json_and_markdown() -> None:
    report = _failing_report()
    data = json.loads(render_check(report, "json"))
    assert data["ok"] is False and data["exit_code"] == 1
    assert data["first_failure"] == {"step": "P_inv", "name": "P_inv"}
    assert [i["name"] for i in data["items"]] == [it.name for it in report.items]
    assert data["items"][-1]["residual"] == "[[-1, 1], [1, -1]]"
    md = render_check(report, "markdown")
    rows = [line for line in md.splitlines() if line.startswith("| ") and "FAIL" in line]
    assert len(rows) == 1 and "P\\_inv" in rows[0]
    with pytest.raises(InputError, match="unknown check report format"):
        render_check(report, "html")


def test_latex_escapes_user_text() -> None:
    case = loads_case('[sheet]\ntitle = "50% & $x_1"\n[system]\nmatrix = [[1, 2], [2, 1]]\n')
    report = check(case.system.A, eigenvalues=[3, 1])
    tex = render_check(report, "latex", meta=case.meta, sources=(("a_b.toml", "0" * 64),))
    assert r"50\% \& \$x\_1" in tex
    assert r"\texttt{a\_b.toml}" in tex
    assert "CHECK FAILED: the first wrong step is eigenvalues" in tex
    assert "\\begin{document}" in tex and "\\end{document}" in tex
    assert "licensed professional practice" in tex


@pytest.mark.tex
@pytest.mark.skipif(shutil.which("latexmk") is None or shutil.which("pdftotext") is None, reason="needs latexmk and pdftotext")
def test_pdf_report(tmp_path: Path) -> None:
    case = _tanks()
    report = _run("tanks_order")
    paths = write_check_outputs(report, tmp_path, stem="tanks-check", formats=("latex", "text"), pdf=True, meta=case.meta)
    assert [p.name for p in paths] == ["tanks-check.tex", "tanks-check.txt", "tanks-check.pdf"]
    text = subprocess.run(["pdftotext", str(paths[-1]), "-"], capture_output=True, text=True, check=True).stdout
    assert "CHECK FAILED" in text and "column order does not match" in " ".join(text.split())
    assert "Sheet 1 of" in text


# ---------------------------------------------------------------------------
# Property: a correct derivation passes; one perturbed item fails, and is named


@st.composite
def _derivations(draw):
    n = draw(st.sampled_from([2, 3]))
    eig = draw(st.lists(st.integers(-4, 4), min_size=n, max_size=n, unique=True))
    P = sp.eye(n)
    for i, j, m in draw(st.lists(st.tuples(st.integers(0, n - 1), st.integers(0, n - 1), st.integers(-2, 2)), min_size=1, max_size=4)):
        if i != j:
            P[i, :] = P[i, :] + m * P[j, :]  # a row operation keeps det P = 1
    perm = draw(st.permutations(list(range(n))))
    P = P[:, perm]
    which = draw(st.sampled_from(["P_inv", "eigenvalues", "x"]))
    delta = draw(st.sampled_from([-2, -1, 1, 2]))
    i, j = draw(st.integers(0, n - 1)), draw(st.integers(0, n - 1))
    return P, eig, which, delta, i, j


@settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(_derivations())
def test_perturbed_item_is_caught(case) -> None:
    P, eig, which, delta, i, j = case
    n = P.rows
    D = sp.diag(*eig)
    P_inv = P.inv()
    A = P * D * P_inv
    cs = sp.symbols(f"c1:{n + 1}")
    x = sp.zeros(n, 1)
    for k in range(n):
        x += cs[k] * sp.exp(eig[k] * t) * P[:, k]
    claims = dict(
        eigenvalues=list(eig),
        eigenvectors=[(eig[k], P[:, k]) for k in range(n)],
        P=P,
        D=D,
        P_inv=P_inv,
        x=list(x),
    )
    right = check(A, t=t, **claims)
    assert right.ok and _reference_agrees(right)
    if which == "P_inv":
        bad = sp.Matrix(P_inv)
        bad[i, j] += delta
        claims["P_inv"] = bad
        expected = ("P_inv", "P_inv")
    elif which == "eigenvalues":
        values = list(eig)
        values[i] += delta
        claims["eigenvalues"] = values
        expected = ("eigenvalues", "eigenvalues")
    else:
        # Adding delta c_j e^(lambda_j t) to component i is still a solution
        # when e_i is an eigenvector of lambda_j; only a real slip counts.
        assume(any(e != 0 for e in (A - eig[j] * sp.eye(n))[:, i]))
        bad_x = list(x)
        bad_x[i] = bad_x[i] + delta * cs[j] * sp.exp(eig[j] * t)
        claims["x"] = bad_x
        expected = ("general solution", "general solution: x' = A x + f")
    report = check(A, t=t, **claims)
    assert not report.ok and _reference_agrees(report)
    first = report.first_failure
    assert first is not None and (first.step, first.name) == expected
    # Nothing outside the perturbed step fails (a perturbed x may also lose a constant).
    assert {it.step for it in report.items if not it.ok} == {expected[0]}


# ---------------------------------------------------------------------------
# Module examples


@pytest.mark.parametrize("module", [check_module, claimfile_module])
def test_docstring_examples(module) -> None:
    result = doctest.testmod(module, optionflags=doctest.ELLIPSIS)
    assert result.attempted > 0 and result.failed == 0


# ---------------------------------------------------------------------------
# The command line


def _cli(args: list[str]):
    from click.testing import CliRunner

    from derive.cli import cli

    return CliRunner().invoke(cli, args)


def test_cli_exit_codes_and_outputs(tmp_path: Path) -> None:
    case = str(DATA / "tanks.case.toml")
    good = _cli(["check", case, "--claim", str(DATA / "tanks_ok.claim.toml"), "-o", str(tmp_path), "--format", "json", "--no-pdf"])
    assert good.exit_code == 0, good.output
    assert "First wrong step: none" in good.output
    written = json.loads((tmp_path / "tanks.case-check.json").read_text())
    assert written["ok"] is True and len(written["items"]) == 8

    bad = _cli(["check", case, "--claim", str(DATA / "tanks_pinv_sign.claim.toml"), "-o", str(tmp_path), "--format", "markdown", "--format", "text", "--no-pdf"])
    assert bad.exit_code == 1, bad.output
    assert "First wrong step: P_inv (P_inv)" in bad.output
    assert (tmp_path / "tanks.case-check.md").is_file() and (tmp_path / "tanks.case-check.txt").is_file()

    wrong_key = tmp_path / "typo.toml"
    wrong_key.write_text('eigenvalue = ["-2", "-4"]\n')
    err = _cli(["check", case, "--claim", str(wrong_key), "-o", str(tmp_path), "--no-pdf"])
    assert err.exit_code == 2
    assert "unknown key 'eigenvalue'" in err.output and "did you mean 'eigenvalues'?" in err.output

    missing = _cli(["check", case, "-o", str(tmp_path)])
    assert missing.exit_code == 2 and "--claim" in missing.output
