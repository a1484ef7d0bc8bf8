"""The command line end to end: exit codes, messages, files written, nothing else.

The hostile corpus of tests/test_hostile.py is replayed through `derive solve`:
each case must exit 2 with a message naming the key, print no traceback,
create no canary and write no output.
"""

from __future__ import annotations

import os
import re
import subprocess
import sys
from pathlib import Path

import pytest
from click.testing import CliRunner

from derive.cli import cli
from test_hostile import CANARY, CORPUS

ROOT = Path(__file__).resolve().parent.parent

GOOD = """
[sheet]
title = "Test: two tanks & a pump (50% duty)"
[system]
equations = ["h1' = -h1/4 + q/2", "h2' = h1/4 - h2/8"]
[initial]
values = [0, 1]
[parameters.q]
assume = ["positive"]
value = 2
"""


def run(args, **kw):
    return CliRunner().invoke(cli, args, catch_exceptions=False, **kw)


def test_solve_writes_sheet_and_exits_zero(tmp_path: Path) -> None:
    case = tmp_path / "tanks.toml"
    case.write_text(GOOD)
    out = tmp_path / "out"
    res = run(["solve", str(case), "-o", str(out), "--no-pdf", "--format", "latex", "--format", "json"])
    assert res.exit_code == 0, res.output
    assert "verified" in res.output
    tex = (out / "tanks.tex").read_text()
    assert "\\documentclass" in tex
    assert "two tanks \\& a pump (50\\% duty)" in tex
    assert (out / "tanks-body.tex").exists()
    assert (out / "tanks.json").exists()
    assert not [p for p in out.iterdir() if p.name.startswith(".")]


def test_demo_writes_into_out(tmp_path: Path) -> None:
    res = run(["demo", "-o", str(tmp_path), "--no-pdf"])
    assert res.exit_code == 0, res.output
    assert (tmp_path / "demo.tex").exists()
    assert "T1(t)" in res.output


def test_new_writes_a_template_that_solves(tmp_path: Path) -> None:
    res = run(["new", "mycase", "-o", str(tmp_path)])
    assert res.exit_code == 0, res.output
    res = run(["solve", str(tmp_path / "mycase.toml"), "-o", str(tmp_path / "o"), "--no-pdf"])
    assert res.exit_code == 0, res.output
    again = run(["new", "mycase", "-o", str(tmp_path)])
    assert again.exit_code == 2


@pytest.mark.parametrize("name", ["../x", "a/b", ".hidden", ""])
def test_new_refuses_names_that_leave_the_folder(name: str, tmp_path: Path) -> None:
    res = run(["new", name, "-o", str(tmp_path)])
    assert res.exit_code == 2
    assert list(tmp_path.iterdir()) == []


@pytest.mark.parametrize("case", CORPUS, ids=[c.id for c in CORPUS])
def test_hostile_case_through_the_cli(case, tmp_path: Path) -> None:
    canary = tmp_path / "canary"
    path = tmp_path / "hostile.toml"
    path.write_text(case.text.replace(CANARY, str(canary)))
    out = tmp_path / "out"
    res = CliRunner().invoke(cli, ["solve", str(path), "-o", str(out), "--no-pdf"])
    assert res.exit_code == 2, res.output
    assert "Traceback" not in res.output
    assert "error:" in res.output
    if case.key:
        assert case.key in res.output
    assert not canary.exists()
    assert not out.exists() or list(out.iterdir()) == []


def test_missing_file_is_bad_input(tmp_path: Path) -> None:
    res = run(["solve", str(tmp_path / "nope.toml")])
    assert res.exit_code == 2


# The alarm can land inside a garbage-collection callback (hypothesis installs one in
# this test process), where Python reports the exception as unraisable instead of
# raising it; the repeating alarm then stops the case at the next bytecode.
@pytest.mark.filterwarnings("ignore::pytest.PytestUnraisableExceptionWarning")
def test_time_limit_exits_three(tmp_path: Path) -> None:
    # an 8x8 with symbolic rates cannot finish in 0.01 s
    rows = []
    for i in range(8):
        row = ["0"] * 8
        row[i] = f"-k{i}"
        if i:
            row[i - 1] = f"k{i - 1}"
        rows.append(row)
    params = "\n".join(f"[parameters.k{i}]\nassume = [\"positive\"]" for i in range(8))
    text = "[system]\nmatrix = [" + ", ".join("[" + ", ".join(f'"{e}"' for e in r) + "]" for r in rows) + "]\n" + params
    case = tmp_path / "slow.toml"
    case.write_text(text)
    res = run(["solve", str(case), "-o", str(tmp_path / "o"), "--no-pdf", "--timeout", "0.01"])
    assert res.exit_code == 3
    assert "time limit" in res.output
    assert not (tmp_path / "o").exists() or list((tmp_path / "o").iterdir()) == []


