"""Batches: isolation per case, sweeps, summary and index, cache, Dask, the command.

All scenarios are invented for these tests.  Expected eigenvalues are those of
small triangular or diagonal matrices, read off the diagonal.
"""

from __future__ import annotations

import csv
import ctypes
import json
import math
import os
import signal
import subprocess
import sys
import time
from dataclasses import replace
from pathlib import Path

import pytest
import sympy as sp
from click.testing import CliRunner

import derive
from derive.batch import BatchReport, CaseResult, batch, case_key, collect_cases, spectrum_kind
from derive.batch.task import hard_limit
from derive.casefile import load_case, load_cases, loads_case, loads_cases
from derive.cli import cli
from derive.errors import CaseFileError, ExpressionError, LimitError
from derive.model import Case
from derive.pipeline import solve
from derive.settings import DEFAULT_SETTINGS

GOOD = """
[sheet]
title = "Cooling of two coupled tanks"
[system]
states = ["T1", "T2"]
matrix = [[-2, 1], [0, -1]]
[initial]
values = [1, 2]
"""

SWEEP = """
[sheet]
title = "Sprung mass, stiffness sweep"
[system]
states = ["x", "v"]
matrix = [[0, 1], ["-k", "-c"]]
[initial]
values = [1, 0]
[parameters.k]
assume = ["positive"]
[parameters.c]
assume = ["positive"]
[parameters.m]
assume = ["positive"]
[sweep]
k = [2, "1/2"]
c = [3]
"""

# Fully symbolic 2x2 with products of exponentials, sines and powers in the
# forcing: the closed-form integrals take more than a minute on a 2-core machine.
SLOW = """
[system]
matrix = [["a", "b"], ["c", "d"]]
forcing = ["sin(w*t)*exp(-p*t)", "cos(v*t)*t^2"]
[parameters.a]
[parameters.b]
[parameters.c]
[parameters.d]
[parameters.w]
[parameters.p]
[parameters.v]
"""

BROKEN = '[system]\nmatrix = [[1, 2'


class _ExitOnLoad:
    """Unpickling this in a worker ends the worker at once (stands in for a crash)."""

    def __reduce__(self):
        return (os._exit, (7,))


class _SegfaultOnLoad:
    """Unpickling this reads address 0: the worker dies of SIGSEGV."""

    def __reduce__(self):
        return (ctypes.string_at, (0,))


class _HangOnLoad:
    """Unpickling this blocks before the case's own alarm is set (like C code that never returns)."""

    def __reduce__(self):
        return (time.sleep, (120,))


def _case_with(name: str, poison: object) -> Case:
    base = loads_case(GOOD, name=name)
    # The poison rides in a field the solver never reads; only the worker unpickles it.
    return Case(name=name, system=base.system, meta=base.meta.__class__(notes=poison))  # type: ignore[arg-type]


def _write(folder: Path, files: dict[str, str]) -> Path:
    folder.mkdir(parents=True, exist_ok=True)
    for name, text in files.items():
        (folder / name).write_text(text, encoding="utf-8")
    return folder


# ---------------------------------------------------------------------------
# Sweeps
# ---------------------------------------------------------------------------


def test_sweep_expands_to_readable_names_and_substitutes_exactly():
    cases = loads_cases(SWEEP, name="spring")
    assert [c.name for c in cases] == ["spring-k_2-c_3", "spring-k_1over2-c_3"]
    k_half = cases[1].system
    assert k_half.A == sp.Matrix([[0, 1], [sp.Rational(-1, 2), -3]])
    # numbers leave the algebra: the swept parameters are gone, the unused one stays
    assert [p.name for p in k_half.params] == ["m"]
    assert "k = 1/2, c = 3" in cases[1].meta.notes


def test_sweep_relation_keeps_the_other_parameter_symbolic():
    text = SWEEP.replace('k = [2, "1/2"]', 'k = ["2*m", 0.25]')
    cases = loads_cases(text, name="spring")
    assert [c.name for c in cases] == ["spring-k_2m-c_3", "spring-k_0.25-c_3"]
    m = next(p.symbol for p in cases[0].system.params if p.name == "m")
    assert cases[0].system.A[1, 0] == -2 * m
    assert cases[1].system.A[1, 0] == sp.Rational(-1, 4)


