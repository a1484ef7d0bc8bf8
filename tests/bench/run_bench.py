"""Benchmark derive.solve against sympy's dsolve on the corpus in corpus.py.

    python tests/bench/run_bench.py                 # the whole corpus
    python tests/bench/run_bench.py --quick         # about ten small cases
    python tests/bench/run_bench.py --only j3_res_ivp --timeout 60 --json out.json

Each (case, solver) pair runs in its own process, a fresh interpreter by
default (``--start spawn``) that imports sympy, scipy and derive before any
timer starts: a fresh sympy cache, its own memory high-water mark, and a
process the runner can kill when it overruns.  ``--start fork`` is quicker to
run but charges each solve the copy-on-write faults of touching the parent's
heap (about 4,000 minor faults, 10 to 15 ms, in the first solve of a forked
child), a cost of the harness that neither solver has in a process of its
own.  Inside the child the solve and the check each get their own
SIGALRM limit; the parent's hard deadline is the backstop for code that does
not return to the interpreter.

Both answers go through the same checker (``check_solution``): x' - A x - f
is expanded and, when small enough, simplified to zero; what simplification
cannot settle is decided by a numeric identity test at 40 digits at three
sample points.  The table says which way each check was settled ("exact" or
"num").  A general solution must also carry n independent constants, so a
particular solution cannot pass as a general one.

The figures are targets, not asserts: this file has no test functions and
pytest does not collect it.
"""

from __future__ import annotations

import os

# one core per child: BLAS threads would blur the per-case times (set before numpy loads)
for _var in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_var, "1")

import argparse  # noqa: E402
import functools  # noqa: E402
import json  # noqa: E402
import multiprocessing as mp  # noqa: E402
import platform  # noqa: E402
import resource  # noqa: E402
import statistics  # noqa: E402
import sys  # noqa: E402
import time  # noqa: E402
from dataclasses import dataclass, field  # noqa: E402
from multiprocessing.connection import wait  # noqa: E402
from pathlib import Path  # noqa: E402
from typing import Any, Callable, Sequence  # noqa: E402

_TESTS = Path(__file__).resolve().parent.parent
if str(_TESTS) not in sys.path:
    sys.path.insert(0, str(_TESTS))

import scipy.integrate  # noqa: E402,F401 - derive.verify imports it lazily; load it once, before the forks
import sympy as sp  # noqa: E402

import derive  # noqa: E402
import derive.pipeline  # noqa: E402,F401 - loads the solving modules whose stages are timed
from bench.corpus import CORPUS, QUICK, TARGET_8X8, BenchCase, by_name  # noqa: E402
from derive.errors import DeriveError, InputError, TimeLimitError, UnsupportedError, VerificationError  # noqa: E402
from derive.limits import time_limit  # noqa: E402

__all__ = [
    "SOLVERS",
    "START_METHODS",
    "STAGES",
    "CheckResult",
    "check_solution",
    "solve_with_derive",
    "solve_with_dsolve",
    "run_child",
    "run_all",
    "summarize",
    "targets",
    "main",
]

SOLVERS: tuple[str, ...] = ("derive", "dsolve")
START_METHODS: tuple[str, ...] = ("spawn", "fork")
#: derive's stages in pipeline order; "other" is the rest of derive.solve (input, decoupling).
STAGES: tuple[str, ...] = ("decompose", "integrate", "recombine", "verify", "render", "other")

DEFAULT_TIMEOUT = 30.0
#: numeric identity threshold, relative to the size of the terms (40-digit evaluation)
NUMERIC_ZERO = 1e-25
#: above this many operations simplify() is skipped: it can run for minutes on dsolve's output
SIMPLIFY_OPS = 300
SAMPLE_T = (sp.Rational(3, 7), sp.Rational(13, 11), sp.Rational(-5, 9))
SAMPLE_C = (sp.Rational(1), sp.Rational(-2, 3), sp.Rational(3, 5), sp.Rational(5, 4), sp.Rational(-1, 2),
            sp.Rational(2, 7), sp.Rational(-7, 5), sp.Rational(4, 9))

T = sp.Symbol("t")

# ---------------------------------------------------------------------------
# the common checker


@dataclass(frozen=True)
class CheckResult:
    """Outcome of checking one answer: verified, how, and why not."""

    verified: bool
    method: str  # "exact", "num" (numeric identity), or "" when not verified
    detail: str = ""


