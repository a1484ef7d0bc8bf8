"""Exact arithmetic with indexed roots in Q[i, z_1, ..., z_m]/(i^2 + 1, q_1(z_1), ..., q_m(z_m)).

A coefficient of a solution whose eigenvalues are indexed roots (``CRootOf``)
is a rational function of i and of those roots.  Simplifying it as a sympy
expression (together, invert, expand, over and over) dominated the solve of a
6-state chain.  Here it is read once into a sparse polynomial ring over Q with
one generator per root (and one for i), where every product is reduced at
once with the defining polynomial of each root (the relations are in distinct
variables with pure-power leading terms, so reduction variable by variable is
the normal form), and a denominator in one root and i is inverted in
Q(i)[z]/(q): times its conjugate in i, then the extended Euclidean algorithm
over Q.  A sum h(r_1) + ... + h(r_d) over all d roots of q is replaced by its
rational value through the power sums of the roots.  Only the result becomes
an expression again.
"""

from __future__ import annotations

import functools
from typing import Any, Callable, Sequence

import sympy as sp
from sympy.polys.domains import QQ
from sympy.polys.rings import PolyElement, PolyRing

__all__ = ["RootRing", "OutsideRing", "generators", "atoms_of", "contains", "replace_atoms", "collected", "expand_number", "expanded", "common_out", "plainly_nonzero", "real_imag", "reduce_number"]


#: the degree bound of a generator without a relation
_NO_RELATION = 1 << 30


class OutsideRing(Exception):
    """An expression a ring of indexed roots does not hold (a radical, a symbol, pi, a float, ...)."""



