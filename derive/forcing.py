"""Forcing beyond exponential polynomials: switched inputs, impulses, convolution.

The closed-form path (``derive.expoly``) covers sums of t^k e^{gamma t}.  Three
more input classes are handled here, each reduced to what the closed-form
machinery already does well:

* **Switched inputs** -- unit steps u(t - a), pulses, delayed ramps and
  piecewise inputs (sympy ``Heaviside`` and ``Piecewise``).  Between two
  switching times every such input is an ordinary function of t, usually an
  exponential polynomial, so the time axis is cut at the switches and each
  interval is solved as an initial value problem whose initial state is the
  state the previous interval ends in.  The decomposition A = P J P^-1 is
  computed once; each interval reuses ``scalar.solve_blocks`` and
  ``recombine.recombine``.  The result is a ``Piecewise`` in t, continuous at
  each switch.
* **Impulses** b delta(t - a) -- integrating x' = A x + f across t = a gives
  the jump x(a+) = x(a-) + b; the impulse is a switch at which the handed-over
  state jumps.  An impulse at t0 acts on x0 (x0 is the state just before t0).
* **Any other input** (1/(1 + t^2), an unspecified u(t) given as a sympy
  ``Function`` through the Python interface) -- the convolution form, per
  decoupled equation

      y(t) = e^{J (t - t0)} y(t0) + integral from t0 to t of e^{J (t - s)} g(s) ds,

  written as e^{J (t - t0)} times integrals whose integrands are free of t,
  so that x' - A x - f cancels exactly even where an integral stays
  unevaluated.  Each integral is given to sympy's ``integrate`` under a time
  limit and its closed form is accepted only after it is checked by
  differentiation; otherwise the ``Integral`` is kept and the numeric check
  evaluates it by quadrature.

Verification for these paths is :func:`verify_pieces`: the residual on every
interval, continuity (or the prescribed jump) at every switch, the initial
values, and scipy's ``solve_ivp`` restarted at each switch with impulses
applied as jumps.  The solution is defined for t >= t0.
"""

from __future__ import annotations

import contextlib
import functools
import signal
import threading
import time
from dataclasses import dataclass, fields, replace
from typing import Any, Iterator, Mapping, Sequence

import sympy as sp
from sympy.core.function import AppliedUndef

from .errors import InputError, LimitError, UnsupportedError, VerificationError
from .exact import decide_zero, is_zero_number
from .expoly import NotExpPoly, _is_negative, to_expoly
from .model import Case, Condition, Solution, System
from .recombine import recombine, restore_roots
from .scalar import decouple, solve_blocks
from .spectral import Decomposition
from .steady import steady_state_steps
from .verify.pieces import PieceRecord, verify_pieces
from .steps import (
    ConvolutionStep,
    DecoupleStep,
    IntervalStep,
    JumpStep,
    RealFormStep,
    RecombineStep,
    ResultStep,
    Step,
)

__all__ = [
    "MAX_INTERVALS",
    "solve_general_forcing",
    "piecewise_from_intervals",
    "is_switched",
    "switching_times",
    "resolve_on",
    "impulse_weight",
    "PieceRecord",
    "verify_pieces",
]

#: More intervals than this is a pulse train better given as a periodic model.
MAX_INTERVALS = 64
#: Seconds sympy's integrate may spend on one convolution integral.
INTEGRATE_SECONDS = 5.0
#: Seconds for all convolution integrals of one solve.
INTEGRATE_BUDGET = 20.0

_SWITCHES = (sp.Heaviside, sp.DiracDelta, sp.Piecewise)
_ZERO = sp.Integer(0)
Matrix = sp.ImmutableMatrix


# ---------------------------------------------------------------------------
# Piecewise input from intervals (the case file's ``{ piecewise = [...] }``)


def _exact_value(value: Any, *, key: str | None, file: str | None) -> sp.Expr:
    """A number or sympy object; text is refused here (it goes through the parser)."""
    try:
        return sp.sympify(value, strict=True)
    except sp.SympifyError:
        raise InputError(
            f"expected a number or a sympy expression, found {value!r}; "
            "parse text with derive.parsing.parse_expression first",
            key=key,
            file=file,
        )