def test_sweep_product_order_and_file_loading(tmp_path):
    text = SWEEP.replace("c = [3]", "c = [3, 5]")
    path = _write(tmp_path, {"spring.toml": text}) / "spring.toml"
    names = [c.name for c in load_cases(path)]
    assert names == ["spring-k_2-c_3", "spring-k_2-c_5", "spring-k_1over2-c_3", "spring-k_1over2-c_5"]
    with pytest.raises(CaseFileError) as info:
        load_case(path)
    assert info.value.key == "sweep" and "4 case(s)" in info.value.message and "eigensheet batch" in str(info.value)


@pytest.mark.parametrize(
    "sweep, key, words",
    [
        ("kk = [1]", "sweep.kk", "not a declared parameter"),
        ("k = []", "sweep.k", "non-empty list"),
        ("k = [1, 1.0]", "sweep.k[1]", "repeats"),
        ("k = [-1]", "sweep.k[0]", "violates the assumption 'positive'"),
        ('k = ["2*c"]\nc = [1]', "sweep.k[0]", "swept itself"),
        ("k = [true]", "sweep.k[0]", "expected a number"),
    ],
)
def test_sweep_errors_name_the_key(sweep, key, words):
    text = SWEEP.split("[sweep]")[0] + "[sweep]\n" + sweep + "\n"
    with pytest.raises(CaseFileError) as info:
        loads_cases(text, name="s", source="s.toml")
    assert info.value.key == key and info.value.file == "s.toml"
    assert words in info.value.message


def test_sweep_rejects_unknown_names_in_relations_and_too_many_cases():
    text = SWEEP.split("[sweep]")[0] + '[sweep]\nk = ["2*q"]\n'
    with pytest.raises(ExpressionError):
        loads_cases(text, name="s")
    many = SWEEP.split("[sweep]")[0] + "[sweep]\nk = [%s]\nc = [%s]\n" % (
        ", ".join(str(i) for i in range(1, 41)),
        ", ".join(str(i) for i in range(1, 31)),
    )
    with pytest.raises(LimitError) as info:
        loads_cases(many, name="s")
    assert "1200 cases" in info.value.message


# ---------------------------------------------------------------------------
# Spectrum kinds and the report
# ---------------------------------------------------------------------------


@pytest.mark.parametrize(
    "A, kind",
    [
        ([[-2, 1], [0, -1]], "distinct real"),
        ([[0, 1], [-1, 0]], "distinct complex"),
        ([[3, 0], [0, 3]], "repeated real"),
        ([[3, 1], [0, 3]], "defective real"),
    ],
)
def test_spectrum_kind(A, kind):
    assert spectrum_kind(solve(A)) == kind


def test_report_counts_and_exit_code():
    ok = BatchReport(results=(CaseResult("a", "ok"), CaseResult("b", "ok", cached=True)))
    assert ok.exit_code == 0 and ok.cached_count == 1 and ok["b"].cached
    bad = BatchReport(results=(CaseResult("a", "ok"), CaseResult("b", "crashed")))
    assert bad.exit_code == 1 and bad.counts["crashed"] == 1 and bad.failed_count == 1
    assert BatchReport(results=()).exit_code == 1


def test_collect_cases_rejects_duplicate_names_and_bad_arguments(tmp_path):
    _write(tmp_path / "a", {"tank.toml": GOOD})
    _write(tmp_path / "b", {"tank.toml": GOOD})
    entries = collect_cases([tmp_path, ("x", {"A": [[1]], "bogus": 1}), ("y", {"f": [1]})])
    assert [e.name for e in entries] == ["tank", "tank", "x", "y"]
    assert entries[0].case is not None
    assert entries[1].failure is not None and "duplicate case name 'tank'" in entries[1].failure.message
    assert "unknown argument(s) 'bogus'" in entries[2].failure.message
    assert "no matrix A" in entries[3].failure.message


# ---------------------------------------------------------------------------
# Isolation: good, malformed, slow and crashing cases in one batch
# ---------------------------------------------------------------------------


