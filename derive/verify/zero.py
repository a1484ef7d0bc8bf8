"""The one answer to "is this expression identically zero?".

Verification of a solution, verification per interval and the claim checks of
``eigensheet check`` all ask it here, under one :class:`~derive.settings.ZeroPolicy`.

1. Exact reduction: a number in indexed roots reduced with the relations
   between the roots of each polynomial (``derive.rootrelations``); expansion; sines and cosines rewritten as exponentials
   (with integrals and unspecified functions held as symbols, so their
   insides stay as they are); ``cancel`` unless the expression holds cubic
   or nested radicals (seconds per entry there).
2. A numeric identity test at ``policy.digits`` digits, by a tree walk of our
   own over mpmath: at ``policy.points`` pseudo-random points of the free
   symbols (drawn with ``policy.seed``, sign assumptions respected), and on
   both sides of every step, impulse or |.| switch in t, so a piecewise error
   cannot hide.  Unevaluated definite integrals are evaluated by mpmath's
   quadrature at that precision; an unspecified function u(t) is replaced by
   a fixed smooth sample function (an identity that holds for every u holds
   for that one).  |e| <= ``policy.relative_tol`` times the sum of the
   magnitudes of its terms counts as zero at a point: a true zero comes out
   near 10^-digits of that size, a nonzero expression at a random point is
   nowhere near it.
3. When the numeric test finds zero (or cannot evaluate), ``simplify`` on
   expressions under ``policy.simplify_ops`` operations may still settle it
   exactly, within ``policy.simplify_seconds``; when that runs out the
   numeric verdict stands and its method says the simplifier was stopped.

Impulses in t are judged as distributions: g(t) delta(t - a) vanishes when
g(a) = 0, so a wrong jump at a switching time fails although every sample
point away from the switch sees no impulse.

The verdict says which route decided (``method``, printed on the sheets and
in check reports).
"""

from __future__ import annotations

import random
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, replace
from types import MappingProxyType
from typing import Any

import mpmath
import sympy as sp
from sympy.core.function import AppliedUndef

from ..limits import LimitExpired, inner_limit
from ..rootring import atoms_of, contains
from ..rootrelations import vanishes
from ..settings import DEFAULT_ZERO_POLICY, ZeroPolicy
from .evaluate import root_value

__all__ = [
    "ZeroVerdict",
    "MatrixVerdict",
    "decide",
    "decide_all",
    "draw",
    "drop_empty_integrals",
    "mp_value",
    "Singular",
]

_ZERO = sp.Integer(0)
_UNDECIDED = "undecided: the expression could not be evaluated at any sample point"


@dataclass(frozen=True)
class ZeroVerdict:
    """Zero or not, and how that was decided.

    ``kind`` is "exact", "numeric" or "undecided"; ``method`` is the text a
    sheet prints ("exact", "numeric identity test (50 digits, 5 points)",
    ...); ``size`` is the largest relative magnitude seen by the numeric
    test; ``witness`` the point where a nonzero value was found.

    >>> decide(sp.sin(sp.Symbol("t"))**2 + sp.cos(sp.Symbol("t"))**2 - 1).method
    'exact'
    """

    zero: bool
    method: str
    size: float = 0.0
    kind: str = "exact"
    points: int = 0
    witness: tuple[tuple[sp.Symbol, sp.Expr], ...] = ()
    digits: int = DEFAULT_ZERO_POLICY.digits

    def describe(self) -> str:
        """The verdict as a clause of a check report's sentence."""
        if self.kind == "exact":
            return "decided exactly"
        if self.kind == "undecided":
            return _UNDECIDED
        extra = self.method.split(";", 1)[1].strip() if ";" in self.method else ""
        extra = f"; {extra.rstrip(')')}" if extra else ""
        if self.zero:
            where = f" at {self.points} random points" if self.points > 1 else ""
            return f"decided by a numeric identity test ({self.digits} digits{where}{extra})"
        where = ", ".join(f"{s} = {v}" for s, v in self.witness)
        return f"nonzero by a numeric test ({self.digits} digits{', at ' + where if where else ''}{extra})"

    @property
    def short(self) -> str:
        """One word or two for a table column: exact, numeric (50 digits) or undecided."""
        if self.kind == "numeric":
            return f"numeric ({self.digits} digits)"
        return self.kind


def _exact(zero: bool) -> ZeroVerdict:
    return ZeroVerdict(zero, "exact")


# ---------------------------------------------------------------------------
# Sample points


