"""Linear algebra over one exact field: Gauss-Jordan, null spaces, inverses, Jordan chains.

The field is a sympy domain: Q, Q(params), Q(i), or K[theta]/(q) for an
irreducible factor q (``derive.spectral`` builds it).  Only field operations
are used, so the same code serves every one of them.  The chains found here
are scaled to small integers on the domain elements where the field allows,
else on their expressions.
"""

from __future__ import annotations

import math
from typing import Any, Protocol, Sequence

import sympy as sp
from sympy.polys.matrices import DomainMatrix

__all__ = [
    "ExprField",
    "column",
    "cols_to_dm",
    "rref",
    "rank",
    "nullspace_cols",
    "inv",
    "jordan_chains",
    "normalise_chain",
    "scale_rational_chain",
    "scale_generic_chain",
    "scale_chain",
]


class ExprField(Protocol):
    """A field with its sympy domain and the way back to expressions."""

    @property
    def dom(self) -> Any: ...

    def to_expr(self, e: Any, lam: sp.Symbol | None = None) -> sp.Expr: ...


def column(vals, dom) -> DomainMatrix:
    return DomainMatrix([[v] for v in vals], (len(vals), 1), dom)


def cols_to_dm(cols: Sequence[DomainMatrix], dom, n: int) -> DomainMatrix:
    if not cols:
        return DomainMatrix.zeros((n, 0), dom)
    out = cols[0]
    for c in cols[1:]:
        out = out.hstack(c)
    return out


def rref(M: DomainMatrix) -> tuple[DomainMatrix, tuple[int, ...]]:
    """Gauss-Jordan over a field.  The fraction-free variants sympy picks by
    default divide in the underlying polynomial ring, which is wrong for
    K[theta]/(q); plain Gauss-Jordan only ever inverts field elements."""
    R, pivots = M.to_dense().rref(method="GJ")
    return R, tuple(pivots)


def rank(cols: Sequence[DomainMatrix], dom, n: int) -> int:
    if not cols:
        return 0
    return len(rref(cols_to_dm(cols, dom, n))[1])


def nullspace_cols(M: DomainMatrix) -> list[DomainMatrix]:
    R, pivots = rref(M)
    rows, n = M.shape
    dense = R.rep.to_ddm()
    dom = M.domain
    out = []
    for f in range(n):
        if f in pivots:
            continue
        vals = [dom.zero] * n
        vals[f] = dom.one
        for i, p in enumerate(pivots):
            vals[p] = -dense[i][f]
        out.append(column(vals, dom))
    return out


def inv(M: DomainMatrix) -> DomainMatrix:
    n = M.shape[0]
    dom = M.domain
    R, pivots = rref(M.hstack(DomainMatrix.eye(n, dom).to_dense()))
    if pivots[:n] != tuple(range(n)):
        raise ZeroDivisionError("singular matrix")
    dense = R.rep.to_ddm()
    return DomainMatrix([row[n:] for row in dense], (n, n), dom)


# ---------------------------------------------------------------------------
# chains in one field


def jordan_chains(N: DomainMatrix, mult: int, n: int) -> tuple[list[list[DomainMatrix]], list[list[DomainMatrix]]]:
    """Jordan chains of N = A - lam I for an eigenvalue of algebraic multiplicity ``mult``.

    Top-down: with K_j = ker N^j, pick at each level vectors of K_j that are
    independent of K_{j-1} and of the vectors longer chains already put on
    that level; each such w starts the chain N^{j-1} w, ..., N w, w.
    Returns (chains, kernel bases by level).
    """
    dom = N.domain
    kernels: list[list[DomainMatrix]] = []
    power = N
    while True:
        basis = nullspace_cols(power)
        kernels.append(basis)
        if len(basis) >= mult or len(kernels) > mult:
            break
        power = power * N
    s = len(kernels)
    chains: list[list[DomainMatrix]] = []
    for level in range(s, 0, -1):
        below = kernels[level - 2] if level >= 2 else []
        occupied = [ch[level - 1] for ch in chains if len(ch) >= level]
        chosen: list[DomainMatrix] = []
        current = rank(below + occupied, dom, n)
        for w in kernels[level - 1]:
            r = rank(below + occupied + chosen + [w], dom, n)
            if r > current:
                chosen.append(w)
                current = r
        for w in chosen:
            chain = [w]
            for _ in range(level - 1):
                chain.insert(0, N * chain[0])
            chains.append(chain)
    chains.sort(key=lambda ch: -len(ch))
    return chains, kernels