def _sample_points(case: BenchCase, constants: Sequence[sp.Symbol]) -> list[dict[sp.Symbol, sp.Expr]]:
    """Exact sample values for t, the constants and the parameters.

    The parameters take the case's own values at the first point and other
    values of the same sign at the others, so an identity that holds only for
    one parameter value is not mistaken for zero.
    """
    points = []
    for i, tv in enumerate(SAMPLE_T):
        pt: dict[sp.Symbol, sp.Expr] = {T: tv}
        for j, cs in enumerate(constants):
            pt[cs] = SAMPLE_C[(i + j) % len(SAMPLE_C)]
        for j, (s, v) in enumerate(case.params):
            pt[s] = v if i == 0 else v * sp.Rational(7 + i + j, 6 + i)
        points.append(pt)
    return points


def _root_decimals(*exprs: sp.Expr) -> dict:
    """sympy's own decimals of the indexed roots, once (evalf re-refines a CRootOf on every call)."""
    roots = set().union(*(e.atoms(sp.CRootOf) for e in exprs))
    return {r: r.eval_approx(50) for r in roots}


def _numeric_zero(expr: sp.Expr, scale_terms: Sequence[sp.Expr], points) -> tuple[bool, str]:
    roots = _root_decimals(expr, *scale_terms)
    if roots:
        expr = expr.xreplace(roots)
        scale_terms = [s.xreplace(roots) for s in scale_terms]
    for pt in points:
        try:
            val = abs(complex(sp.N(expr.xreplace(pt), 40)))
            scale = max([1.0] + [abs(complex(sp.N(s.xreplace(pt), 20))) for s in scale_terms])
        except (TypeError, ValueError) as exc:
            return False, f"not a number at a sample point ({exc})"
        if not val / scale < NUMERIC_ZERO:
            return False, f"residual {val / scale:.3g} (relative) at t = {pt[T]}"
    return True, ""


def _zero(expr: sp.Expr, scale_terms: Sequence[sp.Expr], points) -> tuple[bool, str, str]:
    """(is zero, method, detail): exact when expansion or simplification settles it."""
    ex = sp.expand(expr)
    if ex == 0:
        return True, "exact", ""
    # simplify() on indexed roots can run for minutes: those go to the numeric test
    if not ex.has(sp.CRootOf) and sp.count_ops(ex) <= SIMPLIFY_OPS and sp.simplify(ex) == 0:
        return True, "exact", ""
    ok, detail = _numeric_zero(ex, scale_terms, points)
    return ok, ("num" if ok else ""), detail


def check_solution(case: BenchCase, x: Sequence[sp.Expr], constants: Sequence[sp.Symbol]) -> CheckResult:
    """Substitute x into x' = A x + f (and x(t0) = x0); the same check for both solvers.

    >>> from bench.corpus import by_name
    >>> c = by_name("d2_none_gen")
    >>> check_solution(c, [sp.Integer(0), sp.Integer(0)], ()).verified  # zero solves it, but is not general
    False
    """
    xm = sp.Matrix(list(x))
    n = case.n
    if xm.shape != (n, 1):
        return CheckResult(False, "", f"expected {n} components, found {xm.shape[0]}")
    if xm.has(sp.Integral) or xm.atoms(sp.core.function.AppliedUndef) or xm.has(sp.Derivative):
        return CheckResult(False, "", "unevaluated integrals or unknown functions left in the answer")
    extra = xm.free_symbols - {T} - set(constants) - set(case.param_values)
    if extra:
        return CheckResult(False, "", "unexpected symbols: " + ", ".join(sorted(s.name for s in extra)))
    points = _sample_points(case, constants)
    A = sp.Matrix(case.A)
    f = sp.Matrix(list(case.f))
    dx = xm.diff(T)
    Ax = A * xm
    methods = []
    for i in range(n):
        ok, how, detail = _zero(dx[i] - Ax[i] - f[i], (dx[i], Ax[i], f[i]), points)
        if not ok:
            return CheckResult(False, "", f"x{i + 1}' - (A x + f){i + 1} is not zero: {detail or 'simplify failed'}")
        methods.append(how)
    if case.is_ivp:
        if constants:
            return CheckResult(False, "", "free constants left in an initial value problem")
        at0 = xm.subs(T, case.t0)
        for i in range(n):
            ok, how, detail = _zero(at0[i] - case.x0[i], (case.x0[i],), points)
            if not ok:
                return CheckResult(False, "", f"x{i + 1}(t0) differs from x0: {detail or 'simplify failed'}")
            methods.append(how)
    else:
        # a general solution: n constants whose coefficient vectors are independent
        if len(constants) != n:
            return CheckResult(False, "", f"a general solution needs {n} constants, found {len(constants)}")
        jac = xm.jacobian(sp.Matrix(list(constants)))
        pt = {k: v for k, v in points[0].items() if k not in set(constants)}
        try:
            det = complex(sp.N(jac.xreplace(_root_decimals(jac)).xreplace(pt).evalf(30).det(method="berkowitz"), 20))
        except (TypeError, ValueError):
            return CheckResult(False, "", "the constants' Jacobian is not a number")
        if abs(det) < 1e-12:
            return CheckResult(False, "", "the constants are not independent (a particular, not a general solution)")
    method = "exact" if all(m == "exact" for m in methods) else "num"
    return CheckResult(True, method)


