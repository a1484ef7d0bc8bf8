"""Time measured from t0: an initial value problem at t0 != 0 solved in tau = t - t0.

Solved as it stands, an initial value problem at t0 != 0 carries
e^{-lam t0} through every coefficient, and the forcing's phase (sin 2t read
at t = tau + 1 is sin(2 tau + 2)) puts e^{2i} into every complex coefficient
of the real form: a symbolic spring-mass-damper took minutes at t0 = 1 against
seconds at t0 = 0.  So the stage list solves the shifted problem instead,

    dx/dtau = A x + f(tau + t0),  x(0) = x0,  switching times moved by -t0,

which costs what the problem at t0 = 0 costs, and writes the result back in t.

The forcing's shift is kept out of the complex coefficients: each exponential
e^{a t + b} becomes e^{a tau + b} E with E a positive stand-in for e^{a t0},
each sine or cosine of w t + b becomes a combination of sin(w tau + b) and
cos(w tau + b) with real stand-ins C, S for cos(w t0), sin(w t0).  The
coefficients are then rational in C, S, E like any parameter.

Back in t, each group of terms of one mode (rate a, frequency w) is written in
one of two ways:

* the input's own modes (a forced response) in t itself: e^{a tau} = e^{a t}/E
  and the addition formulas with S^2 = 1 - C^2, which leaves no stand-in
  (sin 2t comes back as sin 2t, not as cos 2 sin(2(t - 1)) + ...);
* every other mode (the free response, and resonance) in (t - t0): the
  stand-ins take their values and tau becomes t - t0, so e^{-2 tau} reads
  e^{-2 (t - t0)}.

The Solution is then assembled and verified against the user's own system,
t0 and x0: the shift is a way of computing, never an assumption of the check.
"""

from __future__ import annotations

from dataclasses import dataclass, replace
from typing import Sequence, TypeAlias

import sympy as sp

from ..forcing import resolve_on
from ..model import Condition, System
from ..steps import ShiftStep, Step, substitute
from ..verify.pieces import PieceRecord
from .methods.base import Pieces, is_real_data

__all__ = ["TimeShift", "time_shift", "shift_back"]

Matrix: TypeAlias = sp.ImmutableMatrix
_ZERO = sp.Integer(0)


@dataclass(frozen=True)
class TimeShift:
    """The shifted problem and what is needed to write its answer back in t.

    ``system`` is the user's, ``shifted`` the problem in ``tau`` from 0;
    ``values`` maps each stand-in to its value (cos(w t0), sin(w t0) or
    e^{a t0}); ``trig`` maps a frequency w to its stand-ins (C, S) and
    ``rates`` a rate a to its stand-in E.
    """

    system: System
    shifted: System
    tau: sp.Symbol
    values: tuple[tuple[sp.Symbol, sp.Expr], ...]
    trig: tuple[tuple[sp.Expr, tuple[sp.Symbol, sp.Symbol]], ...]
    rates: tuple[tuple[sp.Expr, sp.Symbol], ...]

    @property
    def stand_ins(self) -> frozenset[sp.Symbol]:
        """The stand-in symbols: real constants, grouped like numbers (never factored like parameters)."""
        return frozenset(s for s, _ in self.values)

    @property
    def t0(self) -> sp.Expr:
        return self.system.t0

    @property
    def t(self) -> sp.Symbol:
        return self.system.t

    def step(self) -> ShiftStep:
        """The sheet's step: tau = t - t0, the forcing in tau, x(tau = 0) = x0."""
        assert self.system.x0 is not None
        return ShiftStep(
            t=self.t,
            tau=self.tau,
            t0=self.t0,
            x0=self.system.x0,
            f=self.system.f,
            f_shifted=Matrix(substitute(tuple(self.shifted.f), dict(self.values))),
        )