def piecewise_from_intervals(
    pieces: Sequence[tuple[sp.Expr, sp.Expr | None]],
    t: sp.Symbol,
    *,
    key: str | None = None,
    file: str | None = None,
) -> sp.Expr:
    """``[(v1, b1), (v2, b2), ..., (vn, None)]`` -> v1 for t < b1, v2 until b2, ..., vn after.

    >>> t = sp.Symbol("t")
    >>> piecewise_from_intervals([(0, 2), (5, 8), (0, None)], t)
    Piecewise((0, t < 2), (5, t < 8), (0, True))
    """
    if not pieces:
        raise InputError("a piecewise input needs at least one interval; found none", key=key, file=file)
    args = []
    previous: sp.Expr | None = None
    for i, (value, bound) in enumerate(pieces):
        last = i == len(pieces) - 1
        value = _exact_value(value, key=key, file=file)
        if last:
            if bound is not None:
                raise InputError(
                    f"the last interval of a piecewise input has the bound {bound}; expected only a value "
                    "(it holds from the previous bound on)",
                    key=f"{key}[{i}]" if key else None,
                    file=file,
                )
            args.append((value, True))
            break
        if bound is None:
            raise InputError(
                f"interval {i + 1} of {len(pieces)} has no end; expected [value, end] for every interval but the last",
                key=f"{key}[{i}]" if key else None,
                file=file,
            )
        bound = _exact_value(bound, key=key, file=file)
        if bound.has(t):
            raise InputError(
                f"the bound {bound} depends on {t}; expected a time (a number or a parameter expression)",
                key=f"{key}[{i}]" if key else None,
                file=file,
            )
        if previous is not None and _decided_sign(bound - previous) in (-1, 0):
            raise InputError(
                f"the bounds must increase, but {bound} follows {previous}",
                key=f"{key}[{i}]" if key else None,
                file=file,
            )
        previous = bound
        args.append((value, t < bound))
    return sp.Piecewise(*args)


# ---------------------------------------------------------------------------
# Switching times, and the forcing on one interval


def _switch_atoms(expr: sp.Expr, t: sp.Symbol) -> list[sp.Expr]:
    return [a for a in sp.sympify(expr, strict=True).atoms(*_SWITCHES) if a.has(t)]


def is_switched(f: Sequence[sp.Expr], t: sp.Symbol) -> bool:
    """True when the forcing contains a step, impulse or piecewise definition in t.

    >>> t = sp.Symbol("t")
    >>> is_switched([sp.Heaviside(t - 1), 0], t), is_switched([sp.exp(-t)], t)
    (True, False)
    """
    return any(_switch_atoms(e, t) for e in f)


def _decided_sign(d: sp.Expr) -> int | None:
    """-1, 0 or 1 when sympy can decide the sign of ``d`` (assumptions included), else None."""
    d = sp.sympify(d, strict=True)
    if d.is_Rational:
        return (d.p > 0) - (d.p < 0)

    def sign_of(e: sp.Expr) -> int | None:
        if e.is_zero:
            return 0
        if e.is_positive:
            return 1
        if e.is_negative:
            return -1
        return None

    # the assumptions first; simplify once, only when they cannot tell
    got = sign_of(d)
    return got if got is not None else sign_of(sp.simplify(d))


def _root(arg: sp.Expr, t: sp.Symbol, what: str) -> sp.Expr:
    arg = sp.expand(arg)
    slope = sp.diff(arg, t)
    if slope.has(t) or slope == 0:
        raise UnsupportedError(
            f"the switch {what} has the argument {arg}, not linear in {t}; expected a time shift like {t} - a",
            key="system.forcing",
        )
    return sp.simplify(-(arg - slope * t) / slope)


def _relations(cond: Any) -> list[sp.Expr]:
    if cond in (sp.true, sp.false, True, False):
        return []
    if isinstance(cond, sp.core.relational.Relational):
        return [cond]
    if isinstance(cond, (sp.And, sp.Or, sp.Not)):
        return [r for a in cond.args for r in _relations(a)]
    raise UnsupportedError(f"the piecewise condition {cond} is not a comparison of times", key="system.forcing")


def switching_times(f: Sequence[sp.Expr], t: sp.Symbol) -> tuple[sp.Expr, ...]:
    """Every time at which a step, impulse or piecewise branch switches, in increasing order.

    >>> t = sp.Symbol("t")
    >>> switching_times([sp.Heaviside(t - 3) - sp.Heaviside(t - 1), sp.DiracDelta(t - 2)], t)
    (1, 2, 3)

    Raises ``UnsupportedError`` when a switch argument is not linear in t or
    the order of two switching times cannot be decided.
    """
    times: list[sp.Expr] = []
    for e in f:
        for atom in _switch_atoms(e, t):
            if isinstance(atom, sp.Heaviside):
                times.append(_root(atom.args[0], t, str(atom)))
            elif isinstance(atom, sp.DiracDelta):
                if len(atom.args) > 1 and atom.args[1] != 0:
                    raise UnsupportedError(
                        f"{atom} is a derivative of an impulse; expected impulses b*delta(t - a) only",
                        key="system.forcing",
                    )
                times.append(_root(atom.args[0], t, str(atom)))
            else:
                for value, cond in atom.args:
                    for rel in _relations(cond):
                        d = rel.lhs - rel.rhs
                        if not d.has(t):
                            raise UnsupportedError(
                                f"the piecewise condition {rel} does not involve {t}; expected conditions on time",
                                key="system.forcing",
                            )
                        times.append(_root(d, t, str(rel)))
    return _sorted_unique(times)


def _sorted_unique(times: Sequence[sp.Expr]) -> tuple[sp.Expr, ...]:
    def cmp(a: sp.Expr, b: sp.Expr) -> int:
        s = _decided_sign(a - b)
        if s is None:
            raise UnsupportedError(
                f"the order of the switching times {a} and {b} cannot be decided; "
                "give numeric times or declare the parameters' signs",
                key="system.forcing",
            )
        return s

    out: list[sp.Expr] = []
    for x in sorted(times, key=functools.cmp_to_key(cmp)):
        if not out or cmp(out[-1], x) != 0:
            out.append(x)
    return tuple(out)


