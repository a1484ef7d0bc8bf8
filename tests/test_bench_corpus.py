"""The benchmark corpus is well formed, and its runner's pieces do what they claim.

The corpus matrices are built by construction (A = P S P^-1 with a
unimodular integer P), so the structure each case is tagged with is checked
here against S and against A's characteristic polynomial.  A few small cases
are solved with derive.solve and put through the runner's common checker; the
checker is also shown to reject wrong answers.  The full benchmark
(tests/bench/run_bench.py) is not run here.
"""

from __future__ import annotations

import pytest
import sympy as sp

import derive
from bench.corpus import CORPUS, FORCING_CLASSES, QUICK, SPECTRAL_KINDS, T, TARGET_8X8, by_name, unimodular
from bench.run_bench import STAGES, check_solution, run_child, select, solve_with_dsolve, summarize, targets
from derive.errors import InputError

LAM = sp.Symbol("lam")


def _factors(case):
    return sp.factor_list(sp.Matrix(case.A).charpoly(LAM).as_expr(), LAM)[1]


# ---------------------------------------------------------------------------
# shape of the corpus


def test_corpus_size_names_and_coverage():
    names = [c.name for c in CORPUS]
    assert len(CORPUS) >= 40
    assert len(set(names)) == len(names)
    assert {c.n for c in CORPUS} == set(range(2, 9))
    assert set(SPECTRAL_KINDS) <= {k for c in CORPUS for k in c.spectral}
    assert set(FORCING_CLASSES) <= {k for c in CORPUS for k in c.forcing}
    assert any(c.is_ivp for c in CORPUS) and any(not c.is_ivp for c in CORPUS)
    for c in CORPUS:
        assert set(c.spectral) <= set(SPECTRAL_KINDS), c.name
        assert set(c.forcing) <= set(FORCING_CLASSES), c.name
        # only switched and impulse forcing may be refused, and those must say so
        assert c.may_refuse == bool({"switched", "impulse"} & set(c.forcing)), c.name


def test_quick_subset_and_target_exist():
    assert 8 <= len(QUICK) <= 12
    for name in QUICK:
        assert by_name(name).n <= 4
    tgt = by_name(TARGET_8X8)
    assert tgt.n == 8 and not tgt.A.free_symbols
    assert all(v.is_Rational for v in tgt.A)
    roots = sp.Matrix(tgt.A).charpoly(LAM).all_roots()
    assert len(set(roots)) == 8 and all(r.is_Rational for r in roots)


@pytest.mark.parametrize("case", CORPUS, ids=lambda c: c.name)
def test_case_is_exact_and_consistent(case):
    n = case.n
    assert case.A.shape == (n, n)
    assert len(case.f) == n
    if case.is_ivp:
        assert len(case.x0) == n
    everything = list(case.A) + list(case.f) + list(case.x0 or ()) + [case.t0]
    assert not any(e.atoms(sp.Float) for e in everything), "the corpus is exact: no floats"
    declared = set(case.param_values)
    assert (case.A.free_symbols | sp.Matrix(list(case.f)).free_symbols) - {T} <= declared
    assert not case.A.has(T)
    for s, v in case.params:
        assert v.is_Rational and (v > 0 if s.is_positive else True)


@pytest.mark.parametrize("case", [c for c in CORPUS if c.structure is not None], ids=lambda c: c.name)
def test_built_cases_have_the_structure_they_are_tagged_with(case):
    P, S = sp.Matrix(case.modal), sp.Matrix(case.structure)
    assert abs(P.det()) == 1 and all(v.is_Integer for v in P)
    assert sp.Matrix(case.A) == P * S * P.inv()
    assert all(v.is_Rational for v in case.A)
    factors = _factors(case)
    tags = set(case.spectral)
    if "zero" in tags:
        assert S.det() == 0
    if "repeated" in tags or "defective" in tags:
        assert any(m > 1 for _, m in factors)
    if "defective" in tags:
        assert not S.is_diagonalizable()
    if "complex" in tags:
        assert any(not r.is_real for r in sp.Poly(S.charpoly(LAM).as_expr(), LAM).all_roots())
    if "nonradical" in tags:
        assert any(sp.degree(f, LAM) >= 5 for f, _ in factors)
    if "radical" in tags:
        assert any(sp.degree(f, LAM) in (2, 3, 4) for f, _ in factors)
    if tags == {"distinct"}:
        assert all(sp.degree(f, LAM) == 1 and m == 1 for f, m in factors)


def test_unimodular_is_seeded_and_unimodular():
    assert unimodular(5, seed=3) == unimodular(5, seed=3)
    assert abs(unimodular(6, seed=9).det()) == 1


# ---------------------------------------------------------------------------
# solving a few small cases and checking them with the common checker


@pytest.mark.parametrize("name", ["d2_none_gen", "c2_none_ivp", "j2_res_gen", "s2_spring_ivp", "rep3_none_gen"])
def test_small_cases_solve_and_verify(name):
    case = by_name(name)
    sol = derive.solve(case.A, list(case.f), t=T, x0=None if case.x0 is None else list(case.x0),
                       params=dict(case.params) or None)
    assert sol.ok
    res = check_solution(case, list(sol.x), sol.constants)
    assert res.verified, res.detail
    assert res.method == "exact"
    assert not sol.x.has(sp.I)