def _time_symbol(system: System) -> sp.Symbol:
    """tau, or another name the system does not use."""
    used = {s.name for s in system.A.free_symbols | system.f.free_symbols | system.t0.free_symbols}
    used |= {s.name for s in system.states} | {p.name for p in system.params} | {system.t.name}
    for name in ("tau", "theta", "sigma", "tau_1"):
        if name not in used:
            return sp.Symbol(name, real=True)
    return sp.Dummy("tau", real=True)


def _linear(u: sp.Expr, t: sp.Symbol) -> tuple[sp.Expr, sp.Expr] | None:
    """(a, b) with u = a t + b, or None when u is not linear in t."""
    b, timed = u.as_independent(t, as_Add=True)
    # the usual argument a t + b reads off its terms; differentiating cost more than the rest of the walk
    if timed.is_Mul:
        a, rest = timed.as_independent(t, as_Add=False)
        if rest == t:
            return a, b
    a = sp.diff(u, t)
    if a.has(t):
        return None
    return a, sp.expand(u - a * t)


class _Shifter:
    """Rewrites f(t) as f(tau + t0) with stand-ins for the shift's exponentials and phases."""

    def __init__(self, t: sp.Symbol, tau: sp.Symbol, t0: sp.Expr) -> None:
        self.t, self.tau, self.t0 = t, tau, t0
        self.trig: dict[sp.Expr, tuple[sp.Symbol, sp.Symbol]] = {}
        self.rates: dict[sp.Expr, sp.Symbol] = {}
        self.values: dict[sp.Symbol, sp.Expr] = {}

    def cs(self, w: sp.Expr) -> tuple[sp.Symbol, sp.Symbol]:
        if w not in self.trig:
            k = len(self.trig) + 1
            C, S = sp.Dummy(f"C{k}", real=True), sp.Dummy(f"S{k}", real=True)
            self.trig[w] = (C, S)
            self.values[C], self.values[S] = sp.cos(w * self.t0), sp.sin(w * self.t0)
        return self.trig[w]

    def e(self, a: sp.Expr) -> sp.Symbol:
        if a not in self.rates:
            E = sp.Dummy(f"E{len(self.rates) + 1}", positive=True)
            self.rates[a] = E
            self.values[E] = sp.exp(a * self.t0)
        return self.rates[a]

    def __call__(self, e: sp.Expr) -> sp.Expr:
        t, tau = self.t, self.tau
        if not e.has(t):
            return e
        if e == t:
            return tau + self.t0
        if isinstance(e, (sp.exp, sp.sin, sp.cos)):
            ab = _linear(e.args[0], t)
            if ab is not None and ab[0] != 0 and ab[0].is_real:
                a, b = ab
                local = a * tau + b
                if isinstance(e, sp.exp):
                    return sp.exp(local) * self.e(a)
                sign = -1 if a.could_extract_minus_sign() else 1
                C, S = self.cs(sign * a)
                S = sign * S
                # cos(u + a t0) and sin(u + a t0) by the addition formulas
                if isinstance(e, sp.cos):
                    return sp.cos(local) * C - sp.sin(local) * S
                return sp.sin(local) * C + sp.cos(local) * S
        return e.func(*[self(arg) for arg in e.args])


def time_shift(system: System) -> TimeShift | None:
    """The problem in tau = t - t0 from 0, or None where it does not apply.

    It applies to an initial value problem at t0 != 0 with real data; a
    general solution, t0 = 0 and complex data are solved as they stand.

    >>> from derive.pipeline import build_system
    >>> t = sp.Symbol("t")
    >>> sys, _ = build_system([[-1]], [sp.exp(-2*t)], t=t, x0=[1], t0=1)
    >>> time_shift(sys).shifted.t0
    0
    """
    if system.x0 is None or system.t0 == 0 or not is_real_data(system) or system.A.has(system.t):
        return None
    tau = _time_symbol(system)
    shifter = _Shifter(system.t, tau, system.t0)
    f = Matrix([sp.expand(shifter(e)) for e in system.f])
    shifted = replace(system, t=tau, t0=_ZERO, f=f, equations=())
    return TimeShift(
        system=system,
        shifted=shifted,
        tau=tau,
        values=tuple(shifter.values.items()),
        trig=tuple(shifter.trig.items()),
        rates=tuple(shifter.rates.items()),
    )


