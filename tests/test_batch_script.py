"""The README's batch example, run the ways a user runs it: a script file, ``python -c``, stdin.

None of them has an ``if __name__ == "__main__":`` guard, as in the README.
A worker that re-ran the caller's ``__main__`` would start the batch again
and die, and every case would be reported as crashed.  The snippet is read
from README.md itself, so the test follows the README; it is run in a
folder of its own that holds a ``cases/`` folder of small invented cases.
"""

from __future__ import annotations

import json
import re
import subprocess
import sys
from pathlib import Path

import pytest

README = Path(__file__).resolve().parents[1] / "README.md"

# Two invented scenarios: a cooling pair with distinct real eigenvalues and a
# lightly damped oscillator (complex pair), both with initial values.
CASES = {
    "cooling.toml": '[system]\nstates = ["T1", "T2"]\nmatrix = [[-3, 1], [0, -1]]\n[initial]\nvalues = [2, 1]\n',
    "sway.toml": '[system]\nstates = ["x", "v"]\nmatrix = [[0, 1], [-5, -2]]\n[initial]\nvalues = [1, 0]\n',
}

# Printed after the README's lines: the statuses of the second report (cases built in a loop).
TAIL = '\nimport json\nprint("LOOP " + json.dumps({r.name: str(r.status) for r in report.results}))\n'


def _snippet() -> str:
    text = README.read_text(encoding="utf-8")
    found = re.search(r"From a script:\s*```python\n(.*?)```", text, re.S)
    assert found, "README.md has no 'From a script:' python block"
    code = found.group(1)
    assert "derive.batch(" in code and "__main__" not in code
    return code


@pytest.mark.parametrize("how", ["script", "-c", "stdin"])
def test_readme_batch_snippet_runs_without_a_main_guard(tmp_path, how):
    cases = tmp_path / "cases"
    cases.mkdir()
    for name, text in CASES.items():
        (cases / name).write_text(text, encoding="utf-8")
    code = _snippet() + TAIL
    if how == "script":
        (tmp_path / "run_batch.py").write_text(code, encoding="utf-8")
        args, stdin = [sys.executable, "run_batch.py"], None
    elif how == "-c":
        args, stdin = [sys.executable, "-c", code], None
    else:
        args, stdin = [sys.executable, "-"], code
    proc = subprocess.run(args, cwd=tmp_path, input=stdin, capture_output=True, text=True, timeout=600)
    assert proc.returncode == 0, proc.stderr

    lines = proc.stdout.splitlines()
    # The README's loop prints "name status max_rel_gap" for every case of the folder.
    first = {line.split()[0]: line.split()[1] for line in lines if not line.startswith("LOOP ")}
    assert first == {"cooling": "ok", "sway": "ok"}, proc.stdout + proc.stderr
    loop = json.loads(next(line for line in lines if line.startswith("LOOP "))[5:])
    assert loop == {"k1": "ok", "k2": "ok", "k3": "ok"}, proc.stdout + proc.stderr
    summary = json.loads((tmp_path / "results" / "summary.json").read_text())
    assert summary["complete"] is True and summary["counts"]["ok"] == 2 and summary["counts"]["crashed"] == 0
    for case in summary["cases"]:
        for output in case["outputs"]:
            assert (tmp_path / "results" / output).is_file()