# ---------------------------------------------------------------------------
# the two solvers


#: (module, name, stage): the stage functions as the solving modules import them
_STAGE_PATCHES: tuple[tuple[str, str, str], ...] = (
    ("derive.solving.stages", "decompose", "decompose"),
    ("derive.solving.methods.closed", "solve_blocks", "integrate"),
    ("derive.solving.methods.intervals", "solve_blocks", "integrate"),
    ("derive.solving.methods.closed", "recombine", "recombine"),
    ("derive.solving.methods.intervals", "recombine", "recombine"),
    ("derive.solving.assembly", "verify", "verify"),
    ("derive.solving.assembly", "verify_pieces", "verify"),
)


def _stage_timer(name: str, fn: Callable, sink: dict[str, float]) -> Callable:
    @functools.wraps(fn)
    def timed(*args: Any, **kwargs: Any) -> Any:
        start = time.perf_counter()
        try:
            return fn(*args, **kwargs)
        finally:
            sink[name] = sink.get(name, 0.0) + time.perf_counter() - start

    return timed


def solve_with_derive(case: BenchCase) -> tuple[sp.Matrix, tuple[sp.Symbol, ...], dict[str, Any]]:
    """derive.solve on the case, with its stages timed (the child's copy of the pipeline is patched).

    Returns (x, constants, extra) where extra holds the stage times, the total
    solve time and the LaTeX render time.
    """
    stages: dict[str, float] = {}
    # each stage function is patched where the solving modules look it up, so
    # the timers see exactly what a solve calls (on every forcing method)
    patches = [(module, attr, stage) for module, attr, stage in _STAGE_PATCHES]
    missing = [f"{m}.{a}" for m, a, _ in patches if not hasattr(sys.modules[m], a)]
    if missing:
        raise RuntimeError("the solving modules no longer call " + ", ".join(missing) + ": update the stage profile")
    originals = [(sys.modules[m], a, getattr(sys.modules[m], a)) for m, a, _ in patches]
    for (mod, attr, fn), (_, _, stage) in zip(originals, patches):
        setattr(mod, attr, _stage_timer(stage, fn, stages))
    try:
        start = time.perf_counter()
        sol = derive.solve(
            case.A,
            list(case.f),
            t=T,
            x0=None if case.x0 is None else list(case.x0),
            t0=case.t0,
            params=dict(case.params) or None,
        )
        solve_s = time.perf_counter() - start
    finally:
        for mod, attr, fn in originals:
            setattr(mod, attr, fn)
    extra: dict[str, Any] = {"solve_s": solve_s}
    start = time.perf_counter()
    try:
        derive.render(sol, "latex")
    except DeriveError as exc:
        # the answer still goes through the common check; the sheet failure is reported beside it
        extra["render_error"] = _short(exc)
    stages["render"] = time.perf_counter() - start
    stages["other"] = max(0.0, solve_s - sum(v for k, v in stages.items() if k != "render"))
    extra["stages"] = stages
    return sp.Matrix(sol.x), tuple(sol.constants), extra


def _dsolve_functions(n: int) -> list[sp.Expr]:
    return [sp.Function(f"x{i + 1}")(T) for i in range(n)]


def solve_with_dsolve(case: BenchCase) -> tuple[sp.Matrix, tuple[sp.Symbol, ...], dict[str, Any]]:
    """sympy.dsolve on the system written with Function symbols (ics for an IVP)."""
    n = case.n
    xs = _dsolve_functions(n)
    eqs = [sp.Eq(xs[i].diff(T), sum(case.A[i, j] * xs[j] for j in range(n)) + case.f[i]) for i in range(n)]
    ics = None
    if case.is_ivp:
        ics = {xs[i].subs(T, case.t0): case.x0[i] for i in range(n)}
    start = time.perf_counter()
    out = sp.dsolve(eqs, xs, ics=ics)
    solve_s = time.perf_counter() - start
    if out and isinstance(out[0], list):  # several solution sets: the first one is the benchmark's
        out = out[0]
    by_lhs = {eq.lhs: eq.rhs for eq in out}
    missing = [str(xi) for xi in xs if xi not in by_lhs]
    if missing:
        raise NotImplementedError("dsolve returned no expression for " + ", ".join(missing))
    x = sp.Matrix([by_lhs[xi] for xi in xs])
    known = {T} | set(case.param_values)
    constants = tuple(sorted((s for s in x.free_symbols if s not in known), key=sp.default_sort_key))
    return x, constants, {"solve_s": solve_s}