# ---------------------------------------------------------------------------
# back in t


def _mode(term: sp.Expr, tau: sp.Symbol) -> tuple[sp.Expr, sp.Expr] | None:
    """(rate a, frequency w >= 0) of a term c tau^k e^{a tau} (cos|sin)(w tau + b), None for another shape."""
    a, w = _ZERO, _ZERO
    for factor in sp.Mul.make_args(term):
        if not factor.has(tau):
            continue
        if factor.is_Pow and factor.base == tau and factor.exp.is_Integer and factor.exp > 0 or factor == tau:
            continue
        if isinstance(factor, (sp.exp, sp.sin, sp.cos)):
            ab = _linear(factor.args[0], tau)
            if ab is None:
                return None
            if isinstance(factor, sp.exp):
                a += ab[0]
            elif w != 0:
                return None
            else:
                w = -ab[0] if ab[0].could_extract_minus_sign() else ab[0]
            continue
        return None
    ar, ai = _parts(a)
    if ai != 0:
        # e^{i w tau} of a complex form: its frequency, unless a sine or cosine is there too
        if w != 0:
            return None
        w = -ai if ai.could_extract_minus_sign() else ai
    return ar, w


def _parts(a: sp.Expr) -> tuple[sp.Expr, sp.Expr]:
    """(Re, Im) of a rate written as r + i w (read off the expression, not decided)."""
    if a.is_Rational:
        return a, _ZERO
    a = sp.expand(a)
    ai = a.coeff(sp.I)
    return sp.expand(a - sp.I * ai), ai


def _in_t(term: sp.Expr, shift: TimeShift, trig: dict, rates: dict) -> sp.Expr:
    """One term with tau = t - t0 written through the stand-ins: e^{a tau} = e^{a t}/E, addition formulas."""
    tau, t, t0 = shift.tau, shift.t, shift.t0
    out = []
    for factor in sp.Mul.make_args(term):
        if not factor.has(tau):
            out.append(factor)
        elif isinstance(factor, sp.exp):
            a, b = _linear(factor.args[0], tau)  # type: ignore[misc]
            ar, ai = _parts(a)
            out.append(sp.exp(a * t + b))
            if ar != 0:
                out.append(1 / rates[_rate_key(ar, list(rates))])
            if ai != 0:
                # e^{-i w t0} = C - i S (w > 0), C + i S (w < 0)
                sign = -1 if ai.could_extract_minus_sign() else 1
                C, S = trig[sign * ai]
                out.append(C - sp.I * sign * S)
        elif isinstance(factor, (sp.sin, sp.cos)):
            w, b = _linear(factor.args[0], tau)  # type: ignore[misc]
            sign = -1 if w.could_extract_minus_sign() else 1
            C, S = trig[sign * w]
            S = sign * S
            u = w * t + b
            # sin(u - w t0), cos(u - w t0)
            if isinstance(factor, sp.sin):
                out.append(sp.sin(u) * C - sp.cos(u) * S)
            else:
                out.append(sp.cos(u) * C + sp.sin(u) * S)
        else:
            out.append(factor.xreplace({tau: t - t0}))
    return sp.Mul(*out)


def _reduced(e: sp.Expr, trig: dict) -> sp.Expr:
    """e with S^2 = 1 - C^2 for every stand-in pair (C, S)."""
    e, back = _held(e)
    for C, S in trig.values():
        if e.has(S):
            poly = sp.Poly(e, S)
            e = sp.expand(poly.rem(sp.Poly(S**2 + C**2 - 1, S)).as_expr())
    return e.xreplace(back)