def test_batch_isolates_failures_and_records_reasons(tmp_path):
    inputs = _write(tmp_path / "in", {"good.toml": GOOD, "spring.toml": SWEEP, "broken.toml": BROKEN, "slow.toml": SLOW})
    out = tmp_path / "out"
    cases = [
        inputs,
        _case_with("dies", _ExitOnLoad()),
        _case_with("segv", _SegfaultOnLoad()),
        ("after", {"A": [[-1]], "x0": [1]}),
    ]
    report = batch(cases, jobs=2, timeout=5, out_dir=out, pdf=False)
    status = {r.name: r.status for r in report.results}
    assert status == {
        "broken": "bad-input",
        "good": "ok",
        "slow": "timeout",
        "spring-k_2-c_3": "ok",
        "spring-k_1over2-c_3": "ok",
        "dies": "crashed",
        "segv": "crashed",
        "after": "ok",
    }
    assert report.exit_code == 1
    assert "not valid TOML" in report["broken"].message and "broken.toml" in report["broken"].message
    assert "time limit of 5 s" in report["slow"].message
    assert "exit status 7" in report["dies"].message
    assert "SIGSEGV" in report["segv"].message
    # the case after the crashes ran on a replacement worker and kept its solution
    assert report["after"].solution.x[0] == sp.exp(-sp.Symbol("t"))
    good = report["good"]
    assert good.spectrum == "distinct real" and good.eigenvalues == ("-2", "-1")
    assert good.residual_method == "exact" and good.max_rel_gap is not None and good.max_rel_gap < 1e-6
    for r in report.results:
        for o in r.outputs:
            assert (out / o).is_file()
        assert bool(r.outputs) == (r.status == "ok")
    assert report["good"].outputs == ("cases/good/good.tex", "cases/good/good-body.tex")

    summary = json.loads((out / "summary.json").read_text())
    assert summary["complete"] is True and summary["total"] == 8 and summary["finished"] == 8
    assert {c["case"]: c["status"] for c in summary["cases"]} == status
    assert summary["counts"] == report.counts
    with open(out / "summary.csv", newline="") as fh:
        rows = list(csv.DictReader(fh))
    assert [r["case"] for r in rows] == [r.name for r in report.results]
    assert {r["case"]: r["status"] for r in rows} == status

    index = (out / "index.tex").read_text()
    for name in status:
        assert f"\\path{{{name}}}" in index
    assert "\\textbf{timeout}" in index and "\\begin{document}" in index
    assert "\\begin{document}" not in (out / "index-body.tex").read_text()


def test_a_worker_stuck_outside_the_alarm_is_killed_and_replaced(tmp_path):
    # A short hard limit: 3 s for the case, 2 s for writing its outputs, 0.5 s for its reading, 0.5 s of grace.
    quick = replace(DEFAULT_SETTINGS, batch_grace=0.5, batch_write_seconds=2.0, batch_reading_seconds=0.5)
    assert hard_limit(3, pdf=False, settings=quick) == 6.0
    report = batch([_case_with("stuck", _HangOnLoad()), ("next", {"A": [[-3]]})], jobs=1, timeout=3, settings=quick)
    assert report["stuck"].status == "timeout" and "worker was stopped" in report["stuck"].message
    assert report["next"].status == "ok"
    assert report["stuck"].seconds < 60


# ---------------------------------------------------------------------------
# Incremental runs
# ---------------------------------------------------------------------------


def test_cache_skips_unchanged_and_reruns_changed_cases(tmp_path):
    inputs = _write(tmp_path / "in", {"good.toml": GOOD, "spring.toml": SWEEP})
    out = tmp_path / "out"
    first = batch([inputs], jobs=2, out_dir=out, keep_solutions=False)
    assert first.exit_code == 0 and first.cached_count == 0 and len(first.results) == 3
    stamp = (out / "cases/good/good.tex").stat().st_mtime_ns

    again = batch([inputs], jobs=2, out_dir=out)
    assert again.exit_code == 0 and again.cached_count == 3
    assert all(r.solution is None for r in again.results)
    assert (out / "cases/good/good.tex").stat().st_mtime_ns == stamp
    assert [r.row() | {"cached": False} for r in again.results] == [r.row() for r in first.results]

    (inputs / "good.toml").write_text(GOOD.replace("values = [1, 2]", "values = [3, 2]"))
    (out / "cases/spring-k_2-c_3/spring-k_2-c_3-body.tex").unlink()
    changed = batch([inputs], jobs=2, out_dir=out)
    cached = {r.name: r.cached for r in changed.results}
    assert cached == {"good": False, "spring-k_2-c_3": False, "spring-k_1over2-c_3": True}
    assert (out / "cases/spring-k_2-c_3/spring-k_2-c_3-body.tex").is_file()

    forced = batch([inputs], jobs=2, out_dir=out, force=True)
    assert forced.cached_count == 0 and forced.exit_code == 0