_SOLVE = {"derive": solve_with_derive, "dsolve": solve_with_dsolve}


def _rss_mib() -> float:
    # Linux reports ru_maxrss in KiB
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0


def run_child(solver: str, name: str, timeout: float, check_timeout: float) -> dict[str, Any]:
    """Solve and check one case with one solver, in the current process; a plain-data record."""
    sp.core.cache.clear_cache()
    case = by_name(name)
    rec: dict[str, Any] = {"case": name, "solver": solver, "status": "", "baseline_mib": _rss_mib()}
    x = None
    constants: tuple[sp.Symbol, ...] = ()
    start = time.perf_counter()
    try:
        with time_limit(timeout, what=f"{solver} on {name}"):
            x, constants, extra = _SOLVE[solver](case)
        rec.update(extra)
        rec["status"] = "solved"
    except TimeLimitError:
        rec["status"] = "timeout"
    except (UnsupportedError, NotImplementedError) as exc:
        rec["status"] = "unsupported"
        rec["error"] = _short(exc)
    except VerificationError as exc:
        # derive's own check refused the result: still put it through the common checker
        rec["status"] = "self-check failed"
        rec["error"] = _short(exc)
        sol = getattr(exc, "solution", None)
        if sol is not None:
            x, constants = sp.Matrix(sol.x), tuple(sol.constants)
    except DeriveError as exc:
        rec["status"] = "refused"
        rec["error"] = _short(exc)
    except Exception as exc:  # noqa: BLE001 - any crash of either solver is a benchmark outcome
        rec["status"] = "error"
        rec["error"] = f"{type(exc).__name__}: {_short(exc)}"
    rec["wall_s"] = time.perf_counter() - start
    rec.setdefault("solve_s", rec["wall_s"])
    rec["peak_mib"] = _rss_mib()
    rec["verified"] = False
    if x is not None:
        check_start = time.perf_counter()
        try:
            with time_limit(check_timeout, what=f"checking {solver} on {name}"):
                res = check_solution(case, list(x), constants)
                rec["ops"] = int(sum(sp.count_ops(v) for v in x))
            rec["verified"], rec["method"], rec["check_detail"] = res.verified, res.method, res.detail
        except TimeLimitError:
            rec["check_detail"] = "check ran out of time"
        except Exception as exc:  # noqa: BLE001 - a checker crash on odd output counts as not verified
            rec["check_detail"] = f"checker error {type(exc).__name__}: {_short(exc)}"
        rec["check_s"] = time.perf_counter() - check_start
        rec["real"] = not x.has(sp.I)
    return rec


def _short(exc: BaseException, limit: int = 160) -> str:
    text = " ".join(str(exc).split())
    return text if len(text) <= limit else text[: limit - 3] + "..."


def _child_main(conn, solver: str, name: str, timeout: float, check_timeout: float) -> None:
    try:
        rec = run_child(solver, name, timeout, check_timeout)
    except BaseException as exc:  # noqa: BLE001 - report, never hang the parent
        rec = {"case": name, "solver": solver, "status": "error", "error": _short(exc), "verified": False}
    conn.send(rec)
    conn.close()


# ---------------------------------------------------------------------------
# the parent: scheduling, killing, collecting


@dataclass
class _Job:
    solver: str
    name: str
    proc: Any
    conn: Any
    deadline: float
    started: float = field(default_factory=time.perf_counter)