class RootRing:
    """The quotient ring for one tuple of indexed roots (and i)."""

    def __init__(self, roots: Sequence[sp.CRootOf], free: Sequence[sp.Expr] = ()) -> None:
        self.roots = tuple(roots)
        self.free = tuple(free)  # generators with no relation (t, sin and cos, named real parts)
        m = len(self.roots)
        self.R = PolyRing(["i", *(f"z{k}" for k in range(m + len(self.free)))], QQ)
        self.index = {r: k + 1 for k, r in enumerate(self.roots)}
        self.index.update({a: m + 1 + k for k, a in enumerate(self.free)})
        # monic defining polynomial of each root, as a dense list over Q (highest first)
        self.mods: list[list] = [[QQ(1), QQ(0), QQ(1)]]
        for r in self.roots:
            coeffs = [QQ.convert(c) for c in r.poly.all_coeffs()]
            self.mods.append([c / coeffs[0] for c in coeffs])
        self.degrees = [len(q) - 1 for q in self.mods] + [_NO_RELATION] * len(self.free)
        self._powers: list[dict[int, list[tuple[int, Any]]]] = [{} for _ in self.degrees]
        self._sums: dict[int, list] = {}

    # -- reduction -------------------------------------------------------
    def _power(self, var: int, e: int) -> list[tuple[int, Any]]:
        """z^e modulo the variable's polynomial, as (exponent, coefficient) pairs."""
        table = self._powers[var]
        got = table.get(e)
        if got is None:
            d = self.degrees[var]
            if e < d:
                got = [(e, QQ(1))]
            else:
                q = self.mods[var]
                prev = dict(self._power(var, e - 1))
                # z * z^(e-1), then z^d = -(q_{d-1} z^{d-1} + ... + q_0)
                shifted = {k + 1: c for k, c in prev.items()}
                top = shifted.pop(d, QQ(0))
                if top:
                    for j in range(d):
                        c = q[d - j]
                        if c:
                            shifted[j] = shifted.get(j, QQ(0)) - top * c
                got = [(k, c) for k, c in shifted.items() if c]
            table[e] = got
        return got

    def reduce(self, p: PolyElement) -> PolyElement:
        """The normal form: every exponent below its variable's degree."""
        degrees = self.degrees
        if all(all(k < d for k, d in zip(mono, degrees)) for mono in p.keys()):
            return p
        out: dict[tuple[int, ...], Any] = {}
        for mono, c in p.items():
            expanded: list[tuple[tuple[int, ...], Any]] = [((), c)]
            for var, e in enumerate(mono):
                pw = self._power(var, e)
                expanded = [(m + (k,), a * b) for m, a in expanded for k, b in pw]
            for m, a in expanded:
                out[m] = out.get(m, QQ(0)) + a
        return self.R.from_dict({m: c for m, c in out.items() if c})

    def mul(self, a: PolyElement, b: PolyElement) -> PolyElement:
        return self.reduce(a * b)

    # -- inversion -------------------------------------------------------
    def inverse(self, p: PolyElement) -> PolyElement:
        """1/p for p in Q(i)[z] with one root z; OutsideRing when p holds two roots or is zero."""
        if not p:
            raise ZeroDivisionError("division by zero in the root ring")
        used = {k for mono in p.keys() for k, e in enumerate(mono) if e and k > 0}
        if len(used) > 1:
            raise OutsideRing("a denominator in two indexed roots")
        R = self.R
        if any(self.degrees[k] == _NO_RELATION for k in used):
            raise OutsideRing("a denominator in a generator without a relation")
        if any(mono[0] for mono in p.keys()):
            # times the conjugate in i: (a + b i)(a - b i) = a^2 + b^2, free of i
            conj = R.from_dict({m: (-c if m[0] % 2 else c) for m, c in p.items()})
            return self.mul(conj, self.inverse(self.mul(p, conj)))
        if not used:
            return R.ground_new(1 / p.LC)
        (var,) = used
        d = self.degrees[var]
        dense = [QQ(0)] * d
        for mono, c in p.items():
            dense[d - 1 - mono[var]] = c
        inv = _dup_invert(dense, self.mods[var])
        n = len(inv)
        zero = [0] * len(self.degrees)

        def mono_of(k: int) -> tuple[int, ...]:
            m = list(zero)
            m[var] = k
            return tuple(m)

        return R.from_dict({mono_of(n - 1 - j): c for j, c in enumerate(inv) if c})

    # -- reading and writing -----------------------------------------------
    def element(self, e: sp.Expr, memo: dict | None = None) -> PolyElement:
        """The normal form of an expression in rationals, i and this ring's roots."""
        memo = {} if memo is None else memo
        got = memo.get(e)
        if got is not None:
            return got
        R = self.R
        if e.is_Rational:
            got = R.ground_new(QQ(int(e.p), int(e.q)))
        elif e is sp.I:
            got = R.gens[0]
        elif e in self.index:
            got = R.gens[self.index[e]]
        elif e.is_Add:
            got = R.zero
            for a in e.args:
                got = got + self.element(a, memo)
        elif e.is_Mul:
            got = R.one
            for a in e.args:
                got = self.mul(got, self.element(a, memo))
        elif e.is_Pow and e.exp.is_Integer:
            base = self.element(e.base, memo)
            k = int(e.exp)
            if k < 0:
                base, k = self.inverse(base), -k
            got = R.one
            while k:
                if k & 1:
                    got = self.mul(got, base)
                k >>= 1
                if k:
                    base = self.mul(base, base)
        else:
            raise OutsideRing(str(e))
        memo[e] = got
        return got

    def symmetric(self, p: PolyElement) -> PolyElement:
        """A sum h(r_1) + ... + h(r_d) over all roots of one polynomial replaced by its value."""
        by_poly: dict = {}
        for r, k in self.index.items():
            if k > len(self.roots):
                continue
            by_poly.setdefault(r.poly, []).append(k)
        for poly, vars_ in by_poly.items():
            d = poly.degree()
            if len(vars_) != d:
                continue
            own = set(vars_)
            parts: dict[int, dict] = {k: {} for k in vars_}
            rest: dict = {}
            for mono, c in p.items():
                here = [k for k in own if mono[k]]
                if len(here) == 1:
                    k = here[0]
                    key = (mono[k], tuple(0 if j == k else e for j, e in enumerate(mono)))
                    parts[k][key] = c
                else:
                    rest[mono] = c
            first = parts[vars_[0]]
            if not first or any(parts[k] != first for k in vars_[1:]):
                continue
            sums = self._power_sums(vars_[0], max(e for e, _ in first))
            for (e, mono), c in first.items():
                rest[mono] = rest.get(mono, QQ(0)) + c * sums[e]
            p = self.R.from_dict({m: c for m, c in rest.items() if c})
        return p

    def _power_sums(self, var: int, top: int) -> list:
        """p_e = r_1^e + ... + r_d^e for e = 0..top (trace of the e-th power of the companion matrix)."""
        got = self._sums.get(var)
        if got is not None and len(got) > top:
            return got
        d = self.degrees[var]
        q = self.mods[var]
        # Newton's identities for the monic q = z^d + a_1 z^(d-1) + ... + a_d
        a = [q[j] for j in range(d + 1)]
        sums = [QQ(d)]
        for e in range(1, top + 1):
            s = QQ(0)
            for j in range(1, min(e - 1, d) + 1):
                s -= a[j] * sums[e - j]
            if e <= d:
                s -= e * a[e]
            sums.append(s)
        self._sums[var] = sums
        return sums

    def to_expr(self, p: PolyElement) -> sp.Expr:
        gens = (sp.I, *self.roots, *self.free)
        terms = []
        for mono, c in p.items():
            factors = [g**k for g, k in zip(gens, mono) if k]
            terms.append(sp.Mul(sp.Rational(int(c.numerator), int(c.denominator)), *factors))
        return sp.Add(*terms)