def draw(sym: sp.Symbol, rng: random.Random) -> sp.Expr:
    """A generic exact value for ``sym`` that respects its sign (and integer) assumptions.

    >>> draw(sp.Symbol("k", positive=True), random.Random(1)) > 0
    True
    """
    if sym.is_integer:
        value: sp.Expr = sp.Integer(rng.randint(1, 6))
    else:
        value = sp.Rational(rng.randint(3, 41), rng.randint(7, 19))
    if sym.is_negative or sym.is_nonpositive:
        return -value
    if sym.is_positive or sym.is_nonnegative:
        return value
    return -value if rng.random() < 0.5 else value


def _breakpoints(expr: sp.Expr, t: sp.Symbol | None, point: Mapping[sp.Symbol, sp.Expr]) -> list[sp.Expr]:
    """Times where a step, impulse or |.| in ``expr`` switches (with the other symbols fixed)."""
    if t is None:
        return []
    found: list[sp.Expr] = []
    for atom in expr.atoms(sp.Heaviside, sp.DiracDelta, sp.Abs, sp.sign):
        arg = atom.args[0].xreplace({s: v for s, v in point.items() if s != t})
        poly = sp.Poly(arg, t) if arg.has(t) and arg.is_polynomial(t) else None
        if poly is None or poly.degree() != 1:
            continue
        a, b = poly.all_coeffs()
        if a.is_number and b.is_number and a != 0:
            root = -b / a
            if root.is_real and root not in found:
                found.append(root)
    return found


# ---------------------------------------------------------------------------
# The mpmath tree walk


class Singular(Exception):
    """The expression has no finite value at the sample point."""


_MP_FUNCTIONS: Mapping[type, Any] = MappingProxyType(
    {
        sp.exp: mpmath.exp,
        sp.sin: mpmath.sin,
        sp.cos: mpmath.cos,
        sp.tan: mpmath.tan,
        sp.sinh: mpmath.sinh,
        sp.cosh: mpmath.cosh,
        sp.tanh: mpmath.tanh,
        sp.log: mpmath.log,
        sp.asin: mpmath.asin,
        sp.acos: mpmath.acos,
        sp.atan: mpmath.atan,
        sp.erf: mpmath.erf,
        sp.Abs: abs,
        sp.re: mpmath.re,
        sp.im: mpmath.im,
        sp.conjugate: mpmath.conj,
    }
)


def _sample_function(name: str) -> Any:
    """A fixed smooth function standing for the unspecified function ``name``.

    Its coefficients come from the name, so every occurrence of u(.) in one
    expression is the same function.
    """
    rng = random.Random(name)
    a = [mpmath.mpf(rng.randint(2, 9)) / rng.randint(3, 11) for _ in range(5)]

    def u(*args: Any) -> Any:
        z = mpmath.fsum(args)
        return a[0] + a[1] * mpmath.sin(a[2] * z + a[3]) + a[4] * mpmath.exp(-z * z / 4)

    return u