def test_a_swallowed_time_limit_fires_again() -> None:
    # a broad "except Exception" (sympy has some) must not turn the limit off
    from derive.errors import TimeLimitError
    from derive.limits import time_limit

    swallowed = 0
    with pytest.raises(TimeLimitError):
        with time_limit(0.05):
            try:
                while True:
                    pass
            except Exception:  # noqa: BLE001 - the point of the test
                swallowed += 1
            while True:  # the work goes on after the swallowed error
                pass
    assert swallowed == 1


def test_help_documents_exit_codes() -> None:
    res = run(["solve", "--help"])
    assert "Exit codes" in res.output and "3 time limit" in res.output


def test_module_entry_point_runs() -> None:
    env = dict(os.environ)
    res = subprocess.run([sys.executable, "-m", "derive", "--help"], capture_output=True, text=True, env=env, timeout=120)
    assert res.returncode == 0
    # python -m derive is the same command: its usage line names it eigensheet
    assert res.stdout.startswith("Usage: eigensheet ")
    assert "solve" in res.stdout


MOUNT = """
[sheet]
title = "Instrument mount"

[system]
equations = ["y' = v", "v' = -(k/m)*y - (c/m)*v"]

[initial]
values = [1, 0]

[parameters.k]
assume = ["positive"]
[parameters.m]
assume = ["positive"]
[parameters.c]
assume = ["positive"]
"""


def test_two_case_runs_into_one_folder_keep_both_sheets(tmp_path: Path) -> None:
    (tmp_path / "mount.toml").write_text(MOUNT)
    out = tmp_path / "out"
    for relation in ("c^2 = 4*k*m", "c^2 < 4*k*m"):
        r = run(["solve", str(tmp_path / "mount.toml"), "-o", str(out), "--no-pdf", "--case", relation])
        assert r.exit_code == 0, r.output
    sheets = sorted(p.name for p in out.glob("*.tex") if not p.name.endswith("-body.tex"))
    assert sheets == ["mount-case-cpow2-eq-4km.tex", "mount-case-cpow2-lt-4km.tex"]
    # the critically damped sheet is the Jordan case; the regime's sheet is not
    assert "Jordan" in (out / "mount-case-cpow2-eq-4km.tex").read_text()
    assert (out / "mount-case-cpow2-eq-4km.tex").read_text() != (out / "mount-case-cpow2-lt-4km.tex").read_text()


# ---------------------------------------------------------------------------
# The terminal summary speaks mathematics (issue 16 item 10), in a short form

#: program notation that must not reach the terminal: powers, star products, sympy's constructors
PROGRAM_NOTATION = ("**", "CRootOf", "Piecewise", "Heaviside", "!=")
STAR_PRODUCT = re.compile(r"[\w)]\s*\*\s*[\w(]")

#: a cubic with one real root and a complex pair, lambda^3 + lambda + 3 (our own numbers): indexed roots
LAG = """
[sheet]
title = "Three-stage lag with feedback"
[system]
matrix = [[0, 1, 0], [0, 0, 1], [-3, -1, 0]]
forcing = [0, 0, 1]
[initial]
t0 = 0
values = [1, 0, 0]
"""


def _summary(res) -> str:
    return "\n".join(line for line in res.output.splitlines() if not line.startswith("wrote "))


def _no_program_notation(text: str) -> None:
    for form in PROGRAM_NOTATION:
        assert form not in text, form
    assert not STAR_PRODUCT.search(text), STAR_PRODUCT.search(text)


def test_the_demo_summary_shows_its_exact_short_solution(tmp_path: Path) -> None:
    res = run(["demo", "-o", str(tmp_path), "--no-pdf"])
    assert res.exit_code == 0, res.output
    text = _summary(res)
    _no_program_notation(text)
    assert "eigenvalues: -1/2, -1/5" in text
    # exact, in the parameter Q, collected by mode: no decimals, no pointer to a file
    t1 = next(line for line in text.splitlines() if line.strip().startswith("T1(t)"))
    assert t1.strip().startswith("T1(t) = ") and "Q" in t1 and "exp(-t/2)" in t1 and "exp(-t/5)" in t1
    assert "≈" not in text and "full exact form" not in text
    assert text.splitlines()[-1].startswith("verified: residual: zero (exact)")