def _held(e: sp.Expr) -> tuple[sp.Expr, dict]:
    """e expanded with its exponentials, sines and cosines held as symbols (kept out of denominators)."""
    atoms = sorted(e.atoms(sp.exp, sp.sin, sp.cos), key=sp.default_sort_key)
    hold = {x: sp.Dummy(f"H{i}") for i, x in enumerate(atoms) if x.free_symbols}
    return sp.expand(e.xreplace(hold)), {v: k for k, v in hold.items()}


def _rate_key(a: sp.Expr, keys: Sequence[sp.Expr]) -> sp.Expr | None:
    for k in keys:
        if sp.expand(k - a) == 0:
            return k
    return None


def _from_tau(u: sp.Expr, shift: TimeShift) -> sp.Expr:
    """Arguments in tau as t - t0: r tau + b becomes r (t - t0) + b."""
    tau, t, t0 = shift.tau, shift.t, shift.t0
    rep = {}
    for a in u.atoms(sp.exp, sp.sin, sp.cos):
        ab = _linear(a.args[0], tau) if a.has(tau) else None
        if ab is not None and ab[0] != 0:
            r, b = ab
            rep[a] = a.func(r * (t - t0) + b)
    return u.xreplace(rep).xreplace({tau: t - t0})


def to_t(e: sp.Expr, shift: TimeShift, eigenvalues: Sequence[sp.Expr]) -> sp.Expr:
    """A solution component in tau (with stand-ins) written in t.

    The input's own modes go to t (the stand-ins cancel there); every other
    mode keeps tau = t - t0 with the stand-ins' values put in.
    """
    from ..recombine import tidy

    tau, t = shift.tau, shift.t
    values = dict(shift.values)
    trig, rates = dict(shift.trig), dict(shift.rates)
    if isinstance(e, sp.Piecewise):
        return sp.Piecewise(*[(to_t(v, shift, eigenvalues), _condition(c, shift)) for v, c in e.args])
    if not e.free_symbols & set(values):
        # no stand-in: no input mode to bring back to t (the free response), the method's grouping stands
        return _from_tau(e, shift)
    groups: dict[tuple[sp.Expr, sp.Expr] | None, list[sp.Expr]] = {}
    # the method's grouping is one term per mode: only a term of mixed modes is expanded
    expanded = split = False
    for top in sp.Add.make_args(e):
        mode = _mode(top, tau)
        if mode is not None:
            groups.setdefault(mode, []).append(top)
            continue
        expanded = split = True
        held, back = _held(top)
        for term in sp.Add.make_args(held):
            term = term.xreplace(back)
            groups.setdefault(_mode(term, tau), []).append(term)
    at_zero = {v: (_ZERO if v in {S for _, S in trig.values()} else sp.Integer(1)) for v in values}
    forced: list[sp.Expr] = []
    free: list[sp.Expr] = []
    for mode, terms in groups.items():
        written = None
        if mode is not None and not _is_eigen(mode, eigenvalues):
            a, w = mode
            if (a == 0 or _rate_key(a, list(rates)) is not None) and (w == 0 or w in trig):
                if not any(_has_tau_power(term, tau) for term in terms):
                    # an input mode's part of x does not depend on t0 (it is the particular
                    # solution's): the stand-ins at their t0 = 0 values (C = 1, S = 0, E = 1) give it
                    forced.append(sp.Add(*terms).xreplace(at_zero).xreplace({tau: t}))
                    continue
                try:
                    candidate = _reduced(sp.Add(*[_in_t(term, shift, trig, rates) for term in terms]), trig)
                except (sp.PolynomialError, TypeError, KeyError):
                    candidate = None
                if candidate is not None and not (candidate.free_symbols & set(values)):
                    written = candidate
                    expanded = True
        if written is None:
            split = split or len(terms) > 1
            free.extend(terms)
        else:
            forced.append(written)
    parts = []
    if forced:
        parts.append(tidy(sp.Add(*forced), (), t) if expanded else sp.Add(*forced))
    numbers_only = not (sp.Add(*free).free_symbols - set(values) - {tau})
    if free and numbers_only and not split:
        # one term per mode, as the method grouped it: its coefficient stands, with the values put in
        parts.append(_from_tau(sp.Add(*free).xreplace(values), shift))
    elif free and numbers_only:
        # grouped again with the stand-ins as numbers (expanded), the values put in after: e^{-1/2}
        # then joins its mode's coefficient instead of being held as an exponential of its own
        parts.append(_from_tau(tidy(sp.Add(*free), (), tau, numbers=set(values)).xreplace(values), shift))
    elif free:
        # parameters: grouped again with the values in, each coefficient factored by cos w t0, sin w t0
        # (shorter, and the residual check of the result in t costs less than on the method's grouping)
        parts.append(_from_tau(tidy(sp.Add(*free).xreplace(values), (), tau), shift))
    return sp.Add(*parts)