def mp_value(expr: sp.Expr, point: Mapping[sp.Symbol, Any]) -> tuple[Any, Any]:
    """``expr`` at ``point`` with mpmath (call inside ``mpmath.workdps``), and the size of its terms.

    A walk of our own rather than ``evalf``: sympy's adaptive evaluation of
    cubic radicals inside exponentials takes seconds per value, and shared
    sub-expressions are computed once here.  Nothing is compiled or executed.
    ``point`` maps symbols to exact sympy numbers or mpmath numbers.  Raises
    :class:`Singular` where there is no finite value.

    >>> t = sp.Symbol("t")
    >>> with mpmath.workdps(30):
    ...     value, size = mp_value(sp.exp(t) - 1, {t: sp.Integer(0)})
    >>> value, size
    (mpf('0.0'), mpf('2.0'))
    """
    memo: dict[sp.Basic, Any] = {}

    def ev(node: Any) -> Any:
        if isinstance(node, (mpmath.mpf, mpmath.mpc)):
            return node
        if node in memo:
            return memo[node]
        if node.is_Symbol:
            value = ev(point[node])
        elif node.is_Integer:
            value = mpmath.mpf(int(node))
        elif node.is_Rational:
            value = mpmath.mpf(int(node.p)) / int(node.q)
        elif node.is_Float:
            value = mpmath.mpf(str(node))
        elif node is sp.pi:
            value = +mpmath.pi
        elif node is sp.E:
            value = +mpmath.e
        elif node is sp.I:
            value = mpmath.mpc(0, 1)
        elif node.has(sp.zoo, sp.nan, sp.oo, -sp.oo):
            raise Singular
        elif isinstance(node, sp.Add):
            value = mpmath.fsum([ev(a) for a in node.args])
        elif isinstance(node, sp.Mul):
            value = mpmath.fprod([ev(a) for a in node.args])
        elif isinstance(node, sp.Pow):
            base, exponent = ev(node.base), ev(node.exp)
            if base == 0 and mpmath.re(exponent) <= 0:
                raise Singular
            value = mpmath.power(base, exponent)
        elif isinstance(node, sp.Heaviside):
            arg = ev(node.args[0])
            if mpmath.im(arg) != 0:
                raise Singular
            arg = mpmath.re(arg)
            if arg == 0:
                value = ev(node.args[1]) if len(node.args) > 1 else mpmath.mpf(1) / 2
            else:
                value = mpmath.mpf(1 if arg > 0 else 0)
        elif isinstance(node, sp.DiracDelta):
            if ev(node.args[0]) == 0:
                raise Singular
            value = mpmath.mpf(0)
        elif isinstance(node, sp.sign):
            arg = ev(node.args[0])
            value = mpmath.mpf(0) if arg == 0 else arg / abs(arg)
        elif isinstance(node, sp.Piecewise):
            value = None
            for piece, cond in node.args:
                if _holds(cond, ev):
                    value = ev(piece)
                    break
            if value is None:
                raise Singular
        elif type(node) in _MP_FUNCTIONS:
            value = _MP_FUNCTIONS[type(node)](*[ev(a) for a in node.args])
        elif isinstance(node, sp.CRootOf):
            # the cached Newton refinement: evalf on a complex indexed root takes seconds
            value = mpmath.mpmathify(root_value(node, mpmath.mp.dps + 5))
        elif isinstance(node, AppliedUndef):
            value = _sample_function(type(node).__name__)(*[ev(a) for a in node.args])
        elif isinstance(node, sp.Integral):
            value = _quadrature(node, point)
        elif node.is_number:
            # other exact constants: sympy knows their value best.
            value = mpmath.mpmathify(sp.N(node, mpmath.mp.dps))
        else:
            raise Singular
        memo[node] = value
        return value

    try:
        total = ev(expr)
        terms = [ev(a) for a in sp.Add.make_args(expr)]
    except (ZeroDivisionError, ValueError, OverflowError, TypeError, KeyError, AttributeError):
        raise Singular from None
    if not (mpmath.isfinite(total) and all(mpmath.isfinite(v) for v in terms)):
        raise Singular
    return total, max([mpmath.mpf(1), mpmath.fsum([abs(v) for v in terms])])


def _holds(cond: Any, ev: Any) -> bool:
    if cond is sp.true or cond is True:
        return True
    if isinstance(cond, sp.And):
        return all(_holds(c, ev) for c in cond.args)
    if isinstance(cond, sp.Or):
        return any(_holds(c, ev) for c in cond.args)
    if isinstance(cond, sp.core.relational.Relational):
        lhs, rhs = mpmath.re(ev(cond.lhs)), mpmath.re(ev(cond.rhs))
        return bool({"<": lhs < rhs, "<=": lhs <= rhs, ">": lhs > rhs, ">=": lhs >= rhs}.get(cond.rel_op, False))
    raise Singular


def _quadrature(node: sp.Integral, point: Mapping[sp.Symbol, Any]) -> Any:
    """A definite integral in one variable at the working precision (mpmath's tanh-sinh rule)."""
    if len(node.limits) != 1 or len(node.limits[0]) != 3:
        raise Singular
    s, lo, hi = node.limits[0]
    a = mp_value(lo, point)[0]
    b = mp_value(hi, point)[0]
    if mpmath.im(a) != 0 or mpmath.im(b) != 0:
        raise Singular
    body = node.function

    def integrand(u: Any) -> Any:
        return mp_value(body, {**point, s: u})[0]

    return mpmath.quad(integrand, [mpmath.re(a), mpmath.re(b)])


# ---------------------------------------------------------------------------
# Deciding


def drop_empty_integrals(e: sp.Expr) -> sp.Expr:
    """Integrals from a to a are zero (x(t0) of a convolution form)."""
    if not contains(e, sp.Integral):
        return e
    return e.replace(
        lambda a: isinstance(a, sp.Integral) and all(len(lim) == 3 and sp.expand(lim[1] - lim[2]) == 0 for lim in a.limits),
        lambda a: _ZERO,
    )