def _dup_invert(f: list, q: list) -> list:
    """f^-1 modulo the irreducible q over Q, dense lists highest first."""
    from sympy.polys.densetools import dup_strip  # noqa: PLC0415 - small helpers of the dense layer
    from sympy.polys.euclidtools import dup_invert

    return dup_invert(dup_strip(f), dup_strip(q), QQ)


def atoms_of(e: sp.Basic, *types: type) -> set:
    """e.atoms(*types) without entering an indexed root (its args are its polynomial, rebuilt
    as an expression on every read, which made atoms the slowest part of a 6-state solve).

    >>> x = sp.Symbol("x"); r = sp.CRootOf(x**3 - x - 1, 0)
    >>> sorted(atoms_of(r**2 + sp.sin(x), sp.Pow, sp.sin, sp.CRootOf), key=str)
    [CRootOf(x**3 - x - 1, 0), CRootOf(x**3 - x - 1, 0)**2, sin(x)]
    """
    out: set = set()
    stack = [e]
    seen: set = set()
    while stack:
        a = stack.pop()
        if a in seen:
            continue
        seen.add(a)
        if isinstance(a, types):
            out.add(a)
        if not isinstance(a, sp.CRootOf):
            stack.extend(a.args)
    return out


def contains(e: sp.Basic, *types: type) -> bool:
    """e.has(*types) for types of atoms and functions, without entering an indexed root (see ``atoms_of``).

    >>> x = sp.Symbol("x"); contains(sp.CRootOf(x**3 - x - 1, 0) * sp.exp(x), sp.exp)
    True
    """
    stack = [e]
    while stack:
        a = stack.pop()
        if isinstance(a, types):
            return True
        if not isinstance(a, sp.CRootOf):
            stack.extend(a.args)
    return False


def replace_atoms(e: sp.Basic, rule: dict) -> sp.Basic:
    """e.xreplace(rule) without entering an indexed root (see ``atoms_of``); a root itself may be a key.

    >>> x = sp.Symbol("x"); r = sp.CRootOf(x**3 - x - 1, 0)
    >>> replace_atoms(r * x + 1, {x: 2}) == 2 * r + 1
    True
    """
    if not rule:
        return e
    memo: dict = {}

    def walk(a: sp.Basic) -> sp.Basic:
        got = rule.get(a)
        if got is not None:
            return got
        if isinstance(a, sp.CRootOf) or not a.args:
            return a
        got = memo.get(a)
        if got is None:
            args = [walk(b) for b in a.args]
            got = a.func(*args) if any(x is not y for x, y in zip(args, a.args)) else a
            memo[a] = got
        return got

    return walk(e)