def run_all(
    names: Sequence[str],
    *,
    timeout: float = DEFAULT_TIMEOUT,
    check_timeout: float = DEFAULT_TIMEOUT,
    jobs: int = 1,
    solvers: Sequence[str] = SOLVERS,
    progress: Callable[[dict[str, Any]], None] | None = None,
    repeat: int = 1,
    start: str = "spawn",
) -> list[dict[str, Any]]:
    """Run every (case, solver) pair in its own killable process; records in corpus order.

    ``start`` is the multiprocessing start method: "spawn" (a fresh
    interpreter per pair, imports done before the timers) or "fork" (a copy
    of this process: no imports, but copy-on-write faults land in the solve).

    With ``repeat`` > 1 a pair that solved runs again, each time in a fresh
    process, up to ``repeat`` runs; its record keeps the times of the fastest
    run (timeit's convention: the minimum is the run the machine disturbed
    least) and lists every solve time in ``solve_times``.
    """
    if start not in START_METHODS:
        raise InputError(f"unknown start method {start!r}; expected one of {', '.join(START_METHODS)}", key="--start")
    ctx = mp.get_context(start)
    pending = [(name, s) for name in names for s in solvers]
    pending.reverse()
    runs_left = {key: max(1, repeat) - 1 for key in pending}
    running: list[_Job] = []
    done: dict[tuple[str, str], dict[str, Any]] = {}
    # the children enforce both limits themselves; this margin covers the imports of a
    # spawned child, count_ops and pickling
    hard = timeout + check_timeout + 60.0
    while pending or running:
        while pending and len(running) < max(1, jobs):
            name, solver = pending.pop()
            parent, child = ctx.Pipe(duplex=False)
            proc = ctx.Process(target=_child_main, args=(child, solver, name, timeout, check_timeout), daemon=True)
            proc.start()
            child.close()
            running.append(_Job(solver, name, proc, parent, time.perf_counter() + hard))
        wait([j.conn for j in running], timeout=0.5)
        still: list[_Job] = []
        for job in running:
            rec = None
            if job.conn.poll():
                try:
                    rec = job.conn.recv()
                except EOFError:
                    rec = {"status": "error", "error": f"child died (exit code {job.proc.exitcode})"}
            elif not job.proc.is_alive():
                rec = {"status": "error", "error": f"child died (exit code {job.proc.exitcode})"}
            elif time.perf_counter() > job.deadline:
                job.proc.kill()
                rec = {"status": "killed", "error": f"no answer within the hard limit of {hard:g} s"}
            if rec is None:
                still.append(job)
                continue
            job.proc.join(5)
            job.conn.close()
            rec.setdefault("case", job.name)
            rec.setdefault("solver", job.solver)
            rec.setdefault("verified", False)
            rec.setdefault("solve_s", time.perf_counter() - job.started)
            key = (job.name, job.solver)
            first = done.get(key)
            if first is None:
                rec["solve_times"] = [rec["solve_s"]]
                done[key] = first = rec
            else:
                first["solve_times"].append(rec["solve_s"])
                if rec.get("status") == "solved" and rec["solve_s"] < first["solve_s"]:
                    for timing in ("solve_s", "stages", "wall_s"):
                        if timing in rec:
                            first[timing] = rec[timing]
            if rec.get("status") == "solved" and runs_left[key] > 0:
                runs_left[key] -= 1
                pending.append(key)  # next out: the repeats of a pair run back to back
            elif progress:
                progress(first)
        running = still
    return [done[(name, s)] for name in names for s in solvers if (name, s) in done]


# ---------------------------------------------------------------------------
# reporting


def _median(values: Sequence[float]) -> float | None:
    return statistics.median(values) if values else None


def _pairs(records: Sequence[dict[str, Any]]) -> dict[str, dict[str, dict[str, Any]]]:
    out: dict[str, dict[str, dict[str, Any]]] = {}
    for r in records:
        out.setdefault(r["case"], {})[r["solver"]] = r
    return out


def _derive_time(r: dict[str, Any]) -> float:
    """derive's time for a case: solve (its own verification included) plus the LaTeX render."""
    return r.get("solve_s", 0.0) + r.get("stages", {}).get("render", 0.0)


def summarize(records: Sequence[dict[str, Any]], *, timeout: float) -> dict[str, Any]:
    """Totals and medians per solver, and the ratios on the cases both verified."""
    pairs = _pairs(records)
    summary: dict[str, Any] = {"cases": len(pairs)}
    for s in SOLVERS:
        rs = [p[s] for p in pairs.values() if s in p]
        if not rs:
            continue
        ok = [r for r in rs if r["verified"]]
        statuses: dict[str, int] = {}
        for r in rs:
            key = "verified" if r["verified"] else (r["status"] if r["status"] != "solved" else "wrong/unchecked")
            statuses[key] = statuses.get(key, 0) + 1
        summary[s] = {
            "runs": len(rs),
            "verified": len(ok),
            "outcomes": statuses,
            "total_s": sum(r.get("solve_s", 0.0) for r in rs),
            "median_s_verified": _median([r["solve_s"] for r in ok]),
            "median_ops_verified": _median([r["ops"] for r in ok if "ops" in r]),
            "real_form": sum(1 for r in ok if r.get("real")),
            "median_peak_mib": _median([r["peak_mib"] for r in rs if "peak_mib" in r]),
        }
    both = [p for p in pairs.values() if all(s in p and p[s]["verified"] for s in SOLVERS)]
    ratios = [p["dsolve"]["solve_s"] / max(p["derive"]["solve_s"], 1e-9) for p in both]
    op_ratios = [p["derive"]["ops"] / max(p["dsolve"]["ops"], 1) for p in both if "ops" in p["derive"] and "ops" in p["dsolve"]]
    summary["both_verified"] = len(both)
    summary["median_time_ratio"] = _median(ratios)
    summary["median_ops_ratio"] = _median(op_ratios)
    summary["median_derive_s_both"] = _median([p["derive"]["solve_s"] for p in both])
    summary["median_dsolve_s_both"] = _median([p["dsolve"]["solve_s"] for p in both])
    summary["median_derive_ops_both"] = _median([p["derive"]["ops"] for p in both])
    summary["median_dsolve_ops_both"] = _median([p["dsolve"]["ops"] for p in both])
    stage_tot = {st: 0.0 for st in STAGES}
    for p in pairs.values():
        r = p.get("derive")
        if r:
            for st, v in r.get("stages", {}).items():
                stage_tot[st] = stage_tot.get(st, 0.0) + v
    summary["stage_totals"] = stage_tot
    return summary