def _numeric(expr: sp.Expr, t: sp.Symbol | None, policy: ZeroPolicy) -> ZeroVerdict:
    syms = sorted(expr.free_symbols, key=sp.default_sort_key)
    rng = random.Random(policy.seed)
    others = [s for s in syms if s != t]
    checked = 0
    worst = 0.0
    plan: list[tuple[int, int]] = [(-1, 0)] * (policy.points if syms else 1)
    base = {s: draw(s, rng) for s in others}
    breaks = _breakpoints(expr, t if t in syms else None, base)
    for k in range(len(breaks)):
        plan += [(k, -1), (k, 1)]
    notes = []
    if expr.has(sp.Integral):
        notes.append("integrals by quadrature")
    if expr.atoms(AppliedUndef):
        notes.append("unspecified functions replaced by a sample function")
    tail = "".join(f"; {n}" for n in notes)
    with mpmath.workdps(policy.digits + 10):
        for where, side in plan:
            for _ in range(4):  # a few redraws if the point hits a singularity
                point = {s: draw(s, rng) for s in others} if where < 0 else dict(base)
                if t is not None and t in syms:
                    if where < 0:
                        point[t] = draw(t, rng) if rng.random() < 0.5 else sp.Rational(rng.randint(-20, 40), 17)
                        if (t.is_positive or t.is_nonnegative) and point[t] <= 0:
                            point[t] = -point[t] + sp.Rational(1, 7)
                    else:
                        point[t] = breaks[where] + side * sp.Rational(rng.randint(1, 30), rng.randint(20, 40))
                try:
                    value, scale = mp_value(expr, point)
                except Singular:
                    continue
                checked += 1
                rel = float(abs(value) / scale)
                worst = max(worst, rel)
                if rel > policy.relative_tol:
                    witness = tuple((s, point[s]) for s in syms)
                    method = f"numeric identity test ({policy.digits} digits{tail})"
                    return ZeroVerdict(False, method, rel, "numeric", checked, witness, policy.digits)
                break
    if checked == 0:
        return ZeroVerdict(False, _UNDECIDED, 0.0, "undecided", 0, (), policy.digits)
    method = f"numeric identity test ({policy.digits} digits, {checked} points{tail})"
    return ZeroVerdict(True, method, worst, "numeric", checked, (), policy.digits)


def _plainly_nonzero(e: sp.Expr) -> bool:
    """A product of nonzero rationals, exponentials and nonzero symbols: nonzero by inspection."""
    for factor in sp.Mul.make_args(e):
        if factor.is_Rational and factor != 0:
            continue
        if isinstance(factor, sp.exp):
            continue
        if factor.is_Pow and factor.base.is_zero is False and factor.exp.is_Rational:
            continue
        if factor.is_Symbol and factor.is_zero is False:
            continue
        return False
    return True


def _has_radicals(e: sp.Expr) -> bool:
    """True when ``e`` holds a root of order 3 or more, a nested root or an indexed root (costly to simplify)."""
    for p in e.atoms(sp.Pow):
        if p.exp.is_Rational and not p.exp.is_Integer:
            if p.exp.q > 2 or any(q.exp.is_Rational and not q.exp.is_Integer for q in p.base.atoms(sp.Pow)):
                return True
    return e.has(sp.CRootOf)


def _held(e: sp.Expr) -> sp.Expr:
    """``e`` with integrals and unspecified functions as plain symbols, for the exact steps."""
    opaque = sorted(e.atoms(sp.Integral) | e.atoms(AppliedUndef) | e.atoms(sp.Derivative), key=sp.default_sort_key)
    return e.xreplace({a: sp.Dummy(f"J{k}") for k, a in enumerate(opaque)}) if opaque else e


def _regular(expr: sp.Expr, t: sp.Symbol | None, policy: ZeroPolicy, simplify: bool) -> ZeroVerdict:
    if expr == 0:
        return _exact(True)
    if contains(expr, sp.CRootOf) and vanishes(expr):
        # a number in several roots of one polynomial, zero by their relations (a state handed
        # across a switch): settled before expanding it, which takes minutes and cannot see them
        return _exact(True)
    e = sp.expand(expr)
    if e == 0:
        return _exact(True)
    if e.is_number and not e.has(sp.CRootOf) and e.is_zero is False:
        return _exact(False)
    if e.is_Rational or _plainly_nonzero(e):
        return _exact(False)
    held = _held(e)
    if held.has(sp.sin, sp.cos, sp.tan, sp.sinh, sp.cosh):
        # complex exponentials make sin^2 + cos^2 = 1 cancel by expansion alone
        if sp.expand(held.rewrite(sp.exp)) == 0:
            return _exact(True)
    # cancel and simplify settle rational functions of parameters, but on cubic
    # radicals they take seconds per entry: there the numeric test decides.
    radical = _has_radicals(e)
    ops = sp.count_ops(held) if not radical else 0
    if not radical and ops <= 10 * policy.simplify_ops:
        try:
            if sp.cancel(held) == 0:
                return _exact(True)
        except (sp.PolynomialError, TypeError, ValueError, NotImplementedError):
            pass
    numeric = _numeric(e, t, policy)
    if not numeric.zero and numeric.kind == "numeric":
        return numeric
    # numerically zero (or not evaluable): try to settle it exactly, within the policy's time
    if simplify and not radical and ops <= policy.simplify_ops:
        try:
            with inner_limit(policy.simplify_seconds) as armed:
                if armed and sp.simplify(held) == 0:
                    return _exact(True)
        except LimitExpired:
            if numeric.kind == "numeric":
                # the sheet prints the method: it says the simplifier was stopped and who decided
                stopped = f", simplify stopped at its {policy.simplify_seconds:g} s budget"
                return replace(numeric, method=numeric.method + stopped)
    return numeric