def _truth(cond: Any) -> bool:
    if cond in (sp.true, True):
        return True
    if cond in (sp.false, False):
        return False
    if isinstance(cond, sp.And):
        return all(_truth(a) for a in cond.args)
    if isinstance(cond, sp.Or):
        return any(_truth(a) for a in cond.args)
    if isinstance(cond, sp.Not):
        return not _truth(cond.args[0])
    if isinstance(cond, sp.core.relational.Relational):
        s = _decided_sign(cond.lhs - cond.rhs)
        if s is None:
            raise UnsupportedError(f"cannot decide whether {cond} holds", key="system.forcing")
        op = cond.rel_op
        return {"<": s < 0, "<=": s <= 0, ">": s > 0, ">=": s >= 0, "==": s == 0, "!=": s != 0}[op]
    raise UnsupportedError(f"the condition {cond} is not a comparison of times", key="system.forcing")


def resolve_on(expr: sp.Expr, t: sp.Symbol, point: sp.Expr) -> sp.Expr:
    """The forcing on the open interval containing ``point`` (no switch inside it).

    Steps become 0 or 1, impulses 0 (they act as jumps at the switches) and a
    piecewise definition its branch on the interval.

    >>> t = sp.Symbol("t")
    >>> resolve_on(5*sp.Heaviside(t - 2) + sp.DiracDelta(t - 3), t, sp.Integer(4))
    5
    """
    expr = sp.sympify(expr, strict=True)

    def step(*args: sp.Expr) -> sp.Expr:
        if not args[0].has(t):
            return sp.Heaviside(*args)
        s = _decided_sign(args[0].subs(t, point))
        if s is None or s == 0:
            raise UnsupportedError(f"cannot decide the sign of {args[0]} on the interval around {point}", key="system.forcing")
        return sp.Integer(1 if s > 0 else 0)

    def delta(*args: sp.Expr) -> sp.Expr:
        return _ZERO if args[0].has(t) else sp.DiracDelta(*args)

    def branch(*args: Any) -> sp.Expr:
        for value, cond in args:
            c = cond.subs(t, point) if hasattr(cond, "subs") else cond
            if _truth(c):
                return value
        return sp.nan

    out = expr.replace(sp.Heaviside, step).replace(sp.DiracDelta, delta).replace(sp.Piecewise, branch)
    if out.has(sp.nan):
        raise UnsupportedError(
            f"the piecewise input {expr} is not defined around {t} = {point}; expected a branch for every time",
            key="system.forcing",
        )
    return out


def impulse_weight(f: Sequence[sp.Expr], t: sp.Symbol, at: sp.Expr) -> Matrix:
    """The vector b of the impulses b delta(t - a) at ``at`` (zeros when there are none).

    >>> t = sp.Symbol("t")
    >>> impulse_weight([3*sp.DiracDelta(t - 1), sp.DiracDelta(2*t - 2)], t, sp.Integer(1)).T
    Matrix([[3, 1/2]])
    """
    out = []
    for e in f:
        w = _ZERO
        for term in sp.Add.make_args(sp.expand(e)):
            deltas = [a for a in term.atoms(sp.DiracDelta) if a.has(t)]
            if not deltas:
                continue
            if len(deltas) > 1:
                raise UnsupportedError(f"the term {term} multiplies impulses; expected b*delta(t - a)", key="system.forcing")
            d = deltas[0]
            coeff = sp.simplify(term / d)
            if coeff.has(sp.DiracDelta) or _switch_atoms(coeff, t):
                raise UnsupportedError(
                    f"the impulse term {term} is not a coefficient times delta(t - a); expected b*delta(t - a)",
                    key="system.forcing",
                )
            arg = sp.expand(d.args[0])
            slope = sp.diff(arg, t)
            if _decided_sign(_root(arg, t, str(d)) - at) != 0:
                continue
            # delta(k t + m) = delta(t - a) / |k|
            w += coeff.subs(t, at) / sp.Abs(slope)
        out.append(sp.simplify(w) if w != 0 else _ZERO)
    return Matrix(out)


# ---------------------------------------------------------------------------
# A time limit for one integral that leaves the case's own limit running


class _Expired(BaseException):
    """The integral's own time ran out (BaseException: sympy catches Exception in places)."""


@contextlib.contextmanager
def _integral_limit(seconds: float) -> Iterator[bool]:
    """Yield True when the block runs under a limit of ``seconds`` (raising _Expired).

    A case limit (``derive.limits.time_limit``) that is already running is
    restored with its remaining time afterwards; when it would fire first it
    is left in charge.  Off the main thread no signal can be used, and the
    caller then keeps the integral unevaluated rather than risk a hang.
    """
    if threading.current_thread() is not threading.main_thread():
        yield False
        return
    outer, _ = signal.getitimer(signal.ITIMER_REAL)
    if outer and outer <= seconds:
        yield True
        return
    started = time.monotonic()

    def _alarm(signum, frame):  # noqa: ARG001 - signal handler signature
        # raised inside a gc or weakref callback the exception is swallowed: fire again soon
        signal.setitimer(signal.ITIMER_REAL, 0.05)
        raise _Expired()

    previous = signal.signal(signal.SIGALRM, _alarm)
    signal.setitimer(signal.ITIMER_REAL, seconds)
    try:
        yield True
    finally:
        signal.setitimer(signal.ITIMER_REAL, 0)
        signal.signal(signal.SIGALRM, previous)
        if outer:
            signal.setitimer(signal.ITIMER_REAL, max(outer - (time.monotonic() - started), 1e-3))