def test_case_key_covers_inputs_outputs_and_version():
    case = loads_case(GOOD, name="good")
    key = case_key(case, formats=("latex",), pdf=False)
    assert key == case_key(case, formats=("latex",), pdf=False, version=derive.__version__)
    assert key == case_key(loads_case(GOOD, name="good"), formats=("latex",), pdf=False)
    assert key != case_key(loads_case(GOOD.replace("[-2, 1]", "[-2, 2]"), name="good"), formats=("latex",), pdf=False)
    assert key != case_key(case, formats=("latex", "json"), pdf=False)
    assert key != case_key(case, formats=("latex",), pdf=True)
    assert key != case_key(case, formats=("latex",), pdf=False, version="99.0")


# ---------------------------------------------------------------------------
# The command, Ctrl-C, the index PDF
# ---------------------------------------------------------------------------


def test_command_exit_codes(tmp_path):
    good = _write(tmp_path / "ok", {"good.toml": GOOD})
    runner = CliRunner()
    res = runner.invoke(cli, ["batch", str(good), "-o", str(tmp_path / "o1"), "--no-pdf", "-j", "1"])
    assert res.exit_code == 0, res.output
    assert "1 cases: 1 ok" in res.output
    _write(good, {"broken.toml": BROKEN})
    res = runner.invoke(cli, ["batch", str(good), "-o", str(tmp_path / "o2"), "--no-pdf", "-j", "1"])
    assert res.exit_code == 1
    assert "bad-input: broken" in res.output
    res = runner.invoke(cli, ["batch", str(tmp_path / "missing"), "-o", str(tmp_path / "o3")])
    assert res.exit_code == 2


def test_interrupt_leaves_finished_cases_complete_and_summary_consistent(tmp_path):
    inputs = _write(tmp_path / "in", {"a-good.toml": GOOD, "b-slow.toml": SLOW, "c-slow.toml": SLOW, "d-slow.toml": SLOW})
    out = tmp_path / "out"
    proc = subprocess.Popen(
        [sys.executable, "-m", "derive", "batch", str(inputs), "-o", str(out), "--no-pdf", "-j", "2", "--timeout", "60"],
        stdout=subprocess.PIPE,
        stderr=subprocess.PIPE,
        start_new_session=True,
    )
    try:
        summary = out / "summary.json"
        for _ in range(600):
            if summary.is_file() and json.loads(summary.read_text())["finished"] >= 1:
                break
            time.sleep(0.05)
        else:
            pytest.fail("the first case never finished")
        # Ctrl-C reaches the whole foreground group: the parent and its workers.
        os.killpg(proc.pid, signal.SIGINT)
        _, err = proc.communicate(timeout=30)
    finally:
        if proc.poll() is None:
            proc.kill()
    assert proc.returncode == 130, err
    data = json.loads(summary.read_text())
    assert data["interrupted"] is True and data["complete"] is False and data["total"] == 4
    assert [c["case"] for c in data["cases"]] == ["a-good"] and data["cases"][0]["status"] == "ok"
    for o in data["cases"][0]["outputs"]:
        assert (out / o).is_file() and (out / o).stat().st_size > 0
    with open(out / "summary.csv", newline="") as fh:
        assert [r["case"] for r in csv.DictReader(fh)] == ["a-good"]
    assert not list(out.rglob("*.part"))
    assert "interrupted" in (out / "index.tex").read_text()


@pytest.mark.tex
def test_index_compiles_to_pdf(tmp_path):
    from derive.output import latex_available

    if not latex_available():
        pytest.skip("latexmk is not on the PATH")
    inputs = _write(tmp_path / "in", {"good.toml": GOOD, "broken.toml": BROKEN})
    out = tmp_path / "out"
    report = batch([inputs, ("a_long_case_name_with_underscores_" * 2 + "end", {"A": [[-1]]})], out_dir=out, pdf=False)
    assert report.index_error == ""
    from derive.documents.batch_index import write_index

    paths = write_index(out, report.results, counts=report.counts, pdf=True, interrupted=False, total=len(report.results))
    assert paths[-1] == out / "index.pdf"
    text = subprocess.run(["pdftotext", "-layout", str(out / "index.pdf"), "-"], capture_output=True, text=True).stdout
    assert "Index of calculation sheets" in text and "bad-input" in text and "good.tex" in text


