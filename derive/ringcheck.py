"""The substitution check x' - A x - f = 0 done in a polynomial ring.

A solution of this solver is a sum of terms c t^k e^{u} cos(u) or sin(u) with
u linear in t.  Holding every exponential, cosine and sine as a generator of a
polynomial ring (beside t, the free constants and the algebraic numbers
sqrt(d), i, indexed roots), differentiation in t is the derivation

    D t = 1,   D E = u' E   (E = e^u),   D C = -u' S,   D S = u' C
    (C = cos u, S = sin u),   D of a constant = 0,

and x' - A x - f is a polynomial in those generators whose zero test is one
pass of sparse arithmetic, where expanding the sympy expression rewrites the
whole tree.  An algebraic generator g = b^(1/q) is reduced with g^q = b (i^2 =
-1; an indexed root with its defining polynomial), so coefficients such as
(1 + sqrt 2)(sqrt 2 / 4) cancel exactly.

Only a zero polynomial is a verdict.  Treating the generators as independent
is sound in that direction (every relation used is true), but not complete:
e^{2t} beside (e^t)^2, or sqrt 6 beside sqrt 2 sqrt 3, can leave a nonzero
polynomial for a zero residual, so False (not settled) sends the caller to expansion and
the numeric identity test.  The derivative of the argument of each function
is taken by sympy, so the check uses only the final x(t), A and f.
"""

from __future__ import annotations

from typing import Sequence

import sympy as sp
import sympy.polys.domains.old_polynomialring  # noqa: F401 - domain unification imports it on first use
from sympy.polys.polyerrors import PolynomialError
from sympy.polys.domains import QQ
from sympy.polys.rings import PolyRing

from .realroots import as_pair_roots
from .rootring import atoms_of, reduce_number, replace_atoms

__all__ = ["residual_is_zero", "residuals_are_zero", "initial_is_zero"]


class _NotInRing(Exception):
    pass


class _NotRational(Exception):
    """An expression the walk into Q[gens] does not read; the general reading does."""


