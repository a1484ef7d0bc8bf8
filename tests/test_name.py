"""The tool meets its users under one name, eigensheet (the Python package is `derive`).

Every screen, command and output names the program `eigensheet`; no console
script called `derive` is installed.  The outputs of the demo, a check report
and a batch index, in every format, are searched for the old name as a word.
"""

from __future__ import annotations

import re
import shutil
import subprocess
import sys
from pathlib import Path

import pytest
from click.testing import CliRunner

import derive
from derive.cli import cli

DATA = Path(__file__).parent / "data" / "claims"
# "derive" as a word of its own: not "derived", "derives", nor the dotted module
# paths of the Python API (derive.solve), which the program never writes either
OLD_NAME = re.compile(r"(?<![\w.])derive(?![\w.(])", re.IGNORECASE)
FORMATS = ("latex", "markdown", "text", "json")


def _scripts_dir() -> Path:
    return Path(sys.executable).parent


def test_the_installed_command_is_eigensheet_and_derive_is_gone() -> None:
    bin_dir = _scripts_dir()
    assert (bin_dir / "eigensheet").exists() or shutil.which("eigensheet"), "the eigensheet console script is installed"
    assert not (bin_dir / "derive").exists(), "no console script named derive is installed (no alias)"
    res = subprocess.run([str(bin_dir / "eigensheet"), "--help"], capture_output=True, text=True, timeout=120)
    assert res.returncode == 0 and res.stdout.startswith("Usage: eigensheet ")
    for command in ("new", "solve", "demo", "check", "batch"):
        assert command in res.stdout


def test_the_installed_command_runs_the_demo(tmp_path: Path) -> None:
    res = subprocess.run(
        [str(_scripts_dir() / "eigensheet"), "demo", "-o", str(tmp_path), "--no-pdf"],
        capture_output=True, text=True, timeout=300,
    )
    assert res.returncode == 0, res.stderr
    assert (tmp_path / "demo.tex").is_file()


def test_version_and_errors_use_the_name() -> None:
    runner = CliRunner()
    res = runner.invoke(cli, ["--version"], prog_name="eigensheet")
    assert res.exit_code == 0 and res.output.startswith(f"eigensheet, version {derive.__version__}")
    res = runner.invoke(cli, ["solve", "no-such-case.toml"])
    assert res.exit_code == 2
    assert "eigensheet: error:" in res.output and "derive:" not in res.output


def _outputs_mentioning_old_name(folder: Path) -> list[str]:
    found = []
    for path in sorted(folder.rglob("*")):
        if path.is_file() and path.suffix in (".tex", ".md", ".txt", ".json", ".csv"):
            for k, line in enumerate(path.read_text(encoding="utf-8").splitlines(), 1):
                if OLD_NAME.search(line):
                    found.append(f"{path.name}:{k}: {line.strip()[:120]}")
    return found


@pytest.mark.slow
def test_no_output_names_the_program_derive(tmp_path: Path) -> None:
    runner = CliRunner()
    fmt_args = [a for f in FORMATS for a in ("--format", f)]
    res = runner.invoke(cli, ["demo", "-o", str(tmp_path / "demo"), "--no-pdf", *fmt_args])
    assert res.exit_code == 0, res.output
    res = runner.invoke(
        cli,
        ["check", str(DATA / "tanks.case.toml"), "--claim", str(DATA / "tanks_ok.claim.toml"),
         "-o", str(tmp_path / "check"), "--no-pdf", *fmt_args],
    )
    assert res.exit_code == 0, res.output
    cases = tmp_path / "cases"
    cases.mkdir()
    shutil.copy(DATA / "rc.case.toml", cases / "rc.toml")
    res = runner.invoke(cli, ["batch", str(cases), "-o", str(tmp_path / "batch"), "--no-pdf", "-j", "1"])
    assert res.exit_code == 0, res.output
    written = [p for p in tmp_path.rglob("*") if p.is_file()]
    # every kind of output was written: sheets in four formats, the check report, the index and summaries
    for suffix in (".tex", ".md", ".txt", ".json", ".csv"):
        assert any(p.suffix == suffix for p in written), suffix
    assert (tmp_path / "batch" / "index.tex").is_file()
    assert "eigensheet" in (tmp_path / "demo" / "demo.tex").read_text(encoding="utf-8")
    assert _outputs_mentioning_old_name(tmp_path) == []