@dataclass
class _Budget:
    left: float

    def take(self) -> float:
        return min(INTEGRATE_SECONDS, self.left)


def _evaluate(integral: sp.Integral, t: sp.Symbol, budget: _Budget) -> sp.Expr:
    """A checked closed form of a definite integral from t0 to t, or the integral itself."""
    body = integral.function
    (s, lo, hi), = integral.limits
    if body.atoms(AppliedUndef) or budget.left <= 0.05:
        return integral
    seconds = budget.take()
    started = time.monotonic()
    value: sp.Expr = integral
    try:
        with _integral_limit(seconds) as armed:
            if armed:
                found = sp.integrate(body, (s, lo, hi))
                if not found.has(sp.Integral) and not found.has(sp.Piecewise) and found.is_finite is not False:
                    # accepted only if it differentiates back to the integrand and vanishes at t0
                    check = sp.diff(found, t) - body.subs(s, t)
                    start = found.subs(t, lo)
                    if decide_zero(check).zero and decide_zero(start).zero:
                        value = found
    except _Expired:
        value = integral
    except (NotImplementedError, ValueError, TypeError, ZeroDivisionError, RecursionError):
        value = integral
    budget.left -= time.monotonic() - started
    return value


# ---------------------------------------------------------------------------
# One interval: closed form, or convolution


@dataclass(frozen=True)
class _Piece:
    x: Matrix
    y: Matrix
    g: Matrix
    y_start: Matrix
    method: str
    steps: tuple[Step, ...]
    conditions: tuple[Condition, ...]


@dataclass(frozen=True)
class _Setting:
    """What every interval shares: the decomposition and the names."""

    dec: Decomposition
    t: sp.Symbol
    s: sp.Symbol
    y_syms: tuple[sp.Symbol, ...]
    consts: tuple[sp.Symbol, ...]
    real: bool
    budget: _Budget

    @property
    def n(self) -> int:
        return self.dec.P.rows


def _decoupled(st: _Setting, f: Sequence[sp.Expr]) -> Matrix:
    return Matrix([sp.expand(sum((st.dec.P_inv[i, j] * f[j] for j in range(st.n)), _ZERO)) for i in range(st.n)])


def _local(st: _Setting, f: Sequence[sp.Expr], *, start: sp.Expr, x_start: Matrix | None):
    """solve_blocks and recombine in the interval's own time tau = t - start.

    Each interval is an initial value problem at tau = 0, so the handed-over
    state enters only through the constants and no e^{-lam a} factors are
    carried through ``recombine`` (where, with parameters, they would end up
    in denominators).  Returns the scalar
    result, the recombined result and the map tau -> t - start.
    """
    dec, t = st.dec, st.t
    ivp = x_start is not None
    tau = sp.Dummy("tau", real=True) if ivp else t
    shift = {tau: t - start} if ivp else {}
    f_ep = [to_expoly(sp.expand(sp.sympify(e, strict=True).subs(t, tau + start)) if ivp else e, tau) for e in f]
    g_ep = decouple(dec.P_inv, f_ep)
    scal = solve_blocks(
        dec.jordan_blocks, g_ep, t=tau, constants=st.consts, y_symbols=st.y_syms, ivp=ivp, t0=_ZERO, is_zero=is_zero_number
    )
    rec = recombine(
        dec.P, dec.P_inv, scal.y, blocks=dec.blocks, constants=st.consts,
        t=tau, t0=_ZERO, x0=x_start, real=st.real,
    )
    mapping = dict(shift)
    if mapping:
        rec = replace(
            rec,
            x=rec.x.xreplace(mapping),
            homogeneous=rec.homogeneous.xreplace(mapping),
            particular=rec.particular.xreplace(mapping),
            steps=tuple(_unhold(step, mapping) for step in rec.steps),
        )
    return scal, rec, shift, g_ep


def _closed_piece(st: _Setting, f: Sequence[sp.Expr], *, start: sp.Expr, x_start: Matrix) -> _Piece:
    dec, t = st.dec, st.t
    scal, rec, shift, g_ep = _local(st, f, start=start, x_start=x_start)
    y_start = Matrix([sp.expand(v) for v in dec.P_inv * x_start])
    values = dict(zip(st.consts, y_start))
    y = Matrix([group_terms(yy.to_expr(next(iter(shift))).xreplace(shift).xreplace(values), t) for yy in scal.y])
    return _Piece(
        x=rec.x.applyfunc(lambda e: group_terms(e, t)),
        y=y,
        g=_decoupled(st, f),
        y_start=y_start,
        method="closed form",
        steps=(),
        conditions=tuple(replace(c, expr=c.expr.xreplace(shift)) for c in scal.conditions),
    )