def _has_tau_power(term: sp.Expr, tau: sp.Symbol) -> bool:
    """True when a factor of the term is tau or a power of it (an input with a polynomial factor)."""
    return any(f == tau or (f.is_Pow and f.base == tau) for f in sp.Mul.make_args(term))


def _is_eigen(mode: tuple[sp.Expr, sp.Expr], eigenvalues: Sequence[sp.Expr]) -> bool:
    a, w = mode
    for lam in eigenvalues:
        for z in (a + sp.I * w, a - sp.I * w):
            d = sp.expand(lam - z)
            if d == 0:
                return True
            if d.free_symbols or all(p.is_Rational for p in _parts(d)):
                continue
            # radicals: equal only if their difference vanishes (to 25 digits)
            if abs(complex(sp.N(d, 30))) < 1e-25:
                return True
    return False


def _condition(c: sp.Basic, shift: TimeShift) -> sp.Basic:
    """tau < e as t < e + t0."""
    if isinstance(c, sp.StrictLessThan) and c.lhs == shift.tau:
        return sp.StrictLessThan(shift.t, c.rhs + shift.t0)
    return c.xreplace({shift.tau: shift.t - shift.t0}) if isinstance(c, sp.Basic) else c


def _piecewise(values: list[sp.Expr], records: Sequence[PieceRecord], t: sp.Symbol) -> sp.Expr:
    if len(records) == 1:
        return values[0]
    return sp.Piecewise(*[(v, t < r.end) for v, r in zip(values[:-1], records[:-1])], (values[-1], True))


def shift_back(pieces: Pieces, shift: TimeShift, eigenvalues: Sequence[sp.Expr]) -> Pieces:
    """The method's pieces in tau as pieces in t for the user's system; the derivation steps stay in tau."""
    system, t0, t = shift.system, shift.t0, shift.t
    values = dict(shift.values)

    def back(m: Matrix) -> Matrix:
        return Matrix([to_t(e, shift, eigenvalues) for e in m])

    records: list[PieceRecord] = []
    for r in pieces.records:
        start = r.start + t0
        end = None if r.end is None else r.end + t0
        mid = start + 1 if end is None else (start + end) / 2
        f = Matrix([sp.expand(resolve_on(e, t, mid)) for e in system.f])
        records.append(PieceRecord(start=start, end=end, f=f, x=back(r.x), jump=r.jump))
    if records:
        x = Matrix([_piecewise([r.x[i] for r in records], records, t) for i in range(system.n)])
    else:
        x = back(pieces.x)
    steps: tuple[Step, ...] = (shift.step(),) + substitute(pieces.steps, values)
    conditions: tuple[Condition, ...] = substitute(pieces.conditions, {**values, shift.tau: t - t0})
    return replace(
        pieces,
        x=x,
        homogeneous=back(pieces.homogeneous),
        particular=back(pieces.particular),
        steps=steps,
        records=tuple(records),
        conditions=conditions,
    )