# ---------------------------------------------------------------------------
# Dask: the same batch on a local cluster on loopback
# ---------------------------------------------------------------------------


def test_dask_cluster_gives_the_same_summary_as_the_local_run(tmp_path):
    distributed = pytest.importorskip("distributed")
    inputs = _write(tmp_path / "in", {"good.toml": GOOD, "broken.toml": BROKEN})
    cases = [inputs, _case_with("dies", _ExitOnLoad()), ("decay", {"A": [[-1]], "x0": [2]})]
    local = batch(cases, jobs=2, out_dir=tmp_path / "local", timeout=30, keep_solutions=False)
    with distributed.LocalCluster(
        n_workers=1, threads_per_worker=2, processes=True, host="127.0.0.1", dashboard_address=None
    ) as cluster:
        remote = batch(cases, out_dir=tmp_path / "dask", timeout=30, scheduler=cluster.scheduler_address)
        with distributed.Client(cluster.scheduler_address) as client:
            # the crash killed a child interpreter, not the Dask worker
            assert len(client.scheduler_info()["workers"]) == 1

    def comparable(report):
        return [{k: v for k, v in r.row().items() if k != "seconds"} for r in report.results]

    assert comparable(remote) == comparable(local)
    assert {r.name: r.status for r in remote.results} == {"broken": "bad-input", "good": "ok", "dies": "crashed", "decay": "ok"}
    for r in local.results:
        for o in r.outputs:
            assert (tmp_path / "dask" / o).read_bytes() == (tmp_path / "local" / o).read_bytes()
    assert remote["decay"].solution is not None


# ---------------------------------------------------------------------------
# Statuses are a str Enum: the old strings still compare, the files hold plain text
# ---------------------------------------------------------------------------


def test_status_is_a_str_enum_and_the_summary_holds_plain_text(tmp_path):
    from derive.batch import STATUSES, Status

    assert [str(s) for s in STATUSES] == ["ok", "verification-failed", "bad-input", "timeout", "crashed", "error"]
    made = CaseResult("a", "timeout")
    assert made.status is Status.TIMEOUT and made.status == "timeout" and not made.ok
    with pytest.raises(ValueError):
        CaseResult("a", "finished")
    report = batch([("decay", {"A": [[-1]], "x0": [1]}), ("nomatrix", {"x0": [1]})], jobs=1, out_dir=tmp_path)
    assert report["decay"].status is Status.OK and report["nomatrix"].status is Status.BAD_INPUT
    data = json.loads((tmp_path / "summary.json").read_text())
    assert [c["status"] for c in data["cases"]] == ["ok", "bad-input"]
    assert data["counts"] == {"ok": 1, "verification-failed": 0, "bad-input": 1, "timeout": 0, "crashed": 0, "error": 0}
    with open(tmp_path / "summary.csv", newline="") as fh:
        assert [r["status"] for r in csv.DictReader(fh)] == ["ok", "bad-input"]
    # the cache reads its records back into the enum
    again = batch([("decay", {"A": [[-1]], "x0": [1]})], jobs=1, out_dir=tmp_path)
    assert again["decay"].cached and again["decay"].status is Status.OK


def test_a_case_that_cannot_be_sent_to_a_worker_is_recorded_and_the_others_run():
    # A lambda cannot be pickled: the case fails in the parent, before any worker sees it.
    report = batch([_case_with("unsendable", lambda: None), ("next", {"A": [[-2]]})], jobs=1)
    assert report["unsendable"].status == "error" and "cannot be sent to a worker" in report["unsendable"].message
    assert report["next"].status == "ok" and report.exit_code == 1


# ---------------------------------------------------------------------------
# The reading in the summary: stability, slowest time constant, final values, peaks
# ---------------------------------------------------------------------------

LAG = """
[system]
states = ["T"]
matrix = [[-2]]
forcing = [2]
[initial]
values = [0]
"""

# x'' + 2 x' + 5 x = 5: zeta = 1/sqrt(5), omega_d = 2, final value 1
RINGING = """
[system]
states = ["x", "v"]
matrix = [[0, 1], [-5, -2]]
forcing = [0, 5]
[initial]
values = [0, 0]
"""

SYMBOLIC_LAG = """
[system]
states = ["T"]
matrix = [["-k"]]
forcing = ["k"]
[initial]
values = [0]
[parameters.k]
assume = ["positive"]
"""