def plainly_nonzero(e: sp.Expr) -> bool:
    """True when a number in i and indexed roots is nonzero by degree: its normal form is a
    nonzero element of Q(i), or c0 + c1 r with c1 != 0 and r of degree 3 or more (not in Q(i)).

    False means "not settled here".
    """
    roots: set = set()
    free: set = set()
    try:
        _scan(e, roots, free)
        if free:
            return False
        ring = _ring(_sorted(roots))
        p = ring.element(e)
    except (OutsideRing, ZeroDivisionError):
        return False
    if not p:
        return False
    used = {k for mono in p.keys() for k, j in enumerate(mono) if j and k > 0}
    if not used:
        return True
    if len(used) > 1:
        return False
    (k,) = used
    return ring.degrees[k] >= 3 and max(mono[k] for mono in p.keys()) == 1


def generators(e: sp.Expr, held: Callable[[sp.Expr], bool]) -> tuple[set, set]:
    """The indexed roots of a sum of products of integer powers, and the other factors ``held`` accepts.

    Never reads a root's own args (sympy rebuilds them as an expression on every
    read); raises ``OutsideRing`` at a factor that is neither.
    """
    roots: set = set()
    free: set = set()
    stack = [e]
    seen: set = set()
    while stack:
        a = stack.pop()
        if a in seen:
            continue
        seen.add(a)
        if isinstance(a, sp.CRootOf):
            roots.add(a)
        elif a.is_Rational or a is sp.I:
            continue
        elif a.is_Add or a.is_Mul or (a.is_Pow and a.exp.is_Integer):
            stack.extend(a.args if not a.is_Pow else (a.base,))
        elif held(a):
            free.add(a)
        else:
            raise OutsideRing(str(a))
    return roots, free


def _scan(e: sp.Expr, roots: set, free: set, *, numbers: bool = False) -> None:
    """The indexed roots and the other generators of e (see ``generators``).  With ``numbers``,
    exponentials and constants such as e and pi are generators too (numbers held as they stand)."""
    found, other = generators(
        e, lambda a: isinstance(a, (sp.Symbol, sp.sin, sp.cos)) or (numbers and (_plain_exp(a) or a.is_NumberSymbol)))
    roots |= found
    free |= other


def _plain_exp(a: sp.Expr) -> bool:
    """e^u with u not a sum: sp.expand would split e^(a + b) into e^a e^b, and the forms must agree."""
    return isinstance(a, sp.exp) and not a.args[0].is_Add


@functools.lru_cache(maxsize=64)
def _ring(roots: tuple, free: tuple = ()) -> RootRing:
    return RootRing(roots, free)


def _sorted(atoms: set) -> tuple:
    return tuple(sorted(atoms, key=sp.default_sort_key))


def reduce_number(e: sp.Expr) -> sp.Expr | None:
    """The normal form of a number built from rationals, i and indexed roots, or None.

    Powers of each root are reduced below the degree of its polynomial, a
    denominator in one root is cleared, and a sum over all roots of one
    polynomial becomes its rational value.  Exponentials, sines and cosines of
    numbers (and e, pi) are held as generators.  None when the expression holds
    anything else (a radical, a symbol) or a denominator in two roots.

    >>> x = sp.Symbol("x"); r = sp.CRootOf(x**3 - x - 1, 0)
    >>> reduce_number(r**3 - r)
    1
    """
    roots: set = set()
    free: set = set()
    try:
        # e^(r t0), cos(omega t0) of an initial state at t0 != 0 are held as generators
        _scan(e, roots, free, numbers=True)
        if not roots or any(a.free_symbols for a in free):
            return None
        ring = _ring(_sorted(roots), _sorted(free))
        p = ring.element(e)
    except (OutsideRing, ZeroDivisionError):
        return None
    return ring.to_expr(ring.symmetric(p))