def normalise_chain(chain: list[DomainMatrix], fld: ExprField) -> list[DomainMatrix]:
    """Divide a chain by one of its v_1 entries (an element of F), choosing the
    entry that gives the shortest expressions: for a companion-like matrix this
    turns (3 lam^2 - lam - 9, 3 - lam^2, -1) into (1, lam, lam^2)."""
    dom = fld.dom
    first = chain[0].to_dense().rep.to_ddm()
    best, best_size = chain, None
    for row in first:
        e = row[0]
        if e == dom.zero:
            continue
        inv = dom.one / e
        cand = [v * inv for v in chain]
        size = sum(sp.count_ops(fld.to_expr(x[0])) for v in cand for x in v.to_dense().rep.to_ddm())
        if best_size is None or size < best_size:
            best, best_size = cand, size
    return best


def scale_rational_chain(chain: list[DomainMatrix]) -> list[DomainMatrix]:
    """``scale_chain`` for vectors over QQ, in QQ: the smallest integer multiple,
    first nonzero entry of v_1 positive."""
    entries = [e for v in chain for row in v.to_dense().rep.to_ddm() for e in row if e]
    if not entries:
        return chain
    L = math.lcm(*[int(e.denominator) for e in entries])
    G = math.gcd(*[int(e.numerator) * (L // int(e.denominator)) for e in entries])
    dom = chain[0].domain
    factor = dom(L) / dom(G)
    first = next((row[0] for row in chain[0].to_dense().rep.to_ddm() if row[0]), None)
    if first is not None and first < 0:
        factor = -factor
    return [v * factor for v in chain]


def scale_generic_chain(chain: list[DomainMatrix]) -> list[DomainMatrix]:
    """``scale_chain`` for vectors over Q[theta]/(q), worked on the rational
    coefficients of the entries (polynomials in theta) with the same result.

    As there: the denominators cleared are those of the single-term entries
    (a sum such as theta/6 + 4/3 counts as denominator 1), the gcd of all the
    coefficients is taken in Q one after the other, stopping at 1, and the
    leading coefficient of the first nonzero entry of v_1 is made positive.
    """
    dense = [v.to_dense().rep.to_ddm() for v in chain]
    entries = [e for rows in dense for row in rows for e in row if e]
    if not entries:
        return chain
    polys = [e.rep.to_list() for e in entries]  # coefficients, highest power first
    dens = [int(next(c for c in cs if c).denominator) if sum(1 for c in cs if c) == 1 else 1 for cs in polys]
    L = math.lcm(*dens) if len(dens) > 1 else dens[0]
    coeffs = [c * L for cs in polys for c in cs if c]
    G = coeffs[0]  # alone it keeps its sign, as in scale_chain
    for c in coeffs[1:]:
        G = sp.QQ.gcd(G, c)
        if G == 1:
            break
    factor = sp.QQ(L) / G
    first = next((row[0] for row in dense[0] if row[0]), None)
    if first is not None and first.rep.LC() * factor < 0:
        factor = -factor
    scale = chain[0].domain.convert(factor)
    return [v * scale for v in chain]


def scale_chain(chain: list[sp.ImmutableMatrix], gen: sp.Symbol | None) -> list[sp.ImmutableMatrix]:
    """Scale a whole chain by one factor so its entries are small and integral.

    One factor for the chain keeps (A - lam I) v_{k+1} = v_k intact.
    """
    if all(e.is_Rational for v in chain for e in v):
        # rational vectors: integer arithmetic, no expression round trip
        nonzero = [e for v in chain for e in v if e != 0]
        if not nonzero:
            return chain
        L = math.lcm(*[int(e.q) for e in nonzero])
        G = math.gcd(*[int(e.p) * (L // int(e.q)) for e in nonzero])
        factor = sp.Rational(L, G)
        first = next(e for e in chain[0] if e != 0) if any(e != 0 for e in chain[0]) else None
        if first is not None and first < 0:
            factor = -factor
        return [sp.ImmutableMatrix(v * factor) for v in chain]
    entries = [sp.cancel(e) for v in chain for e in v if e != 0]
    if not entries:
        return chain
    dens = [sp.fraction(e)[1] for e in entries]
    L = sp.lcm_list(dens) if len(dens) > 1 else dens[0]
    nums = [sp.expand(sp.cancel(e * L)) for e in entries]
    coeffs: list[sp.Expr] = []
    for num in nums:
        if gen is not None and num.has(gen):
            coeffs.extend(sp.Poly(num, gen).coeffs())
        else:
            coeffs.append(num)
    G = sp.gcd_list(coeffs) if len(coeffs) > 1 else coeffs[0]
    if G == 0:
        G = sp.Integer(1)
    factor = sp.cancel(L / G)
    # sign: first nonzero entry of v_1 positive where that can be decided
    first = next((e for e in chain[0] if e != 0), None)
    if first is not None:
        lead = sp.cancel(first * factor)
        if gen is not None and lead.has(gen):
            lead = sp.Poly(lead, gen).LC()
        if lead.could_extract_minus_sign():
            factor = -factor
    return [sp.ImmutableMatrix(v.applyfunc(lambda e: sp.expand(sp.cancel(e * factor)))) for v in chain]