def test_checker_rejects_a_perturbed_answer():
    case = by_name("c2_none_ivp")
    sol = derive.solve(case.A, list(case.f), t=T, x0=list(case.x0))
    bad = [sol.x[0] + sp.Rational(1, 1000) * sp.exp(-T), sol.x[1]]
    res = check_solution(case, bad, ())
    assert not res.verified and "not zero" in res.detail


def test_checker_rejects_wrong_initial_values():
    case = by_name("d3_none_ivp")  # homogeneous: any multiple of a solution still solves the ODE
    sol = derive.solve(case.A, t=T, x0=list(case.x0))
    res = check_solution(case, [2 * v for v in sol.x], ())
    assert not res.verified and "x0" in res.detail


def test_checker_rejects_a_general_solution_missing_a_constant():
    case = by_name("d2_none_gen")
    sol = derive.solve(case.A, t=T)
    c1, c2 = sol.constants
    res = check_solution(case, [v.subs(c2, c1) for v in sol.x], (c1, c2))
    assert not res.verified and "independent" in res.detail
    assert not check_solution(case, list(sol.x), (c1,)).verified


def test_checker_settles_indexed_roots_numerically():
    # e^{At} x0 with A's roots as CRootOf: simplify cannot settle it, the numeric test can
    case = by_name("r2_poly_ivp")
    r0, r1 = (sp.CRootOf(LAM**2 - LAM - 1, LAM, i) for i in range(2))
    assert sp.Poly(sp.Matrix(case.structure).charpoly(LAM).as_expr(), LAM) == sp.Poly(LAM**2 - LAM - 1, LAM)
    sol = derive.solve(case.A, list(case.f), t=T, x0=list(case.x0))
    x = [v.xreplace({sp.sqrt(5): 2 * r1 - 1}) for v in sol.x]  # sqrt(5) = 2 r1 - 1 for the larger root
    res = check_solution(case, x, ())
    assert res.verified and res.method == "num"
    assert r0 < 0 < r1


def test_dsolve_adapter_gives_a_checked_general_solution():
    case = by_name("d2_none_gen")
    x, constants, extra = solve_with_dsolve(case)
    assert len(constants) == 2 and extra["solve_s"] >= 0
    assert check_solution(case, list(x), constants).verified


def test_run_child_records_every_stage():
    rec = run_child("derive", "d2_poly_ivp", 60, 60)
    assert rec["status"] == "solved" and rec["verified"] and rec["real"]
    assert set(rec["stages"]) == set(STAGES)
    assert all(v >= 0 for v in rec["stages"].values())
    assert rec["peak_mib"] >= rec["baseline_mib"] > 0
    assert rec["ops"] > 0


def test_repeat_keeps_the_fastest_run_and_every_time():
    from bench.run_bench import run_all

    seen = []
    (rec,) = run_all(["d2_none_gen"], solvers=("derive",), repeat=3, progress=seen.append)
    assert rec["verified"] and len(rec["solve_times"]) == 3
    assert rec["solve_s"] == min(rec["solve_times"])
    assert len(seen) == 1  # one progress line for the pair, after its last run


def test_select_rejects_unknown_names():
    with pytest.raises(InputError, match="no_such_case"):
        select(only=["d2_none_gen", "no_such_case"], quick=False)
    assert select(only=None, quick=True) == [c.name for c in CORPUS if c.name in QUICK]


# ---------------------------------------------------------------------------
# summary and targets on records of known figures


def _rec(case, solver, s, ops, verified=True, status="solved"):
    rec = {"case": case, "solver": solver, "status": status, "verified": verified, "solve_s": s,
           "ops": ops, "real": True, "peak_mib": 100.0}
    if solver == "derive":
        rec["stages"] = {st: s / len(STAGES) for st in STAGES}
    return rec


def test_targets_from_known_figures():
    records = [
        _rec("d2_none_gen", "derive", 0.1, 10), _rec("d2_none_gen", "dsolve", 2.0, 20),
        _rec("c2_none_ivp", "derive", 0.2, 30), _rec("c2_none_ivp", "dsolve", 1.0, 20),
        _rec("d3_none_ivp", "derive", 0.1, 10), _rec("d3_none_ivp", "dsolve", 3.0, 10),
        _rec(TARGET_8X8, "derive", 12.0, 50), _rec(TARGET_8X8, "dsolve", 30.0, 0, False, "timeout"),
    ]
    summary = summarize(records, timeout=30)
    assert summary["both_verified"] == 3
    assert summary["median_time_ratio"] == pytest.approx(20.0)  # ratios 20, 5, 30
    assert summary["median_ops_ratio"] == pytest.approx(1.0)  # 0.5, 1.5, 1.0
    met = {it["target"].split(" (")[0]: it["met"] for it in targets(records, summary)}
    assert met["every case dsolve solves, we solve"] is True
    assert met["median time >= 10x faster than dsolve"] is True
    assert met["no case above 10 s"] is False
    assert met["8x8 distinct rational"] is False
    assert met["result size <= dsolve's on the median case"] is True
    assert met["every case we solve renders to LaTeX"] is True