def test_summary_gains_stability_time_constant_final_values_and_peaks(tmp_path):
    inputs = _write(tmp_path / "in", {"lag.toml": LAG, "ringing.toml": RINGING, "symbolic.toml": SYMBOLIC_LAG})
    out = tmp_path / "out"
    report = batch([inputs], jobs=1, out_dir=out, keep_solutions=False)
    assert report.exit_code == 0, [r.message for r in report.results]
    lag, ringing, symbolic = report["lag"], report["ringing"], report["symbolic"]
    # common practice: T' = -T/tau + u has tau = 1/2 here and settles at the steady state -A^-1 f = 1
    assert lag.stability == "asymptotically stable" and lag.slowest_time_constant == 0.5
    assert lag.final_values == (("T", 1.0),) and lag.peaks == ()  # a first-order lag never overshoots
    # from memory: K. Ogata, Modern Control Engineering, 5th ed., sec. 5-3: peak time pi/omega_d and
    # maximum overshoot exp(-zeta pi / sqrt(1 - zeta^2)) of an underdamped second-order step response
    peak = dict((name, (when, value)) for name, when, value in ringing.peaks)
    assert ringing.slowest_time_constant == 1.0
    assert peak["x"][0] == pytest.approx(math.pi / 2, rel=1e-9)
    assert peak["x"][1] == pytest.approx(1 + math.exp(-math.pi / 2), rel=1e-9)
    assert dict(ringing.final_values) == {"x": 1.0, "v": 0.0}
    # with a symbol and no value: the class and the time constant in k, no figures over time
    assert symbolic.stability == "asymptotically stable" and symbolic.slowest_time_constant == "1/k"
    assert symbolic.final_values == () and symbolic.peaks == ()

    with open(out / "summary.csv", newline="") as fh:
        rows = {r["case"]: r for r in csv.DictReader(fh)}
    assert rows["lag"]["stability"] == "asymptotically stable" and rows["lag"]["slowest_time_constant"] == "0.5"
    assert rows["lag"]["final_values"] == "T = 1" and rows["lag"]["peaks"] == ""
    assert rows["ringing"]["peaks"].startswith("x = 1.20788 at t = 1.5708")
    assert rows["symbolic"]["final_values"] == "" and rows["symbolic"]["slowest_time_constant"] == "1/k"
    data = {c["case"]: c for c in json.loads((out / "summary.json").read_text())["cases"]}
    assert data["ringing"]["final_values"] == {"x": 1.0, "v": 0.0}
    assert data["ringing"]["peaks"]["x"]["time"] == pytest.approx(math.pi / 2, rel=1e-9)
    assert data["symbolic"]["peaks"] == {} and data["lag"]["slowest_time_constant"] == 0.5
    # the cache gives the same record back
    again = batch([inputs], jobs=1, out_dir=out)
    assert again["ringing"].cached and again["ringing"].peaks == ringing.peaks


def test_a_reading_that_fails_leaves_its_columns_blank():
    from derive.batch.records import reading_figures

    sol = solve([[-2]], [2], x0=[0])
    assert reading_figures(sol, seconds=30)["final_values"] == (("x_1", 1.0),)
    # a record the reading cannot read (no system): blank columns, no exception
    assert reading_figures(replace(sol, system=None), seconds=30) == {}
    assert CaseResult("a", "ok").row()["final_values"] == {} and CaseResult("a", "ok").stability == ""


def test_batch_substitute_puts_the_values_into_every_case(tmp_path):
    text = SYMBOLIC_LAG.replace('assume = ["positive"]', 'assume = ["positive"]\nvalue = 4')
    inputs = _write(tmp_path / "in", {"lag.toml": text})
    res = CliRunner().invoke(cli, ["batch", str(inputs), "-o", str(tmp_path / "o"), "--no-pdf", "-j", "1", "--substitute"])
    assert res.exit_code == 0, res.output
    row = json.loads((tmp_path / "o" / "summary.json").read_text())["cases"][0]
    assert row["eigenvalues"] == ["-4"] and row["slowest_time_constant"] == 0.25
    symbolic = batch([inputs], jobs=1, out_dir=tmp_path / "s")
    assert symbolic["lag"].eigenvalues == ("-k",)
    # the choice is part of the cache key
    case = load_case(inputs / "lag.toml")
    assert case_key(case, formats=("latex",), pdf=False, substitute=True) != case_key(case, formats=("latex",), pdf=False)