def targets(records: Sequence[dict[str, Any]], summary: dict[str, Any]) -> list[dict[str, Any]]:
    """The issue's targets as met / not met, each with the figure behind it."""
    pairs = _pairs(records)
    out: list[dict[str, Any]] = []

    def add(name: str, met: bool | None, figure: str) -> None:
        out.append({"target": name, "met": met, "figure": figure})

    have_ds = [p for p in pairs.values() if "dsolve" in p and "derive" in p]
    lost = [c for c, p in pairs.items() if "dsolve" in p and p["dsolve"]["verified"] and not p.get("derive", {}).get("verified")]
    add(
        "every case dsolve solves, we solve",
        None if not have_ds else not lost,
        f"dsolve verified {sum(1 for p in have_ds if p['dsolve']['verified'])}; of those we miss "
        + (", ".join(lost) if lost else "none"),
    )
    ratio = summary.get("median_time_ratio")
    add(
        "median time >= 10x faster than dsolve (cases both solve)",
        None if ratio is None else ratio >= 10,
        "no case solved by both" if ratio is None else f"median dsolve/derive = {ratio:.1f}x over {summary['both_verified']} cases",
    )
    ours = [p["derive"] for p in pairs.values() if "derive" in p]
    slow = [(r["case"], _derive_time(r)) for r in ours if _derive_time(r) > 10 or r["status"] in ("timeout", "killed")]
    add(
        "no case above 10 s (derive, solve + render)",
        None if not ours else not slow,
        ("max " + f"{max(_derive_time(r) for r in ours):.2f} s" if ours else "")
        + ("; over: " + ", ".join(f"{c} ({v:.1f} s)" for c, v in slow) if slow else ""),
    )
    unrendered = [r["case"] for r in ours if r.get("render_error")]
    add(
        "every case we solve renders to LaTeX (needed by the 10 s and 8x8 targets)",
        None if not ours else not unrendered,
        "render failed on " + (", ".join(unrendered) if unrendered else "none"),
    )
    tgt = pairs.get(TARGET_8X8, {}).get("derive")
    if tgt is None:
        add(f"8x8 distinct rational ({TARGET_8X8}) solved, verified, rendered < 10 s", None, "not run")
    else:
        tt = _derive_time(tgt)
        add(
            f"8x8 distinct rational ({TARGET_8X8}) solved, verified, rendered < 10 s",
            bool(tgt["verified"] and tt < 10 and not tgt.get("render_error")),
            f"{tt:.2f} s, {'verified' if tgt['verified'] else tgt['status']}",
        )
    opr = summary.get("median_ops_ratio")
    add(
        "result size <= dsolve's on the median case (count_ops)",
        None if opr is None else opr <= 1,
        "no case solved by both" if opr is None else f"median derive/dsolve ops = {opr:.2f}",
    )
    return out


def _fmt_s(r: dict[str, Any] | None) -> str:
    if r is None:
        return "-"
    if r["status"] in ("timeout", "killed"):
        return "T/O"
    return f"{r.get('solve_s', 0.0):.2f}"


def _fmt_ok(r: dict[str, Any] | None) -> str:
    if r is None:
        return "-"
    if r["verified"]:
        return "ok" if r.get("method") == "exact" else "ok~"
    if r.get("check_detail") == "check ran out of time":
        return "chkTO"
    return {"solved": "WRONG", "self-check failed": "SELF", "unsupported": "unsup", "refused": "refus",
            "timeout": "T/O", "killed": "KILL", "error": "ERR"}.get(r["status"], r["status"][:5])