class _Ring:
    """Generators, their derivatives and the algebraic relations for one set of expressions."""

    def __init__(self, exprs: Sequence[sp.Expr], t: sp.Symbol, symbols_as_gens: bool = True) -> None:
        self.t = t
        exprs = [sp.sympify(e, strict=True) for e in exprs]
        funcs = set()
        for e in exprs:
            funcs |= atoms_of(e, sp.exp, sp.sin, sp.cos)
        # the derivative of cos u is in sin u: both are generators
        funcs |= {sp.sin(a.args[0]) for a in funcs if isinstance(a, sp.cos)}
        funcs |= {sp.cos(a.args[0]) for a in funcs if isinstance(a, sp.sin)}
        funcs = {a for a in funcs if isinstance(a, (sp.exp, sp.sin, sp.cos))}
        self.hold: dict[sp.Expr, sp.Dummy] = {}
        rates: dict[sp.Dummy, tuple[str, sp.Expr, sp.Expr]] = {}
        # any order of the generators gives the same verdict: no sort keys (costly on exponentials)
        for i, a in enumerate(funcs):
            u = a.args[0]
            if u.has(sp.exp, sp.sin, sp.cos):
                raise _NotInRing("a nested function")
            self.hold[a] = sp.Dummy(f"G{i}")
        for a, g in self.hold.items():
            u = a.args[0]
            du = _rate(u, t)
            if du.has(t):
                raise _NotInRing("an argument not linear in t")
            rates[g] = (type(a).__name__, as_pair_roots(du), u)
        self._held = {e: as_pair_roots(replace_atoms(e, self.hold)) for e in exprs}  # elements() reads the same expressions
        held = list(self._held.values()) + [du for _, du, _ in rates.values()]
        # algebraic numbers as generators, with their relations
        alg: dict[sp.Expr, sp.Dummy] = {}
        # (generator, relation expression in it that vanishes)
        self.relations: list[tuple[sp.Dummy, sp.Expr]] = []
        for e in held:
            for p in atoms_of(e, sp.Pow):
                if p.base.has(t) or p.base.free_symbols & set(self.hold.values()):
                    continue
                for base, q, _ in _radical_parts(p):
                    if (base, q) not in alg:
                        g = alg[(base, q)] = sp.Dummy(f"R{len(alg)}")
                        self.relations.append((g, g**q - base))
            if e.has(sp.I) and sp.I not in alg:
                alg[sp.I] = sp.Dummy("I")
                self.relations.append((alg[sp.I], alg[sp.I] ** 2 + 1))
            for r in atoms_of(e, sp.CRootOf):
                if r not in alg:
                    alg[r] = sp.Dummy(f"Q{len(alg)}")
                    self.relations.append((alg[r], r.poly.as_expr().subs(r.poly.gen, alg[r])))
        self.alg = alg
        self.rates = rates
        others = set()
        for e in held:
            others |= e.free_symbols
        others -= set(self.hold.values()) | {t}
        # every other symbol a generator too (a rational domain is the fast one);
        # parameters in a denominator need the fraction field instead
        extra = sorted(others, key=sp.default_sort_key) if symbols_as_gens else []
        self.gens = (t, *self.hold.values(), *alg.values(), *extra)

    def _alg_expr(self, e: sp.Expr) -> sp.Expr:
        # a^(p/q) as (a^(1/q))^p, so every algebraic number is a power of a generator
        e = sp.sympify(e, strict=True)
        rep = {}
        for p in atoms_of(e, sp.Pow):
            parts = _radical_parts(p)
            if parts and all((b, q) in self.alg for b, q, _ in parts):
                # b^(k/q) = b^floor(k/q) g^(k mod q): a negative power lands in the domain
                rep[p] = sp.Mul(*[b ** (k // q) * self.alg[(b, q)] ** (k % q) for b, q, k in parts])
        e = replace_atoms(e, rep)
        rest = {k: v for k, v in self.alg.items() if not isinstance(k, tuple)}
        return replace_atoms(e, rest)

    def elements(self, exprs: Sequence[sp.Expr]) -> list:
        """The caller's expressions (functions not yet held) as elements of one sparse ring.

        They are read together with the rates of the generators and the
        algebraic relations, so all share one coefficient domain (a field).
        """
        held = []
        for e in exprs:
            got = self._held.get(e)
            held.append(got if got is not None else as_pair_roots(replace_atoms(sp.sympify(e, strict=True), self.hold)))
        # g' = sign u' h (h = g for e^u, the partner sine or cosine otherwise): u' is read, the
        # product is taken in the ring (building u' g as an expression first costs more)
        rate_exprs = []
        partners: list[tuple[int, sp.Dummy]] = []
        for g, (kind, du, _) in self.rates.items():
            rate_exprs.append(du)
            if kind == "exp":
                partners.append((1, g))
            elif kind == "cos":
                partners.append((-1, self._trig_partner(g, "sin")))
            else:
                partners.append((1, self._trig_partner(g, "cos")))
        rels = [rel for _, rel in self.relations]
        every = [self._alg_expr(e) for e in held + rate_exprs + rels]
        try:
            out = self._rational_elements(every)
        except _NotRational:
            out = self._general_elements(every, len(held))
        R = self.R
        k = len(held)
        # D p = dp/dt + sum over generators g of (dp/dg) g', with g' in the ring
        index = {g: i for i, g in enumerate(self.gens)}
        # a generator of rate zero (e^{-2}, a number) adds nothing to D p
        self._rate_elems = [
            (R.gens[index[g]], e * R.gens[index[h]] * sign)
            for g, e, (sign, h) in zip(self.rates, out[k : k + len(rate_exprs)], partners)
            if e
        ]
        self._rel_elems = [r.monic() for r in out[k + len(rate_exprs) :]]
        return out[:k]

    def _rational_elements(self, every: Sequence[sp.Expr]) -> list:
        """Every expression read straight into Q[gens] by one walk of its tree.

        With the functions held and the algebraic numbers and symbols as
        generators, the coefficients of a solution over Q are rational, and
        sums, products and powers of ring elements are the ring's own
        arithmetic: nothing is expanded as an expression first.  Anything else
        (a float, a symbol in a denominator, a constant like pi) is left to
        the general reading.
        """
        R = PolyRing([str(g) for g in range(len(self.gens))], QQ)
        index = dict(zip(self.gens, R.gens))
        memo: dict[sp.Expr, object] = {}

        def walk(e: sp.Expr):
            got = memo.get(e)
            if got is not None:
                return got
            if e.is_Rational:
                got = R.ground_new(QQ(int(e.p), int(e.q)))
            elif e in index:
                got = index[e]
            elif e.is_Add:
                got = R.zero
                for a in e.args:
                    got = got + walk(a)
            elif e.is_Mul:
                got = R.one
                for a in e.args:
                    got = got * walk(a)
            elif e.is_Pow and e.exp.is_Integer and e.exp >= 0:
                got = walk(e.base) ** int(e.exp)
            else:
                raise _NotRational
            memo[e] = got
            return got

        out = [walk(e) for e in every]
        self.R = R
        return out

    def _general_elements(self, every: Sequence[sp.Expr], k: int) -> list:
        """The expressions read by sympy's polynomial constructor, over the field it finds."""
        try:
            polys, opt = sp.parallel_poly_from_expr(every, *self.gens)
        except (PolynomialError, sp.CoercionFailed, ValueError, TypeError) as exc:
            raise _NotInRing(str(exc)) from None
        dom = opt.domain
        if dom.is_EX or dom.is_EXRAW:
            raise _NotInRing("coefficients outside a polynomial domain")
        if not (dom.is_Numerical or dom.is_Algebraic) and any(
            c.has(self.t) for p in polys[:k] for c in p.coeffs()
        ):
            raise _NotInRing("t in a coefficient")
        field = dom if dom.is_Field else dom.get_field()
        R = PolyRing([str(g) for g in range(len(self.gens))], field)
        self.R = R
        return [R.from_dict({m: field.convert(c, dom) for m, c in p.rep.to_dict().items()}) for p in polys]

    def derivative(self, p):
        out = p.diff(self.R.gens[0])
        for g, rate in self._rate_elems:
            dg = p.diff(g)
            if dg:
                out = out + dg * rate
        return out

    def _trig_partner(self, g: sp.Dummy, kind: str) -> sp.Dummy:
        u = self.rates[g][2]
        partner = (sp.sin if kind == "sin" else sp.cos)(u)
        if partner not in self.hold:  # sympy evaluated it (sin 0, cos of a multiple of pi)
            raise _NotInRing(f"{kind}({u}) is not among the generators")
        return self.hold[partner]

    def reduce(self, p):
        """p modulo the algebraic relations (each monic in its own generator)."""
        if not self._rel_elems:
            return p
        try:
            return p.rem(self._rel_elems)
        except (PolynomialError, sp.CoercionFailed, ValueError, TypeError, ZeroDivisionError) as exc:
            raise _NotInRing(str(exc)) from None


def _rate(u: sp.Expr, t: sp.Symbol) -> sp.Expr:
    """du/dt; for the usual argument g t it is read off the product."""
    if u == t:
        return sp.Integer(1)
    if u.is_number:
        return sp.Integer(0)
    if u.is_Mul and u.args.count(t) == 1 and not any(a.has(t) for a in u.args if a != t):
        return sp.Mul(*[a for a in u.args if a != t])
    if u.is_Add:
        # a t + b, term by term: sympy's diff of a sum costs more than the sum of the parts
        return sp.Add(*[_rate(a, t) for a in u.args])
    return sp.diff(u, t)


def _radical_parts(p: sp.Expr) -> list[tuple[sp.Expr, int, int]]:
    """b^(k/q) as factors (base, q, k): a positive integer base split into primes.

    sqrt 6 is then sqrt 2 sqrt 3, so the radicals of distinct primes are
    independent generators and products of them reduce exactly.
    """
    if not (p.is_Pow and p.exp.is_Rational and not p.exp.is_Integer):
        return []
    q, k = int(p.exp.q), int(p.exp.p)
    if p.base.is_Integer and 0 < p.base < 10**12:  # factorint stays cheap
        return [(sp.Integer(prime), q, k * m) for prime, m in sorted(sp.factorint(int(p.base)).items())]
    return [(p.base, q, k)]


def _in_ring(check, exprs: Sequence[sp.Expr], t: sp.Symbol) -> bool:
    """Run ``check(ring)`` with the symbols as generators, then in the coefficient field."""
    for symbols_as_gens in (True, False):
        try:
            return check(_Ring(exprs, t, symbols_as_gens))
        except _NotInRing:
            continue
    return False


def residual_is_zero(
    x: Sequence[sp.Expr], A: sp.MatrixBase, f: Sequence[sp.Expr], t: sp.Symbol
) -> bool:
    """True when x' - A x - f reduces to the zero polynomial, component by component.

    False means "not settled here", never "nonzero".
    """
    return residuals_are_zero([(x, f)], A, t)[0]


def residuals_are_zero(
    pieces: Sequence[tuple[Sequence[sp.Expr], Sequence[sp.Expr]]], A: sp.MatrixBase, t: sp.Symbol
) -> list[bool]:
    """``residual_is_zero`` for several (x, f) pairs (the intervals of a switched input) in one ring.

    The generators, rates and relations of all pieces are read once; a piece
    the shared ring cannot read is tried on its own.
    """
    n = A.rows
    others = [A[i, j] for i in range(n) for j in range(n) if A[i, j] != 0 and not A[i, j].is_Rational]

    def check(ring: _Ring) -> list[bool]:
        exprs = [e for x, f in pieces for e in (*x, *f)]
        elems = ring.elements(exprs + others)
        pa = dict(zip(others, elems[len(exprs):]))
        dom = ring.R.domain
        out = []
        for k in range(len(pieces)):
            px, pf = elems[2 * n * k : 2 * n * k + n], elems[2 * n * k + n : 2 * n * (k + 1)]
            out.append(all(not ring.reduce(_component(ring, px, pf, pa, A, dom, i)) for i in range(n)))
        return out

    everything = [e for x, f in pieces for e in (*x, *f)]
    for symbols_as_gens in (True, False):
        try:
            return check(_Ring(everything, t, symbols_as_gens))
        except _NotInRing:
            continue
    if len(pieces) == 1:
        return [False]
    return [residuals_are_zero([p], A, t)[0] for p in pieces]


def _component(ring: _Ring, px: Sequence, pf: Sequence, pa: dict, A: sp.MatrixBase, dom, i: int):
    """Row i of x' - A x - f in the ring."""
    r = ring.derivative(px[i]) - pf[i]
    for j in range(len(px)):
        a = A[i, j]
        if a == 0:
            continue
        r = r - (px[j] * dom.convert(a) if a.is_Rational else px[j] * pa[a])
    return r


def initial_is_zero(x: Sequence[sp.Expr], x0: Sequence[sp.Expr], t: sp.Symbol) -> bool:
    """True when x(0) = x0 exactly, with every exponential and cosine 1 and sine 0 at t = 0."""

    def check(ring: _Ring) -> bool:
        at0 = {}
        for a, g in ring.hold.items():
            if a.args[0].subs(t, 0) != 0:
                return False
            at0[g] = 0 if isinstance(a, sp.sin) else 1
        elems = ring.elements(list(x) + list(x0))
        # t = 0 and every function at 0: a monomial with t or a sine vanishes,
        # an exponential or cosine factor becomes 1
        vanish = [0] + [ring.gens.index(g) for g, v in at0.items() if v == 0]
        ones = [ring.gens.index(g) for g, v in at0.items() if v == 1]
        n = len(x)
        for px, pv in zip(elems[:n], elems[n:]):
            # reduced first: evaluating t and the functions keeps it reduced
            left: dict = {}
            for mono, c in ring.reduce(px - pv).items():
                if any(mono[i] for i in vanish):
                    continue
                m = list(mono)
                for i in ones:
                    m[i] = 0
                key = tuple(m)
                left[key] = left.get(key, ring.R.domain.zero) + c
            if any(c for c in left.values()):
                return False
        return True

    if any(atoms_of(sp.sympify(e, strict=True), sp.CRootOf) for e in x) and _initial_by_root_sums(x, x0, t):
        return True
    return _in_ring(check, list(x) + list(x0), t)


def _initial_by_root_sums(x: Sequence[sp.Expr], x0: Sequence[sp.Expr], t: sp.Symbol) -> bool:
    """x(0) = x0 for numbers in indexed roots, where the ring above leaves a sum over all roots.

    x(0) sums the modes, so it is a sum h(r_1) + ... + h(r_d) over every root of
    a factor, which equals x0 only through the relations between the roots
    (their power sums), not through each root's polynomial alone; the root
    ring (``derive.rootring``) replaces such sums by their rational values.
    """
    for xi, vi in zip(x, x0):
        d = as_pair_roots(replace_atoms(sp.sympify(xi, strict=True), {t: sp.Integer(0)})) - vi
        if d == 0:
            continue
        if not d.has(sp.CRootOf) or reduce_number(d) != 0:
            return False
    return True
