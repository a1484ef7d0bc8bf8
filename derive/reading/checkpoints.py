"""Check points for a response figure: x(t) at a few times by numeric integration of the system itself.

The exact curve of a figure comes from the closed form; the points drawn
over it must not, or they would agree by construction.  They are computed
here from x' = A x + f(t) and x(t0) = x0 alone (the system with the
parameter values put in), with scipy's ``solve_ivp`` (DOP853, rtol 1e-10),
interval by interval between the input's switches, and with each impulse
b delta(t - a) applied as the jump x(a+) = x(a-) + b.  The verifier runs its
own numeric check with more points; this is the figure's small, visible one.
"""

from __future__ import annotations

import math
from typing import Callable, Mapping

import numpy as np
import sympy as sp
from sympy.core.function import AppliedUndef

from ..exact import numeric_function
from ..model import Solution
from .evaluation import has_all_values, reading_values, switch_and_impulse_times
from .records import Samples

__all__ = ["check_points", "impulse_split"]

RTOL = 1e-10
ATOL = 1e-12


def impulse_split(f: sp.MatrixBase, t: sp.Symbol) -> tuple[sp.Matrix, dict[float, np.ndarray]]:
    """f without its impulses, and each impulse time with its jump vector b (f = smooth + sum b delta(t - a)).

    >>> t = sp.Symbol("t")
    >>> smooth, jumps = impulse_split(sp.Matrix([1 + 3 * sp.DiracDelta(t - 2), 0]), t)
    >>> smooth.T, {a: b.tolist() for a, b in jumps.items()}
    (Matrix([[1, 0]]), {2.0: [3.0, 0.0]})
    """
    smooth = sp.zeros(f.rows, 1)
    jumps: dict[float, np.ndarray] = {}
    for i, entry in enumerate(f):
        rest = sp.Integer(0)
        for term in sp.Add.make_args(sp.expand(entry)):
            deltas = [d for d in term.atoms(sp.DiracDelta) if d.has(t)]
            if not deltas:
                rest += term
                continue
            if len(deltas) != 1 or len(deltas[0].args) != 1:
                raise ValueError("an impulse of higher order or a product of impulses")
            delta = deltas[0]
            arg = delta.args[0]
            slope = sp.diff(arg, t)
            if slope.has(t) or slope == 0:
                raise ValueError("an impulse whose argument is not linear in t")
            at = -arg.subs(t, 0) / slope
            weight = (term / delta).subs(t, at) / sp.Abs(slope)
            if weight.has(sp.DiracDelta):
                raise ValueError("a product of impulses")
            key = float(at)
            jumps.setdefault(key, np.zeros(f.rows))[i] += float(weight)
        smooth[i] = rest
    return smooth, jumps


def check_points(
    solution: Solution,
    *,
    span: float,
    points: int = 13,
    values: Mapping[sp.Basic, object] | None = None,
) -> Samples | None:
    """x(t) at ``points`` even times over [t0, t0 + span] from the system by numeric integration.

    None where no such check can be made (no initial values, a parameter
    without a value, an unspecified function in f, an integration failure).

    >>> import derive
    >>> pts = check_points(derive.solve([[-1]], x0=[1]), span=2.0, points=3)
    >>> [round(float(v), 6) for v in pts.values["x_1"]]
    [1.0, 0.367879, 0.135335]
    """
    from scipy.integrate import solve_ivp

    sy = solution.system
    sub = reading_values(solution, values)
    if sy.x0 is None or not has_all_values(solution, sub) or not math.isfinite(span) or span <= 0:
        return None
    t = sy.t
    f = sy.f.xreplace(sub)
    if any(e.atoms(AppliedUndef) for e in f):
        return None
    try:
        A = np.array([[float(e) for e in row] for row in sy.A.xreplace(sub).tolist()], dtype=float)
        x = np.array([float(e) for e in sy.x0.xreplace(sub)], dtype=float)
        t0 = float(sp.sympify(sy.t0, strict=True).xreplace(sub))
        smooth, jumps = impulse_split(f, t)
        switches, _ = switch_and_impulse_times(solution, sub)
        # only the entries that vary are evaluated at each step (thousands of steps on a 6-state chain)
        forced = [i for i, e in enumerate(smooth) if e.has(t)]
        # compiled rather than walked: called at one time per step, a tree walk's overhead is all it costs
        f_fn = numeric_function(t, [smooth[i] for i in forced], ["numpy", "math"]) if forced else None
        f_const = np.array([0.0 if i in forced else float(e) for i, e in enumerate(smooth)], dtype=float)
    except (TypeError, ValueError, ZeroDivisionError, OverflowError, IndexError):
        return None

    def rhs(tt: float, y: np.ndarray) -> np.ndarray:
        if f_fn is None:
            return A @ y + f_const
        g = f_const.copy()
        g[forced] = np.real(np.array(f_fn(tt), dtype=complex).reshape(-1))
        return A @ y + g

    end = t0 + span
    times = np.linspace(t0, end, points)
    impulse_times = sorted(a for a in jumps if t0 <= a <= end)
    # a point exactly at an impulse would be ambiguous (before or after the jump)
    times = np.array([s for s in times if all(abs(s - a) > 1e-9 * max(1.0, abs(a)) for a in impulse_times)])
    edges = sorted({t0, end, *(s for s in switches if t0 < s < end), *impulse_times})
    out = np.empty((len(x), len(times)))
    try:
        for a, b in zip(edges, edges[1:]):
            if a in jumps:
                x = x + jumps[a]
            inside = times[(times >= a) & (times <= b)]
            run = solve_ivp(rhs, (a, b), x, method="DOP853", rtol=RTOL, atol=ATOL, t_eval=inside, dense_output=False)
            if not run.success:
                return None
            for k, when in enumerate(inside):
                out[:, np.searchsorted(times, when)] = run.y[:, k]
            x = run.y[:, -1] if len(inside) and inside[-1] == b else _end_state(rhs, a, b, x)
    except (TypeError, ValueError, ZeroDivisionError, OverflowError):
        return None
    if not np.all(np.isfinite(out)):
        return None
    names = [s.name for s in sy.states]
    return Samples(times, {n: out[i] for i, n in enumerate(names)}, tuple(switches), tuple(impulse_times))


def _end_state(rhs: Callable[[float, np.ndarray], np.ndarray], a: float, b: float, x: np.ndarray) -> np.ndarray:
    """x at b from x at a, when b is not among the check times."""
    from scipy.integrate import solve_ivp

    run = solve_ivp(rhs, (a, b), x, method="DOP853", rtol=RTOL, atol=ATOL)
    if not run.success:
        raise ValueError(run.message)
    return run.y[:, -1]