def group_terms(e: sp.Expr, t: sp.Symbol) -> sp.Expr:
    """Collect a sum by its t-dependent factors, numbers like e^{-2} kept in the coefficients.

    On an interval starting at a the closed form has factors e^{lam (t - a)};
    the state handed over brings constants such as e^{-2}.  Grouping by the
    factors with t gives (5 - 5 e^{-2}) e^{3 - t} rather than two terms.

    >>> t = sp.Symbol("t")
    >>> group_terms(5*sp.exp(3 - t) - 5*sp.exp(-2)*sp.exp(3 - t), t)
    5*(1 - exp(-2))*exp(3 - t)
    """
    exps = sorted(sp.sympify(e, strict=True).atoms(sp.exp), key=sp.default_sort_key)
    hold = {x: sp.Dummy(f"E{i}", positive=True) for i, x in enumerate(exps)}
    back = {v: sp.exp(sp.factor_terms(k.args[0])) if k.has(t) else k for k, v in hold.items()}
    timed = {v for k, v in hold.items() if k.has(t)}
    ex = sp.expand(sp.sympify(e, strict=True).xreplace(hold))
    groups: dict[sp.Expr, list[sp.Expr]] = {}
    for term in sp.Add.make_args(ex):
        with_t, rest = [], []
        for factor in sp.Mul.make_args(term):
            (with_t if (factor.has(t) or factor.free_symbols & timed) else rest).append(factor)
        groups.setdefault(sp.Mul(*with_t), []).append(sp.Mul(*rest))
    out = [key.xreplace(back) * sp.factor_terms(sp.Add(*parts).xreplace(back)) for key, parts in groups.items()]
    return sp.Add(*out)


def _swap(value: Any, mapping: Mapping[sp.Basic, sp.Expr]) -> Any:
    if isinstance(value, sp.Basic):
        return value.xreplace(dict(mapping))
    if isinstance(value, tuple):
        return tuple(_swap(v, mapping) for v in value)
    if hasattr(value, "__dataclass_fields__"):
        return _unhold(value, mapping)
    return value


def _unhold(step: Any, mapping: Mapping[sp.Basic, sp.Expr]) -> Any:
    """The step (or nested record) with ``mapping`` applied to every sympy field."""
    return replace(step, **{f.name: _swap(getattr(step, f.name), mapping) for f in fields(step)})


def _real_part(e: sp.Expr, t: sp.Symbol, held: Sequence[sp.Symbol]) -> sp.Expr:
    """Re(e) for real t, real parameters and real placeholders ``held``."""
    tr = sp.Dummy("t", real=True)
    z = sp.expand(e.xreplace({t: tr}))
    # one exponential per term first: as_real_imag leaves re(e^{-2 i} e^{2 i t}) unsplit
    re = sp.Add(*[sp.powsimp(term, combine="exp").as_real_imag()[0] for term in sp.Add.make_args(z)])
    return re.xreplace({tr: t})