def decide(
    expr: Any, *, t: sp.Symbol | None = None, policy: ZeroPolicy = DEFAULT_ZERO_POLICY, simplify: bool = True
) -> ZeroVerdict:
    """Is ``expr`` identically zero?  Exact reduction first, the numeric identity test if needed.

    ``t`` names the time variable: sample points are then also taken on both
    sides of every switch in t, and impulses in t are judged as distributions.

    >>> t = sp.Symbol("t")
    >>> decide(sp.exp(2 * t) - sp.exp(t) ** 2).zero, decide(sp.exp(t) - 1).zero
    (True, False)
    """
    e = sp.Integer(expr) if isinstance(expr, int) else sp.sympify(expr, strict=True)
    e = drop_empty_integrals(e)
    # atoms_of, contains: never into an indexed root's polynomial (rebuilt on every read)
    deltas = [d for d in atoms_of(e, sp.DiracDelta) if t is not None and d.has(t)]
    if not deltas:
        return _regular(e, t, policy, simplify)
    e = sp.expand(e)
    weights: dict[sp.Expr, sp.Expr] = {}
    for d in deltas:
        order = d.args[1] if len(d.args) > 1 else 0
        if order != 0 or not d.args[0].is_polynomial(t) or sp.Poly(d.args[0], t).degree() != 1:
            # A derivative of an impulse, or a curved argument: only the
            # regular part below is tested (rare in engineering forcing).
            continue
        a, b = sp.Poly(d.args[0], t).all_coeffs()
        root = sp.cancel(-b / a)
        weights[root] = weights.get(root, _ZERO) + e.coeff(d) / sp.Abs(a)
    regular = e.xreplace({d: _ZERO for d in deltas})
    verdicts = [_regular(regular, t, policy, simplify)]
    verdicts += [_regular(sp.expand(g.subs(t, root)), None, policy, simplify) for root, g in weights.items()]
    bad = [v for v in verdicts if not v.zero]
    if bad:
        return bad[0]
    return next((v for v in verdicts if v.kind != "exact"), verdicts[0])


@dataclass(frozen=True)
class MatrixVerdict:
    """The verdicts of all entries of a matrix: zero when every entry is."""

    zero: bool
    method: str
    verdicts: tuple[ZeroVerdict, ...]

    def describe(self) -> str:
        """The deciding verdict as a clause: the first numeric one when zero, the first nonzero one otherwise."""
        if self.zero:
            numeric = [v for v in self.verdicts if v.kind == "numeric"]
            return numeric[0].describe() if numeric else "decided exactly"
        return next(v for v in self.verdicts if not v.zero).describe()

    @property
    def sheet_method(self) -> str:
        """How the set was settled, as a sheet prints it: "exact", or the first other method used."""
        deciding = self.verdicts if self.zero else tuple(v for v in self.verdicts if not v.zero)
        return next((v.method for v in deciding if v.kind != "exact"), "exact")


def decide_all(
    entries: Sequence[Any], t: sp.Symbol | None = None, *, policy: ZeroPolicy = DEFAULT_ZERO_POLICY
) -> MatrixVerdict:
    """Decide every entry; ``method`` is "exact" or the short name of the first other method."""
    verdicts = tuple(decide(e, t=t, policy=policy) for e in entries)
    zero = all(v.zero for v in verdicts)
    deciding = verdicts if zero else tuple(v for v in verdicts if not v.zero)
    method = "exact" if all(v.kind == "exact" for v in deciding) else next(v.short for v in deciding if v.kind != "exact")
    return MatrixVerdict(zero, method, verdicts)