def expand_number(e: sp.Expr) -> sp.Expr | None:
    """sp.expand of a polynomial in indexed roots, i, symbols, sines and cosines, or None.

    The same expanded sum (i^2 = -1, nothing else reduced), read through a
    sparse ring: sympy's expand walks each indexed root's defining polynomial
    again at every node.
    """
    roots: set = set()
    free: set = set()
    try:
        _scan(e, roots, free)
        ring = _ring((), _sorted(roots | free))
        return ring.to_expr(ring.element(e))
    except (OutsideRing, ZeroDivisionError):
        return None


def expanded(e: sp.Expr) -> sp.Expr:
    """sp.expand, read through the sparse ring where it can be (see ``expand_number``)."""
    fast = expand_number(e)
    return sp.expand(e) if fast is None else fast


def common_out(u: sp.Expr) -> sp.Expr:
    """sp.factor_terms, except on an expression holding an indexed root, left as it stands:
    factor_terms would rebuild the root's polynomial at every node."""
    return u if contains(u, sp.CRootOf) else sp.factor_terms(u)


def _real_number(a: sp.Expr) -> bool:
    """e, pi, or e^u, cos u, sin u of a real u in rationals and real indexed roots."""
    if a.is_NumberSymbol:
        return True
    if a.free_symbols or not isinstance(a, (sp.exp, sp.sin, sp.cos)):
        return False
    return not contains(a.args[0], type(sp.I)) and all(r.is_real for r in atoms_of(a.args[0], sp.CRootOf))


def real_imag(e: sp.Expr, parts_of: Callable[[sp.Expr], tuple | None]) -> tuple[sp.Expr, sp.Expr] | None:
    """(Re e, Im e), expanded, for a polynomial in i and indexed roots, or None.

    ``parts_of(r)`` gives (sigma, omega, sign) with r = sigma + sign i omega
    for a complex root r, None for a real one.
    """
    roots: set = set()
    free: set = set()
    try:
        # e^(sigma t0), cos(omega t0): real numbers held as generators (a state handed across a switch)
        _scan(e, roots, free, numbers=True)
        if not all(_real_number(a) for a in free):
            return None
        parts = {r: parts_of(r) for r in roots}  # LookupError: a complex root without parts
        gens = {r for r, got in parts.items() if got is None} | free
        for got in parts.values():
            if got is not None:
                gens |= {a for a in got[:2] if not a.is_Rational}
        ring = _ring((), _sorted(gens))
        R = ring.R
        memo = {
            r: ring.element(got[0]) + R.gens[0] * ring.element(got[1]) * got[2]
            for r, got in parts.items() if got is not None
        }
        p = ring.element(e, memo)
    except (OutsideRing, ZeroDivisionError, LookupError):
        return None
    re = R.from_dict({m: c for m, c in p.items() if m[0] == 0})
    im = R.from_dict({(0, *m[1:]): c for m, c in p.items() if m[0] == 1})
    return ring.to_expr(re), ring.to_expr(im)


def collected(e: sp.Expr, keys: Sequence[sp.Expr]) -> list[tuple[sp.Expr, sp.Expr]] | None:
    """(key product, expanded coefficient) pairs of e, collected on the given atoms; None as expand_number.

    sp.collect(sp.expand(e), keys) without expanding as an expression.
    """
    roots: set = set()
    free: set = set()
    try:
        _scan(e, roots, free)
        ring = _ring((), _sorted((roots | free) - set(keys)) + tuple(keys))
        p = ring.element(e)
    except (OutsideRing, ZeroDivisionError):
        return None
    m = len(ring.degrees) - len(keys)
    groups: dict[tuple, dict] = {}
    for mono, c in p.items():
        groups.setdefault(mono[m:], {})[mono[:m] + (0,) * len(keys)] = c
    return [
        (sp.Mul(*[k**j for k, j in zip(keys, key) if j]), ring.to_expr(ring.R.from_dict(terms)))
        for key, terms in groups.items()
    ]
