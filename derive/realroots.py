"""Real and imaginary parts of indexed complex roots, as named real algebraic numbers.

A complex pair r, conj(r) of roots of a rational polynomial q with no readable
radical form is written sigma +- i omega.  sigma and omega are real algebraic
numbers, kept exact as real indexed roots (``CRootOf``) of polynomials over Q
found by resultants:

* 2 sigma = r + conj(r) is a root of res_x(q(x), q(s - x)), whose roots are
  the sums r_i + r_j of two roots of q;
* 2 i omega = r - conj(r) is a root of res_x(q(x), q(x + d)) / d^n, whose
  roots are the differences r_i - r_j (i != j); that polynomial is even in d,
  so omega is a root of the real polynomial it becomes at d = 2 i w.

Each is factored over Q and the factor and real root that hold the number are
picked by a numeric match at 40 digits (the real roots of a rational
polynomial are isolated exactly, so the nearest one is the number as soon as
the match is far closer than the next root).

The solver then writes e^{r t} c + e^{conj(r) t} conj(c) as
2 e^{sigma t}(Re c cos(omega t) - Im c sin(omega t)), with Re c and Im c
polynomials in sigma and omega (``split_complex`` in expoly).  For the exact
substitution check, ``as_pair_roots`` puts sigma = (r + conj r)/2 and
omega = (r - conj r)/(2i) back: both are true by construction, and in those
terms the residual reduces to zero with each root's own polynomial.
"""

from __future__ import annotations

import functools
from typing import Iterable, NamedTuple

import mpmath
import sympy as sp

from .rootring import atoms_of, replace_atoms

__all__ = ["PairParts", "pair_parts", "pair_numbering", "as_real_parts", "as_pair_roots", "part_of", "conjugate_roots"]

#: digits of the numeric match that picks a factor and a real root
_DIGITS = 40


class PairParts(NamedTuple):
    """upper = sigma + i omega is the root of the pair with Im > 0."""

    sigma: sp.Expr
    omega: sp.Expr
    upper: sp.Expr


#: sigma or omega (a real CRootOf) -> ("sigma" | "omega", the upper root of its pair);
#: filled by pair_parts, a record of true facts shared by every solve in the process
_PART_OF: dict[sp.Expr, tuple[str, sp.Expr]] = {}


@functools.lru_cache(maxsize=1024)
def _value(r: sp.Expr) -> mpmath.mpc:
    """The root at 45 digits (Newton refinement from its isolating interval, fast)."""
    # a factor of degree one gives a rational "root" (CRootOf returns the number itself)
    v = r.eval_approx(_DIGITS + 5) if isinstance(r, sp.CRootOf) else sp.N(r, _DIGITS + 5)
    with mpmath.workdps(_DIGITS + 10):
        return mpmath.mpc(str(sp.re(v)), str(sp.im(v)))


def _is_complex_root(r: sp.Expr) -> bool:
    return isinstance(r, sp.CRootOf) and r.is_real is False


@functools.lru_cache(maxsize=256)
def pair_parts(r: sp.CRootOf) -> PairParts | None:
    """(sigma, omega, upper) of a complex indexed root: r = sigma +- i omega, omega > 0.

    None for a real root, or when no real root matches (never expected).

    >>> x = sp.Symbol("x")
    >>> sigma, omega, upper = pair_parts(sp.CRootOf(x**3 + x + 1, 1))
    >>> sigma.poly.as_expr(x), omega.poly.as_expr(x)
    (8*x**3 + 2*x - 1, 64*x**6 - 96*x**4 + 36*x**2 - 31)
    """
    if not _is_complex_root(r):
        return None
    conj = sp.conjugate(r)
    if not isinstance(conj, sp.CRootOf):
        return None
    v = _value(r)
    upper = r if mpmath.im(v) > 0 else conj
    vu = _value(upper)
    sums, differences = _part_factors(r.poly)
    sigma = _matching_root(sums, mpmath.re(vu))
    omega = _matching_root(differences, mpmath.im(vu))
    if sigma is None or omega is None:
        return None
    for name, part in (("sigma", sigma), ("omega", omega)):
        if isinstance(part, sp.CRootOf):
            _PART_OF.setdefault(part, (name, upper))
    return PairParts(sigma, omega, upper)


@functools.lru_cache(maxsize=64)
def _part_factors(q: sp.Poly) -> tuple[tuple[sp.Poly, ...], tuple[sp.Poly, ...]]:
    """The irreducible factors over Q of the polynomials of sigma and of omega, for every pair of q.

    They depend on q alone, so the resultants are formed and factored once for all its pairs.
    """
    x, s = sp.Dummy("x"), sp.Symbol("z")
    qx = q.as_expr(x)
    n = sp.degree(qx, x)
    pair_sums = sp.resultant(qx, qx.subs(x, s - x), x)
    differences = sp.Poly(sp.resultant(qx, qx.subs(x, x + s), x), s)
    # drop d^n (the n differences r_i - r_i), then d = 2 i w: real because even in d
    reduced = sp.Poly.from_list(differences.all_coeffs()[: -n], s) if n else differences
    out = []
    for poly in (sp.expand(pair_sums.subs(s, 2 * s)), sp.expand(reduced.as_expr().subs(s, 2 * sp.I * s))):
        if poly.has(sp.I):  # pragma: no cover - the polynomial is real by construction
            out.append(())
            continue
        _, factors = sp.factor_list(poly, s)
        out.append(tuple(sp.Poly(f, s) for f, _m in factors if sp.Poly(f, s).degree() >= 1))
    return out[0], out[1]