def format_table(records: Sequence[dict[str, Any]]) -> str:
    """The per-case table: verified, time, ratio, size, real form, memory for each solver."""
    pairs = _pairs(records)
    head = (f"{'case':<20} {'n':>2} {'kind':<22} {'forcing':<18} | {'ours':>5} {'s':>6} {'ops':>6} {'re':>2} {'MiB':>5}"
            f" | {'dsolve':>6} {'s':>6} {'ops':>6} {'re':>2} {'MiB':>5} | {'ratio':>7}")
    lines = [head, "-" * len(head)]
    for name, p in pairs.items():
        case = by_name(name)
        d, s = p.get("derive"), p.get("dsolve")

        def cols(r: dict[str, Any] | None, w: int) -> str:
            if r is None:
                return f"{'-':>{w}} {'-':>6} {'-':>6} {'-':>2} {'-':>5}"
            ops = str(r["ops"]) if "ops" in r else "-"
            re_ = ("y" if r["real"] else "n") if "real" in r else "-"
            mem = f"{r['peak_mib']:.0f}" if "peak_mib" in r else "-"
            return f"{_fmt_ok(r):>{w}} {_fmt_s(r):>6} {ops:>6} {re_:>2} {mem:>5}"

        ratio = "-"
        if d and s and d["verified"]:
            base = max(d["solve_s"], 1e-9)
            if s["verified"]:
                ratio = f"{s['solve_s'] / base:.1f}x"
            elif s["status"] in ("timeout", "killed"):
                ratio = f">{s.get('solve_s', 0.0) / base:.0f}x"
        kind = ",".join(case.spectral)[:22]
        forcing = ",".join(case.forcing)[:18]
        lines.append(f"{name:<20} {case.n:>2} {kind:<22} {forcing:<18} | {cols(d, 5)} | {cols(s, 6)} | {ratio:>7}")
    lines.append("")
    lines.append("ok = verified exactly; ok~ = verified by the 40-digit numeric identity test; T/O = time limit;")
    lines.append("unsup = refused as unsupported; WRONG = answer failed the common check; chkTO = the check ran out of time;")
    lines.append("ratio = dsolve s / derive s")
    notes = [(r["case"], r["solver"], r.get("error") or r.get("check_detail")) for r in records
             if not r["verified"] and (r.get("error") or r.get("check_detail"))]
    notes += [(r["case"], r["solver"], "solved, but the LaTeX render failed: " + r["render_error"])
              for r in records if r.get("render_error")]
    if notes:
        lines.append("")
        lines.append("why not verified:")
        for c, s, why in notes:
            lines.append(f"  {c} [{s}]: {why}")
    return "\n".join(lines)


def format_summary(summary: dict[str, Any]) -> str:
    lines = ["totals and medians"]
    for s in SOLVERS:
        if s not in summary:
            continue
        m = summary[s]
        med = "-" if m["median_s_verified"] is None else f"{m['median_s_verified']:.2f} s"
        ops = "-" if m["median_ops_verified"] is None else f"{m['median_ops_verified']:.0f}"
        outcomes = ", ".join(f"{k} {v}" for k, v in sorted(m["outcomes"].items()))
        lines.append(
            f"  {s:<7} verified {m['verified']}/{m['runs']} ({outcomes}); total {m['total_s']:.1f} s; "
            f"median {med} and {ops} ops on its verified cases; real form {m['real_form']}/{m['verified']}; "
            f"median peak {m['median_peak_mib']:.0f} MiB"
        )
    if summary.get("both_verified"):
        lines.append(
            f"  both verified on {summary['both_verified']} cases: median derive {summary['median_derive_s_both']:.2f} s, "
            f"dsolve {summary['median_dsolve_s_both']:.2f} s, median ratio {summary['median_time_ratio']:.1f}x; "
            f"median ops derive {summary['median_derive_ops_both']:.0f}, dsolve {summary['median_dsolve_ops_both']:.0f}"
        )
    return "\n".join(lines)


def format_profile(records: Sequence[dict[str, Any]], summary: dict[str, Any], *, slowest: int = 3) -> str:
    """derive's time by stage: totals with shares, and the slowest cases broken down."""
    ours = [r for r in records if r["solver"] == "derive" and r.get("stages")]
    if not ours:
        return "stage profile: no derive run finished"
    tot = summary["stage_totals"]
    grand = sum(tot.values()) or 1.0
    lines = ["derive stage profile (seconds, all cases)"]
    lines.append("  " + "  ".join(f"{st} {tot.get(st, 0.0):.2f} ({100 * tot.get(st, 0.0) / grand:.0f}%)" for st in STAGES))
    worst = max(STAGES, key=lambda st: tot.get(st, 0.0))
    lines.append(f"  slowest stage overall: {worst}")
    lines.append("")
    lines.append(f"  {'case':<20} " + " ".join(f"{st:>9}" for st in STAGES) + f" {'total':>7}  slowest")
    for r in sorted(ours, key=_derive_time, reverse=True)[:slowest]:
        st = r["stages"]
        top = max(STAGES, key=lambda k: st.get(k, 0.0))
        lines.append(f"  {r['case']:<20} " + " ".join(f"{st.get(k, 0.0):>9.2f}" for k in STAGES)
                     + f" {_derive_time(r):>7.2f}  {top}")
    return "\n".join(lines)


