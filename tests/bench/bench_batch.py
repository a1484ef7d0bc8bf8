"""Benchmark of ``derive batch``: pool speed-up and the cost of a re-run.

Not part of the test run (the file name does not start with ``test_``):

    .venv/bin/python tests/bench/bench_batch.py [--cases 200]

It writes N small invented cases (2x2 and 3x3 triangular systems with
distinct integer eigenvalues, some with forcing) into a temporary folder,
runs the batch with 1 and with 2 workers into fresh output folders (LaTeX
sheets, no PDF: TeX time would swamp the solver's), then runs the 2-worker
batch again unchanged and reports how long the re-run takes compared with
the first run.  The target on 2 cores is a speed-up of at least 1.7.
"""

from __future__ import annotations

import argparse
import os
import random
import tempfile
import time
from pathlib import Path

from derive.batch import batch

_FORCING = ("0", "1", "sin(t)", "exp(-t)", "t")


def _case_text(rng: random.Random, n: int) -> str:
    diag = rng.sample(range(-6, 0), n)
    rows = []
    for i in range(n):
        row = [0] * n
        row[i] = diag[i]
        for j in range(i + 1, n):
            row[j] = rng.randint(-2, 2)
        rows.append(row)
    matrix = ", ".join("[" + ", ".join(str(v) for v in r) + "]" for r in rows)
    forcing = ", ".join(f'"{rng.choice(_FORCING)}"' for _ in range(n))
    values = ", ".join(str(rng.randint(-3, 3)) for _ in range(n))
    return f"[system]\nmatrix = [{matrix}]\nforcing = [{forcing}]\n\n[initial]\nvalues = [{values}]\n"


def write_cases(folder: Path, count: int, *, seed: int = 7) -> None:
    """``count`` case files named bench-000.toml ...; the same files for the same seed."""
    rng = random.Random(seed)
    folder.mkdir(parents=True, exist_ok=True)
    for i in range(count):
        (folder / f"bench-{i:03d}.toml").write_text(_case_text(rng, rng.choice((2, 2, 3))), encoding="utf-8")


def _timed(folder: Path, out: Path, jobs: int) -> tuple[float, int, int, float]:
    """Wall time, cases ok, cases reused, and how busy the workers were (1.0: never idle)."""
    start = time.perf_counter()
    report = batch([folder], jobs=jobs, timeout=60, out_dir=out, pdf=False, keep_solutions=False, progress=False)
    wall = time.perf_counter() - start
    busy = sum(r.seconds for r in report.results if not r.cached) / (wall * jobs)
    return wall, report.ok_count, report.cached_count, busy


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--cases", type=int, default=200)
    parser.add_argument("--repeat", type=int, default=2, help="alternate the 1- and 2-worker runs; keep the best of each")
    args = parser.parse_args()
    load_before = os.getloadavg()[0]
    best = {1: float("inf"), 2: float("inf")}
    ok = {1: 0, 2: 0}
    busy = {1: 0.0, 2: 0.0}
    with tempfile.TemporaryDirectory(prefix="derive-bench-") as tmp:
        root = Path(tmp)
        write_cases(root / "cases", args.cases)
        # Alternating keeps a change in the machine's load from favouring one side.
        for r in range(args.repeat):
            for jobs in (1, 2):
                out = root / f"out-{jobs}-{r}"
                seconds, ok[jobs], _, used = _timed(root / "cases", out, jobs)
                if seconds < best[jobs]:
                    best[jobs], busy[jobs] = seconds, used
                last = out
        first = best[2]
        t3, ok3, cached, _ = _timed(root / "cases", last, 2)
    t1, t2 = best[1], best[2]
    print(f"{args.cases} cases, LaTeX sheets, no PDF; best of {args.repeat} alternating runs")
    print(f"load average before/after: {load_before:.2f} / {os.getloadavg()[0]:.2f} on {os.cpu_count()} CPUs")
    print(f"--jobs 1: {t1:7.2f} s  ({ok[1]} ok, {t1 / args.cases * 1000:.0f} ms per case, workers busy {busy[1]:.0%})")
    print(f"--jobs 2: {t2:7.2f} s  ({ok[2]} ok, workers busy {busy[2]:.0%})")
    print(f"speed-up: {t1 / t2:.2f} (target >= 1.7 on 2 otherwise idle cores; other load slows each case down)")
    print(f"re-run unchanged: {t3:.2f} s ({cached} of {ok3} reused); re-run / first run = {t3 / first:.3f}")


if __name__ == "__main__":
    main()