def _convolution_piece(
    st: _Setting,
    f: Sequence[sp.Expr],
    *,
    start: sp.Expr,
    x_start: Matrix | None,
) -> tuple[_Piece, tuple[Step, ...], Matrix, Matrix]:
    """y = e^{J (t - t0)} y(t0) + e^{J (t - t0)} integral of e^{-J (s - t0)} g(s) ds.

    Returns the piece, the homogeneous-part steps of ``recombine`` (adjusted
    to carry the particular part), the homogeneous part and the particular part.
    """
    dec, t, s = st.dec, st.t, st.s
    n = st.n
    ivp = x_start is not None
    scal_h, rec_h, shift, _ = _local(st, [_ZERO] * n, start=start, x_start=x_start)
    g = _decoupled(st, f)
    sigma = s - start
    # Base integrals: integrand (-sigma)^k e^{-lam sigma} times one forcing entry,
    # in real form (cos and sin of the imaginary part) when the data are real.
    base: dict[tuple, tuple[sp.Symbol, sp.Integral]] = {}

    def held(l: int, k: int, lam: sp.Expr) -> sp.Expr:
        """A placeholder for the integral of (-sigma)^k e^{-lam sigma} f_l(s) ds."""
        fl = sp.sympify(f[l], strict=True).subs(t, s)
        poly = (-sigma) ** k
        if st.real:
            a, b = (sp.expand(v) for v in sp.expand(lam).as_real_imag())
            # a conjugate pair shares its integrals: sin(-b sigma) = -sin(b sigma)
            flip = -1 if (b != 0 and _is_negative(b)) else 1
            b = flip * b
            damp = sp.exp(-a * sigma) if a != 0 else sp.Integer(1)
            parts = [("c", sp.cos(b * sigma))] + ([("s", sp.sin(b * sigma))] if b != 0 else [])
            out = _ZERO
            for name, osc in parts:
                key = (l, k, a, b, name)
                if key not in base:
                    ph = sp.Dummy(f"K{len(base)}", real=True)
                    base[key] = (ph, sp.Integral(poly * damp * (osc if b != 0 else 1) * fl, (s, start, t)))
                # e^{-i b sigma} = cos(b sigma) - i sin(b sigma)
                out += base[key][0] * (1 if name == "c" else -sp.I * flip)
            return out
        key = (l, k, lam)
        if key not in base:
            ph = sp.Dummy(f"K{len(base)}")
            base[key] = (ph, sp.Integral(poly * sp.exp(-lam * sigma) * fl, (s, start, t)))
        return base[key][0]

    y_p: list[sp.Expr] = []
    kernels: list[sp.Expr] = []
    pos = 0
    for lam, size in dec.jordan_blocks:
        for r in range(size):
            i = pos + r
            acc = _ZERO
            kern = _ZERO
            for m in range(size - r):
                j = i + m
                kern += (t - s) ** m / sp.factorial(m) * sp.exp(lam * (t - s)) * g[j].subs(t, s)
                for k in range(m + 1):
                    weight = sp.binomial(m, k) / sp.factorial(m) * (t - start) ** (m - k)
                    inner = sum((dec.P_inv[j, l] * held(l, k, lam) for l in range(n) if dec.P_inv[j, l] != 0 and f[l] != 0), _ZERO)
                    acc += weight * inner
            y_p.append(sp.exp(lam * (t - start)) * acc)
            kernels.append(kern)
        pos += size
    placeholders = [ph for ph, _ in base.values()]
    x_p_held = [sp.expand(sum((dec.P[i, j] * y_p[j] for j in range(n)), _ZERO)) for i in range(n)]
    if st.real:
        x_p_held = [_real_part(e, t, placeholders) for e in x_p_held]
    values = {ph: _evaluate(I, t, st.budget) for ph, I in base.values()}
    # grouped while the integrals are still placeholders: the grouping must not reach inside them
    x_p = Matrix([group_terms(e, t).xreplace(values) for e in x_p_held])
    x_h = rec_h.x
    x = Matrix([a + b for a, b in zip(x_h, x_p)])

    y_h = [yy.to_expr(next(iter(shift))).xreplace(shift) if ivp else yy.to_expr(t) for yy in scal_h.y]
    if ivp:
        y_start = Matrix([sp.expand(v) for v in dec.P_inv * x_start])
        y_h = [e.xreplace(dict(zip(st.consts, y_start))) for e in y_h]
    else:
        y_start = Matrix(list(st.consts))
    conv_steps: list[Step] = []
    y_full = []
    pos = 0
    for lam, size in dec.jordan_blocks:
        for r in range(size):
            i = pos + r
            used = [ph for ph in placeholders if y_p[i].has(ph)]
            sol = y_h[i] + y_p[i].xreplace(values)
            y_full.append(sol)
            conv_steps.append(
                ConvolutionStep(
                    index=i + 1, t=t, s=s, y=st.y_syms[i], eigenvalue=lam, g=g[i], kernel=kernels[i], t0=start,
                    homogeneous=y_h[i],
                    integrals=tuple((base_int(base, ph), values[ph]) for ph in used),
                    closed=all(not values[ph].has(sp.Integral) for ph in used),
                    written=y_h[i] + sp.Integral(kernels[i], (s, start, t)),
                    solution=sol,
                )
            )
        pos += size
    # recombine's steps describe the free part; give them the particular part too
    adjusted: list[Step] = []
    for step in rec_h.steps:
        if isinstance(step, RecombineStep):
            step = replace(step, y=Matrix(y_full), particular=x_p, x=Matrix([a + b for a, b in zip(step.homogeneous, x_p)]))
        elif isinstance(step, RealFormStep):
            step = replace(step, particular=x_p)
        adjusted.append(step)
    piece = _Piece(
        x=x, y=Matrix(y_full), g=g, y_start=y_start, method="convolution",
        steps=tuple(conv_steps), conditions=(),
    )
    return piece, tuple(adjusted), rec_h.homogeneous, x_p


def base_int(base: Mapping[tuple, tuple[sp.Symbol, sp.Integral]], ph: sp.Symbol) -> sp.Integral:
    for p, I in base.values():
        if p == ph:
            return I
    raise KeyError(ph)


def _piece(st: _Setting, f: Sequence[sp.Expr], *, start: sp.Expr, x_start: Matrix) -> _Piece:
    try:
        for e in f:
            to_expoly(e, st.t)
    except NotExpPoly:
        return _convolution_piece(st, f, start=start, x_start=x_start)[0]
    return _closed_piece(st, f, start=start, x_start=x_start)


# ---------------------------------------------------------------------------
# The two solution paths


def _integration_symbol(system: System) -> sp.Symbol:
    used = {x.name for x in system.A.free_symbols | system.f.free_symbols} | {x.name for x in system.states}
    used |= {p.name for p in system.params} | {system.t.name}
    for name in ("s", "tau", "sigma", "s_1"):
        if name not in used:
            return sp.Symbol(name, real=True)
    return sp.Dummy("s", real=True)