def format_targets(items: Sequence[dict[str, Any]]) -> str:
    lines = ["targets"]
    for it in items:
        word = "not measured" if it["met"] is None else ("met" if it["met"] else "NOT MET")
        lines.append(f"  [{word}] {it['target']}: {it['figure']}")
    return "\n".join(lines)


def _versions() -> dict[str, str]:
    import numpy
    import scipy

    return {
        "python": platform.python_version(),
        "sympy": sp.__version__,
        "derive": derive.__version__,
        "numpy": numpy.__version__,
        "scipy": scipy.__version__,
        "machine": platform.machine(),
        "cpus": str(os.cpu_count()),
    }


def _parse_args(argv: Sequence[str] | None) -> argparse.Namespace:
    p = argparse.ArgumentParser(
        prog="run_bench.py",
        description="Benchmark derive.solve against sympy.dsolve on the corpus in tests/bench/corpus.py.",
    )
    p.add_argument("--only", action="append", metavar="NAME", help="run only this case (repeatable)")
    p.add_argument("--quick", action="store_true", help=f"run the smoke subset ({len(QUICK)} small cases)")
    p.add_argument("--timeout", type=float, default=DEFAULT_TIMEOUT, metavar="S",
                   help="seconds per solve, per solver and case (default %(default)g)")
    p.add_argument("--check-timeout", type=float, default=None, metavar="S",
                   help="seconds for the common check of one answer (default: --timeout)")
    p.add_argument("--json", type=Path, metavar="OUT", help="also write the records, summary and targets as JSON")
    p.add_argument("--jobs", type=int, default=1, metavar="N",
                   help="processes at once (default 1: times on one core are the ones the targets mean)")
    p.add_argument("--solver", choices=("both",) + SOLVERS, default="both", help="run one solver only")
    p.add_argument("--repeat", type=int, default=1, metavar="N",
                   help="run each pair that solves up to N times, each in a fresh process, and keep the "
                        "fastest (default %(default)s)")
    p.add_argument("--start", choices=START_METHODS, default="spawn",
                   help="how each pair's process starts: spawn (a fresh interpreter, the default) or fork "
                        "(quicker to run; adds copy-on-write faults to each solve)")
    return p.parse_args(argv)


def select(*, only: Sequence[str] | None, quick: bool) -> list[str]:
    """Case names in corpus order; an unknown --only name is an InputError naming it."""
    known = [c.name for c in CORPUS]
    if only:
        unknown = [n for n in only if n not in known]
        if unknown:
            raise InputError(
                f"unknown case {', '.join(unknown)}; expected one of the names in tests/bench/corpus.py",
                key="--only",
            )
        return [n for n in known if n in set(only)]
    if quick:
        return [n for n in known if n in set(QUICK)]
    return known


def main(argv: Sequence[str] | None = None) -> int:
    """Run the benchmark and print the table, totals, stage profile and targets."""
    args = _parse_args(argv)
    try:
        names = select(only=args.only, quick=args.quick)
    except InputError as exc:
        print(f"run_bench.py: {exc}", file=sys.stderr)
        return 2
    check_timeout = args.check_timeout if args.check_timeout is not None else args.timeout
    solvers = SOLVERS if args.solver == "both" else (args.solver,)
    if args.repeat < 1:
        print("run_bench.py: --repeat: expected a whole number of runs, 1 or more", file=sys.stderr)
        return 2
    print(f"{len(names)} cases x {len(solvers)} solver(s); limit {args.timeout:g} s per solve, "
          f"{check_timeout:g} s per check; {args.jobs} process(es) at once; "
          f"fastest of {args.repeat} run(s) per pair; each in a {args.start}ed process", flush=True)

    def progress(rec: dict[str, Any]) -> None:
        print(f"  {rec['case']:<20} {rec['solver']:<7} {_fmt_ok(rec):<6} {_fmt_s(rec):>6} s", flush=True)

    started = time.perf_counter()
    records = run_all(names, timeout=args.timeout, check_timeout=check_timeout, jobs=args.jobs,
                      solvers=solvers, progress=progress, repeat=args.repeat, start=args.start)
    summary = summarize(records, timeout=args.timeout)
    items = targets(records, summary)
    print()
    print(format_table(records))
    print()
    print(format_summary(summary))
    print()
    print(format_profile(records, summary))
    print()
    print(format_targets(items))
    print(f"\nwall time {time.perf_counter() - started:.0f} s")
    if args.json:
        payload = {
            "versions": _versions(),
            "options": {"timeout": args.timeout, "check_timeout": check_timeout, "jobs": args.jobs,
                        "repeat": args.repeat, "start": args.start,
                        "cases": names, "solvers": list(solvers)},
            "records": records,
            "summary": summary,
            "targets": items,
        }
        args.json.write_text(json.dumps(payload, indent=2, default=str) + "\n", encoding="utf-8")
        print(f"wrote {args.json}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