def test_an_indexed_root_summary_names_the_roots_gives_decimals_and_the_file(tmp_path: Path) -> None:
    case = tmp_path / "lag.toml"
    case.write_text(LAG)
    res = run(["solve", str(case), "-o", str(tmp_path / "out"), "--no-pdf", "--format", "text"])
    assert res.exit_code == 0, res.output
    text = _summary(res)
    _no_program_notation(text)
    lines = text.splitlines()
    # a conjugate pair on one line
    assert lines[0] == "eigenvalues: λ_1 ≈ -1.2134, λ_2, λ_3 ≈ 0.60671 ± 1.4506 i"
    assert "the roots of q(λ) = λ^3 + λ + 3 = 0" in lines[1]
    # each state in decimals (the check of x(0) = (1, 0, 0): 0.3333 + 0.3043 + 0.3624 = 1)
    x1 = next(line for line in lines if line.strip().startswith("x1(t)"))
    assert x1.strip().startswith("x1(t) ≈ 0.3333 + 0.3043 exp(-1.213 t) + 0.3624 exp(0.6067 t) cos(1.451 t)")
    assert f"the full exact form is in {tmp_path / 'out' / 'lag.txt'}" in text
    assert "verified" in lines[-1]
    assert len(text) < 1200, len(text)


def test_conditions_of_one_reason_share_a_line_written_as_mathematics(tmp_path: Path) -> None:
    res = run(["solve", str(ROOT / "tests" / "data" / "sheets" / "sym4.toml"), "-o", str(tmp_path), "--no-pdf"])
    assert res.exit_code == 0, res.output
    text = _summary(res)
    _no_program_notation(text)
    holds = [line for line in text.splitlines() if line.strip().startswith("holds when")]
    assert len(holds) == 2, holds
    assert any("a - b ≠ 0, a - c ≠ 0" in line and "distinct" in line for line in holds)
    # short states exactly, in the parameters
    assert "h1(t) = q/a - q exp(-a t)/a" in text


def test_a_piecewise_summary_gives_each_interval_in_decimals(tmp_path: Path) -> None:
    res = run(["solve", str(ROOT / "tests" / "data" / "sheets" / "compartments.toml"), "-o", str(tmp_path), "--no-pdf"])
    assert res.exit_code == 0, res.output
    text = _summary(res)
    _no_program_notation(text)
    c1 = next(line for line in text.splitlines() if line.strip().startswith("c1(t)"))
    # on 1 <= t < 3: 10 - (10/3) e^{-2(t-1)/5} - (20/3) e^{-(t-1)/10}, each mode from the interval's start,
    # as the sheet's decimal line writes it
    assert "10 - 3.333 exp(-0.4 (t - 1)) - 6.667 exp(-0.1 (t - 1)) for 1 ≤ t < 3" in c1
    assert c1.count(" for ") == 4


@pytest.mark.slow
def test_the_six_state_chain_summary_is_short(tmp_path: Path) -> None:
    res = run(["solve", str(ROOT / "tests" / "data" / "sheets" / "carts_indexed.toml"), "-o", str(tmp_path), "--no-pdf"])
    assert res.exit_code == 0, res.output
    text = _summary(res)
    _no_program_notation(text)
    # 199 kB with sympy's own printing (each indexed root's degree-30 polynomial in every term)
    assert len(text) < 3000, len(text)
    assert sum(1 for line in text.splitlines() if "(t) ≈ " in line) == 6
    assert "carts_indexed.tex" in text


def test_a_reader_that_stops_early_does_not_stop_the_files(tmp_path: Path) -> None:
    case = tmp_path / "lag.toml"
    case.write_text(LAG)
    proc = subprocess.Popen([sys.executable, "-m", "derive", "solve", str(case), "-o", str(tmp_path / "out"), "--no-pdf",
                             "--format", "text"], stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
    first = proc.stdout.readline()  # type: ignore[union-attr]
    proc.stdout.close()  # type: ignore[union-attr]  # as `| head -1` does
    err = proc.stderr.read()  # type: ignore[union-attr]
    assert proc.wait(timeout=300) == 0, err
    assert first.startswith("eigenvalues: ")
    assert "internal error" not in err and "BrokenPipe" not in err
    assert (tmp_path / "out" / "lag.txt").exists()