def _setting(system: System, dec: Decomposition, *, real_constants: bool) -> _Setting:
    from .pipeline import _constant_names, _is_real_data

    n = system.n
    base = _constant_names(system)
    consts = tuple(sp.Symbol(f"{base}_{i + 1}", real=True) if real_constants else sp.Symbol(f"{base}_{i + 1}") for i in range(n))
    return _Setting(
        dec=dec,
        t=system.t,
        s=_integration_symbol(system),
        y_syms=tuple(sp.Symbol(f"y_{i + 1}") for i in range(n)),
        consts=consts,
        real=_is_real_data(system),
        budget=_Budget(INTEGRATE_BUDGET),
    )


def _finish(
    system: System,
    dec: Decomposition,
    *,
    x: Matrix,
    homogeneous: Matrix,
    particular: Matrix,
    constants: tuple[sp.Symbol, ...],
    steps: list[Step],
    records: Sequence[PieceRecord],
    conditions: Sequence[Condition],
    notices: Sequence[str],
    case: Case | None,
    check: bool,
) -> Solution:
    """Verify the pieces and assemble the Solution.

    A chosen regime ran the algebra with a positive placeholder for a square
    root (``dec.aux``); the root itself goes back into everything first, so the
    verification and the sheet see the real expressions.
    """
    from .pipeline import _failure_summary

    aux = dict(dec.aux)
    if aux:
        x, homogeneous, particular = (
            Matrix([restore_roots(e, aux, constants, system.t) for e in m]) for m in (x, homogeneous, particular)
        )
        records = [replace(r, x=r.x.xreplace(aux), f=r.f.xreplace(aux), jump=r.jump.xreplace(aux)) for r in records]
        steps = [_swap(st, aux) for st in steps]
        conditions = _swap(tuple(conditions), aux)
        dec = replace(
            dec,
            P=dec.P.xreplace(aux),
            J=dec.J.xreplace(aux),
            P_inv=dec.P_inv.xreplace(aux),
            column_eigenvalues=_swap(tuple(dec.column_eigenvalues), aux),
            conditions=_swap(tuple(dec.conditions), aux),
        )
    ver = verify_pieces(system, records, constants=constants, eigenvalues=dec.column_eigenvalues)
    sol = Solution(
        system=system,
        x=x,
        constants=constants,
        eigenvalues=dec.column_eigenvalues,
        P=dec.P,
        D=dec.J,
        P_inv=dec.P_inv,
        is_diagonalizable=dec.diagonalizable,
        homogeneous=homogeneous,
        particular=particular,
        steps=tuple(steps),
        verification=ver,
        conditions=tuple(dict.fromkeys(tuple(dec.conditions) + tuple(conditions))),
        notices=tuple(notices),
        case=case,
    )
    if check and not ver.ok:
        err = VerificationError(
            "the derived solution failed verification: " + _failure_summary(ver) + "; it is not reported as a result",
        )
        err.solution = sol  # type: ignore[attr-defined]
        raise err
    return sol


def solve_general_forcing(
    system: System,
    dec: Decomposition,
    *,
    steps: Sequence[Step] = (),
    case: Case | None = None,
    check: bool = True,
) -> Solution:
    """Solve x' = A x + f for a forcing outside the exponential polynomials.

    Switched inputs and impulses are solved interval by interval; any other
    input in convolution form.  ``steps`` are those taken so far (the
    decomposition); the decomposition ``dec`` is reused on every interval.

    >>> import derive
    >>> t = sp.Symbol("t")
    >>> sol = derive.solve([[-1]], [sp.Heaviside(t - 1)], t=t, x0=[0])
    >>> sol.x[0]
    Piecewise((0, t < 1), (1 - exp(1 - t), True))
    """
    t = system.t
    for e in system.f:
        if e.has(sp.Integral) or e.has(sp.Derivative):
            raise UnsupportedError(
                f"the forcing {e} contains an integral or derivative; expected a function of {t}", key="system.forcing"
            )
    if is_switched(system.f, t):
        return _solve_switched(system, dec, steps=list(steps), case=case, check=check)
    return _solve_convolution(system, dec, steps=list(steps), case=case, check=check)


def _solve_convolution(system: System, dec: Decomposition, *, steps: list[Step], case: Case | None, check: bool) -> Solution:
    st = _setting(system, dec, real_constants=False)
    t = system.t
    g = _decoupled(st, system.f)
    steps.append(DecoupleStep(t=t, y=st.y_syms, D=dec.J, P_inv=dec.P_inv, f=system.f, g=g))
    piece, rec_steps, x_h, x_p = _convolution_piece(st, system.f, start=system.t0, x_start=system.x0)
    steps.extend(piece.steps)
    steps.extend(rec_steps)
    ivp = system.x0 is not None
    constants = () if ivp else st.consts
    steps.append(ResultStep(t=t, states=system.states, x=piece.x, homogeneous=x_h, particular=x_p, constants=constants))
    notices = []
    kept = [s for s in piece.steps if isinstance(s, ConvolutionStep) and not s.closed]
    if kept:
        notices.append(
            "some convolution integrals have no closed form found within the time limit; they are kept as "
            "definite integrals, evaluated by quadrature in the numeric check"
        )
    record = PieceRecord(start=system.t0, end=None, f=system.f, x=piece.x, jump=Matrix([0] * system.n))
    return _finish(
        system, dec, x=piece.x, homogeneous=x_h, particular=x_p, constants=constants, steps=steps, records=[record],
        conditions=piece.conditions, notices=notices, case=case, check=check,
    )