@functools.lru_cache(maxsize=256)
def _real_roots(fp: sp.Poly) -> tuple[sp.Expr, ...]:
    """The real roots of an irreducible factor, indexed (each made once: CRootOf factors its polynomial)."""
    return tuple(sp.CRootOf(fp, k) for k in range(fp.count_roots()))


def _matching_root(factors: tuple[sp.Poly, ...], target: mpmath.mpf) -> sp.Expr | None:
    """The real root of one of ``factors`` (over Q) equal to ``target``: the factor that vanishes
    there, and the real root of it nearest, checked well apart from the next one."""
    best: tuple[mpmath.mpf, sp.Expr] | None = None
    second = mpmath.inf
    with mpmath.workdps(_DIGITS + 10):
        for fp in factors:
            coeffs = [mpmath.mpf(int(c.p)) / int(c.q) for c in fp.all_coeffs()]
            scale = sum(abs(c) for c in coeffs) * max(1, abs(target)) ** fp.degree()
            if abs(mpmath.polyval(coeffs, target)) > scale * mpmath.mpf(10) ** (-_DIGITS // 2):
                continue
            for root in _real_roots(fp):
                gap = abs(mpmath.re(_value(root)) - target)
                if best is None or gap < best[0]:
                    if best is not None:
                        second = min(second, best[0])
                    best = (gap, root)
                else:
                    second = min(second, gap)
    if best is None or best[0] > mpmath.mpf(10) ** (-_DIGITS // 2) or second < mpmath.mpf(10) ** (-_DIGITS // 4):
        return None
    root = best[1]
    if isinstance(root, sp.CRootOf) and root.poly.degree() == 1:
        return sp.Rational(-root.poly.nth(0), root.poly.nth(1))
    return root


def as_real_parts(e: sp.Expr) -> sp.Expr:
    """Every complex indexed root written sigma + i omega (or sigma - i omega).

    >>> x = sp.Symbol("x"); r = sp.CRootOf(x**3 + x + 1, 1)
    >>> sp.expand(as_real_parts(r + sp.conjugate(r))) == 2 * pair_parts(r).sigma
    True
    """
    rep = {}
    for r in atoms_of(e, sp.CRootOf):
        parts = pair_parts(r) if _is_complex_root(r) else None
        if parts is not None:
            sign = 1 if r == parts.upper else -1
            rep[r] = parts.sigma + sign * sp.I * parts.omega
    return replace_atoms(e, rep)


def as_pair_roots(e: sp.Expr) -> sp.Expr:
    """sigma and omega of a pair written back as (r + conj r)/2 and (r - conj r)/(2 i).

    Both equations hold by construction (``pair_parts``); a polynomial
    identity in the roots themselves, each reduced by its own polynomial, is
    then enough to show that an expression in sigma and omega vanishes.
    Parts this process has not made are left as they are.
    """
    if not isinstance(e, sp.Basic) or not _PART_OF:
        return e
    rep = {}
    for a in atoms_of(e, sp.CRootOf):
        got = _PART_OF.get(a)
        if got is None:
            continue
        name, upper = got
        lower = sp.conjugate(upper)
        rep[a] = (upper + lower) / 2 if name == "sigma" else -sp.I * (upper - lower) / 2
    return replace_atoms(e, rep)


def part_of(root: sp.Expr) -> tuple[str, sp.Expr] | None:
    """("sigma" | "omega", the root sigma + i omega) for a part made by ``pair_parts``."""
    return _PART_OF.get(root)


def conjugate_roots(e: sp.Expr) -> sp.Expr:
    """The complex conjugate of an expression in rational numbers, i and indexed roots
    (and real symbols): each complex root becomes its partner, i becomes -i."""
    rep: dict[sp.Expr, sp.Expr] = {r: sp.conjugate(r) for r in atoms_of(e, sp.CRootOf) if _is_complex_root(r)}
    if e.has(sp.I):
        rep[sp.I] = -sp.I
    return replace_atoms(e, rep)


def pair_numbering(
    eigenvalues: Iterable[sp.Expr], seen: Iterable[sp.Expr]
) -> dict[sp.Expr, tuple[int, str, sp.Expr]]:
    """sigma_k and omega_k for the k-th complex pair: part -> (k, "sigma" | "omega", upper root).

    Pairs are numbered in the order of ``eigenvalues``, then parts among
    ``seen`` of pairs that are not eigenvalues there.
    """
    parts: dict[sp.Expr, tuple[int, str, sp.Expr]] = {}

    def add(pp: PairParts | None) -> None:
        if pp is not None and pp.sigma not in parts and pp.omega not in parts:
            k = 1 + len(parts) // 2
            parts[pp.sigma], parts[pp.omega] = (k, "sigma", pp.upper), (k, "omega", pp.upper)

    for ev in eigenvalues:
        if _is_complex_root(ev):
            add(pair_parts(ev))
    for r in seen:
        got = _PART_OF.get(r)
        if got is not None and r not in parts:
            add(pair_parts(got[1]))
    return parts