def _number(e: sp.Expr) -> sp.Expr:
    """A handed-over state value: expanded, with exponentials of numbers combined per term."""
    return sp.Add(*[sp.powsimp(term) for term in sp.Add.make_args(sp.expand(e))])


def _midpoint(a: sp.Expr, b: sp.Expr | None) -> sp.Expr:
    return a + 1 if b is None else (a + b) / 2


def _solve_switched(system: System, dec: Decomposition, *, steps: list[Step], case: Case | None, check: bool) -> Solution:
    t = system.t
    n = system.n
    st = _setting(system, dec, real_constants=True)
    t0 = system.t0
    times = switching_times(system.f, t)
    for a in times:
        s = _decided_sign(a - t0)
        if s is None:
            raise UnsupportedError(
                f"the switching time {a} cannot be placed relative to t0 = {t0}; give numeric times or declare signs",
                key="system.forcing",
            )
    notices: list[str] = []
    before = [a for a in times if _decided_sign(a - t0) < 0]
    if any(any(e != 0 for e in impulse_weight(system.f, t, a)) for a in before):
        notices.append("impulses before t0 are outside the solution's range t >= t0 and have no effect on it")
    inner = [a for a in times if _decided_sign(a - t0) > 0]
    if len(inner) + 1 > MAX_INTERVALS:
        raise LimitError(
            f"the forcing switches {len(inner)} times after t0, giving {len(inner) + 1} intervals; "
            f"the limit is {MAX_INTERVALS}",
            key="system.forcing",
        )
    ivp = system.x0 is not None
    x0 = system.x0 if ivp else Matrix(list(st.consts))
    if not ivp:
        notices.append(
            "no initial values: the free constants are the state at t0, "
            f"x({sp.sstr(t0)}) = ({', '.join(c.name for c in st.consts)})"
        )
    steps.append(DecoupleStep(t=t, y=st.y_syms, D=dec.J, P_inv=dec.P_inv, f=system.f, g=_decoupled(st, system.f)))
    bounds = [t0] + inner
    records: list[PieceRecord] = []
    conditions: list[Condition] = []
    state = x0
    last_piece: _Piece | None = None
    for k, a in enumerate(bounds):
        end = bounds[k + 1] if k + 1 < len(bounds) else None
        jump = impulse_weight(system.f, t, a)
        if any(e != 0 for e in jump):
            after = Matrix([sp.expand(u + v) for u, v in zip(state, jump)])
            steps.append(JumpStep(t=t, at=a, weight=jump, before=state, after=after))
            state = after
        f_k = Matrix([sp.expand(resolve_on(e, t, _midpoint(a, end))) for e in system.f])
        piece = _piece(st, f_k, start=a, x_start=state)
        conditions.extend(piece.conditions)
        x_end = None if end is None else Matrix([_number(e.subs(t, end)) for e in piece.x])
        steps.append(
            IntervalStep(
                index=k + 1, t=t, start=a, end=end, f=f_k, g=piece.g, x_start=state, y_start=piece.y_start,
                y=piece.y, x=piece.x, x_end=x_end, method=piece.method,
            )
        )
        steps.extend(piece.steps)
        records.append(PieceRecord(start=a, end=end, f=f_k, x=piece.x, jump=jump))
        if x_end is not None:
            state = x_end
        last_piece = piece
    assert last_piece is not None
    if len(records) == 1:
        x = records[0].x
    else:
        x = Matrix([
            sp.Piecewise(*[(r.x[i], t < r.end) for r in records[:-1]], (records[-1].x[i], True)) for i in range(n)
        ])
    # the free response e^{A (t - t0)} x0, and the forced response as the rest
    free = _piece(st, [_ZERO] * n, start=t0, x_start=x0).x
    if len(records) == 1:
        forced = Matrix([group_terms(a - b, t) for a, b in zip(x, free)])
    else:
        forced = Matrix([
            sp.Piecewise(
                *[(group_terms(r.x[i] - free[i], t), t < r.end) for r in records[:-1]],
                (group_terms(records[-1].x[i] - free[i], t), True),
            )
            for i in range(n)
        ])
    constants = () if ivp else st.consts
    steps.extend(
        steady_state_steps(system, dec.column_eigenvalues, records[-1].x, f=records[-1].f,
                           since=records[-1].start if len(records) > 1 else None)
    )
    steps.append(ResultStep(t=t, states=system.states, x=x, homogeneous=free, particular=forced, constants=constants))
    return _finish(
        system, dec, x=x, homogeneous=free, particular=forced, constants=constants, steps=steps, records=records,
        conditions=conditions, notices=notices, case=case, check=check,
    )
