"""Exact eigen- and Jordan decomposition driven by the factored characteristic polynomial.

Why this route rather than ``Matrix.eigenvects`` or ``jordan_form``: those
work on one concrete root at a time, in sympy's expression domain, and on a
3x3 whose characteristic polynomial is an irreducible cubic they can run for
minutes.  Here the characteristic polynomial is computed and factored over the
coefficient field K (the rationals, or the rational functions of the
parameters) in milliseconds, and every irreducible factor q of degree d is
handled once, in the field F = K[lam]/(q(lam)): the null spaces, Jordan
chains and left (dual) vectors are computed there exactly, as polynomials in
a generic root lam, and only then instantiated at each of the d concrete roots
(radicals, or indexed roots when radicals are unusable).  Conjugate roots thus
get conjugate vectors by construction.

P^-1 is assembled from the dual bases of the generalised eigenspaces: for the
block of lam, with V the chain vectors and L a basis of the left generalised
eigenspace, W = (L V)^-1 L.  A V = V J, W A = J W and W V = I are checked in
F; with disjoint spectra they imply P J P^-1 = A exactly.  When every
eigenvalue lies in K the checks are done once for the whole matrix instead:
P^-1 found again by elimination on [P | I] must equal the dual rows, and
A P = P J must hold, in K.
"""

from __future__ import annotations

import functools
from dataclasses import dataclass
from typing import Sequence

import sympy as sp
from sympy.polys.agca.extensions import FiniteExtension
from sympy.polys.constructor import construct_domain
from sympy.polys.domains.domain import Domain
from sympy.polys.matrices import DomainMatrix

from .chains import (
    cols_to_dm as _cols_to_dm,
    column as _column,
    inv as _inv,
    jordan_chains as _jordan_chains,
    normalise_chain as _normalise_chain,
    nullspace_cols as _nullspace_cols,
    rref as _rref,
    scale_chain as _scale_chain,
    scale_generic_chain as _scale_generic_chain,
    scale_rational_chain as _scale_rational_chain,
)
from .eigenvalues import (
    decimal_text,
    determinant_shown,
    domain_matrix,
    factor_charpoly,
    numeric_value,
    parameter_conditions,
    root_kind,
    roots_of,
    with_root_values,
)
from .errors import DeriveError, UnsupportedError, VerificationError
from .exact import numeric_function
from .model import Condition
from .rootring import expand_number, replace_atoms
from .settings import DEFAULT_SETTINGS, Settings
from .steps import (
    ChainLink,
    CharPolyStep,
    Deferred,
    EigenvalueEntry,
    EigenvaluesStep,
    EigenvectorStep,
    InverseStep,
    JordanChainStep,
    ModalMatrixStep,
    SimilarityStep,
    Step,
)

__all__ = ["LAM", "Decomposition", "EigenBlock", "decompose", "small_field"]

#: The eigenvalue variable shown on the sheet.
LAM = sp.Symbol("lambda")

_TH = sp.Dummy("theta")  # generic root inside F = K[theta]/(q)


@dataclass(frozen=True)
class EigenBlock:
    """One concrete eigenvalue with its Jordan chains and dual rows.

    ``chains`` are the columns of P for this eigenvalue (v_1 first in each
    chain); ``left`` the matching rows of P^-1.  ``kind`` is "real",
    "complex" or "unknown" (sign of a discriminant in the parameters unknown).
    """

    value: sp.Expr
    chains: tuple[tuple[sp.ImmutableMatrix, ...], ...]
    left: tuple[sp.ImmutableMatrix, ...]
    algebraic: int
    geometric: int
    factor: sp.Expr
    form: str
    rule: str
    decimal: str
    kind: str
    numeric: complex | None


@dataclass(frozen=True)
class Decomposition:
    """A = P J P^-1 with the blocks in column order and the steps that led there."""

    A: sp.ImmutableMatrix
    lam: sp.Symbol
    charpoly: sp.Expr  # det(A - lam I), expanded
    factored: sp.Expr
    blocks: tuple[EigenBlock, ...]
    P: sp.ImmutableMatrix
    J: sp.ImmutableMatrix
    P_inv: sp.ImmutableMatrix
    column_eigenvalues: tuple[sp.Expr, ...]
    jordan_blocks: tuple[tuple[sp.Expr, int], ...]  # (eigenvalue, size) in column order
    diagonalizable: bool
    steps: tuple[Step, ...]
    conditions: tuple[Condition, ...]
    #: placeholders for square roots whose sign a regime fixed, and their values
    aux: tuple[tuple[sp.Symbol, sp.Expr], ...] = ()
    #: the outcome of the exact check P J P^-1 = A (the similarity step says how it was made)
    similarity_ok: bool = True


# ---------------------------------------------------------------------------
# fields and conversions


@dataclass(frozen=True)
class _Field:
    """K, or K[theta]/(q) for an irreducible factor of degree >= 2."""

    dom: Domain
    K: Domain
    q: sp.Poly | None  # monic, in _TH over K; None when the root lies in K
    root: sp.Expr | None  # the root itself when it lies in K

    def to_expr(self, e, lam: sp.Symbol | None = None) -> sp.Expr:
        x = self.dom.to_sympy(e)
        if self.q is not None and lam is not None:
            x = x.xreplace({_TH: lam})
        return x

    def from_expr(self, x: sp.Expr):
        # x is an entry of a sympy matrix built here, never text
        return self.dom.from_sympy(x)


def _coefficient_domain(entries: Sequence[sp.Expr]):
    try:
        dom, _ = construct_domain(list(entries), field=True, extension=True)
    except DeriveError:
        raise  # a time limit that fired inside sympy is not a field problem
    except Exception as exc:  # pragma: no cover - sympy internals
        raise UnsupportedError(f"the matrix entries do not lie in a field sympy can compute in exactly: {exc}")
    if dom.is_EX or dom.is_EXRAW:
        raise UnsupportedError(
            "the matrix mixes algebraic numbers and parameters in a way that has no exact "
            "coefficient field here; use rational entries or declared parameters",
        )
    return dom



def _to_matrix(M: DomainMatrix, fld: _Field, lam: sp.Symbol | None = None) -> sp.ImmutableMatrix:
    rows, cols = M.shape
    dense = M.to_dense().rep.to_ddm()
    return sp.ImmutableMatrix(rows, cols, [fld.to_expr(dense[i][j], lam) for i in range(rows) for j in range(cols)])


def _instantiate(expr: sp.Expr, root: sp.Expr, gen: sp.Symbol | None) -> sp.Expr:
    """A polynomial in the generic root, evaluated at one concrete root."""
    if gen is None:
        return expr
    e = replace_atoms(expr, {gen: root})
    fast = expand_number(e) if isinstance(root, sp.CRootOf) else None  # sympy's expand rereads the root
    return sp.expand(e) if fast is None else fast


# ---------------------------------------------------------------------------
# display pieces of the steps, built when a sheet reads them (steps.Deferred)


def _product(P: sp.ImmutableMatrix, J: sp.ImmutableMatrix, P_inv: sp.ImmutableMatrix) -> sp.ImmutableMatrix:
    return sp.ImmutableMatrix((P * J * P_inv).applyfunc(sp.cancel))


def _shifted(A: sp.ImmutableMatrix, lam: sp.Symbol) -> sp.ImmutableMatrix:
    return sp.ImmutableMatrix(A - lam * sp.eye(A.rows))


def _shown_rref(reduced, fld: _Field, lam: sp.Symbol | None) -> sp.ImmutableMatrix:
    return _to_matrix(reduced()[0], fld, lam)


def _pivots(reduced) -> tuple[int, ...]:
    return tuple(reduced()[1])


def _free(reduced, n: int) -> tuple[int, ...]:
    return tuple(j for j in range(n) if j not in reduced()[1])


def _shown_vectors(chain: Sequence[DomainMatrix], fld: _Field, lam: sp.Symbol | None) -> tuple[sp.ImmutableMatrix, ...]:
    return tuple(_to_matrix(v, fld, lam) for v in chain)


def _chain_links(N: DomainMatrix, chain: Sequence[DomainMatrix], fld: _Field, lam: sp.Symbol | None) -> tuple[ChainLink, ...]:
    """(A - lam I) v_{k+1} = v_k for each link: the augmented system reduced, and v_{k+1}."""
    links = []
    for k in range(len(chain) - 1):
        aug_rref, _ = _rref(N.hstack(chain[k]))
        links.append(
            ChainLink(
                rhs=_to_matrix(chain[k], fld, lam),
                augmented_rref=_to_matrix(aug_rref, fld, lam),
                solution=_to_matrix(chain[k + 1], fld, lam),
            )
        )
    return tuple(links)


def _chain_instances(
    chain: Sequence[sp.ImmutableMatrix], roots: Sequence[sp.Expr], gen: sp.Symbol | None
) -> tuple[tuple[sp.Expr, tuple[sp.ImmutableMatrix, ...]], ...]:
    return tuple(
        (root, tuple(sp.ImmutableMatrix(v.applyfunc(lambda e: _instantiate(e, root, gen))) for v in chain))
        for root in roots
    )


# ---------------------------------------------------------------------------
# the decomposition


def decompose(
    A: sp.Matrix,
    *,
    lam: sp.Symbol = LAM,
    values: dict | None = None,
    regimes: Sequence[tuple[sp.Expr, int]] = (),
    settings: Settings = DEFAULT_SETTINGS,
    strict: bool = True,
) -> Decomposition:
    """Exact P, J (D when diagonalisable) and P^-1 of a square matrix, with steps.

    >>> dec = decompose(sp.Matrix([[2, 1], [1, 2]]))
    >>> dec.column_eigenvalues
    (1, 3)

    ``values`` maps parameters to numbers, used only to order eigenvalues and
    print decimals.  ``regimes`` are (expression, sign) pairs, e.g.
    (c^2 - 4 k m, -1), fixing the sign of a discriminant in the parameters.
    ``settings.radical_ops_limit`` is the size rule for cubic and quartic
    roots.  A failed check P J P^-1 = A raises ``VerificationError``; with
    ``strict=False`` it is recorded in ``similarity_ok`` (and in the
    similarity step) instead, for the solve's verification to report with the
    result it carries.
    """
    A = sp.ImmutableMatrix(A)
    n = A.rows
    values = dict(values or {})
    dom = _coefficient_domain(list(A))
    K = dom
    params = sorted(A.free_symbols, key=sp.default_sort_key)
    has_params = bool(params)
    aux: list[tuple[sp.Symbol, sp.Expr]] = []
    root_conditions: list[Condition] = []
    expanded, factored, factors = factor_charpoly(A, K, lam)
    steps: list[Step] = [
        CharPolyStep(
            lam=lam,
            shifted=Deferred(_shifted, A, lam),
            expanded=expanded,
            factored=factored,
            factors=tuple((f, m) for f, m in factors),
            domain=str(K),
        )
    ]
    A_K = domain_matrix(A, K)
    blocks: list[EigenBlock] = []
    vector_steps: list[Step] = []
    chain_steps: list[Step] = []
    field_ok = True
    generic_entries: list[DomainMatrix] = []  # V and W of each block, for the denominators

    all_linear = all(sp.degree(fexpr, lam) == 1 for fexpr, _ in factors)
    for fexpr, mult in factors:
        mult = int(mult)
        q_lam = sp.Poly(fexpr, lam, domain=K)
        q_monic = q_lam.monic()
        roots, form, rule = roots_of(
            q_lam, lam, has_params, regimes, aux, ops_limit=settings.radical_ops_limit, conditions=root_conditions
        )
        for w, w_value in aux:
            if w not in values and all(p in values for p in w_value.free_symbols):
                values[w] = sp.N(w_value.xreplace(values), 30)
        d = q_lam.degree()
        if d == 1:
            root = roots[0]
            fld = _Field(dom=K, K=K, q=None, root=root)
            theta = K.from_sympy(root)
            gen = None
            Fdom = K
        else:
            q_th = sp.Poly(q_monic.as_expr().subs(lam, _TH), _TH, domain=K)
            Fdom = FiniteExtension(q_th)
            fld = _Field(dom=Fdom, K=K, q=q_th, root=None)
            theta = Fdom.convert(_TH)
            gen = _TH
        A_F = A_K if Fdom is K else domain_matrix(A, Fdom)
        N = A_F - DomainMatrix.eye(n, Fdom) * theta
        chains_F, kernels = _jordan_chains(N, mult, n)
        geometric = len(kernels[0])
        if sum(len(c) for c in chains_F) != mult:
            raise UnsupportedError(
                f"internal: the chains of the factor {fexpr} span {sum(len(c) for c in chains_F)} "
                f"dimensions, expected {mult}",
            )
        # chains as expressions in the generic root, scaled to small integers
        chains_expr = []
        scaled_F = []
        for ch in chains_F:
            if gen is not None:
                ch = _normalise_chain(ch, fld)
            if Fdom.is_QQ or (gen is not None and K.is_QQ):
                # on the domain elements: Q, or the rational coefficients of Q[theta]/(q)
                ch = _scale_rational_chain(ch) if Fdom.is_QQ else _scale_generic_chain(ch)
                scaled_F.append(ch)
                chains_expr.append([_to_matrix(v, fld) for v in ch])
            else:
                scaled = _scale_chain([_to_matrix(v, fld) for v in ch], gen)
                chains_expr.append(scaled)
                scaled_F.append([_column([fld.from_expr(e) for e in v], Fdom) for v in scaled])
        chains_F = scaled_F
        V = _cols_to_dm([v for ch in chains_F for v in ch], Fdom, n)
        # left generalised eigenspace and the dual rows
        s = max(len(ch) for ch in chains_F)
        Nt = N.transpose()
        Pw = Nt
        for _ in range(s - 1):
            Pw = Pw * Nt
        left_cols = _nullspace_cols(Pw)
        L = _cols_to_dm(left_cols, Fdom, n).transpose()  # m x n
        W = _inv(L * V) * L
        generic_entries += [V, W]
        # J for this eigenvalue, then the exact checks in F
        m = mult
        Jrows = [[Fdom.zero] * m for _ in range(m)]
        pos = 0
        for ch in chains_F:
            for i in range(len(ch)):
                Jrows[pos + i][pos + i] = theta
                if i + 1 < len(ch):
                    Jrows[pos + i][pos + i + 1] = Fdom.one
            pos += len(ch)
        Jloc = DomainMatrix(Jrows, (m, m), Fdom)
        if not all_linear:
            # with every eigenvalue in K the checks after the loop (P^-1 found twice,
            # A P = P J) cover each block; else each block is checked here, in F
            ok = (
                (A_F * V - V * Jloc).is_zero_matrix
                and (W * A_F - Jloc * W).is_zero_matrix
                and (W * V - DomainMatrix.eye(m, Fdom).to_dense()).is_zero_matrix
            )
            field_ok = field_ok and ok

        # the eigenvector step, for the generic root (or the single root)
        show_lam = lam if gen is not None else None
        reduced = functools.cache(functools.partial(_rref, N))  # for the sheet only: on first read
        basis_expr = tuple(
            sp.ImmutableMatrix(v.subs(_TH, lam)) if gen is not None else v
            for v in (_scale_chain([_to_matrix(b, fld)], gen)[0] for b in kernels[0])
        ) if geometric < mult else tuple(
            sp.ImmutableMatrix(ch[0].subs(_TH, lam)) if gen is not None else ch[0] for ch in chains_expr
        )
        W_expr = _to_matrix(W, fld)
        instances = []
        for root in roots:
            if gen is None:  # the single root: the vectors are already its own
                inst_chains = tuple(tuple(ch) for ch in chains_expr)
                inst_left = tuple(W_expr.row(i) for i in range(W_expr.rows))
            else:
                inst_chains = tuple(
                    tuple(sp.ImmutableMatrix(v.applyfunc(lambda e: _instantiate(e, root, gen))) for v in ch)
                    for ch in chains_expr
                )
                inst_left = tuple(
                    sp.ImmutableMatrix(1, n, [_instantiate(e, root, gen) for e in W_expr.row(i)])
                    for i in range(W_expr.rows)
                )
            num = numeric_value(root, values)
            blocks.append(
                EigenBlock(
                    value=root,
                    chains=inst_chains,
                    left=inst_left,
                    algebraic=mult,
                    geometric=geometric,
                    factor=fexpr,
                    form=form,
                    rule=rule,
                    decimal=decimal_text(root, num),
                    kind=root_kind(root),
                    numeric=num,
                )
            )
            eig_basis = tuple(ch[0] for ch in inst_chains) if geometric == mult else tuple(
                sp.ImmutableMatrix(b.applyfunc(lambda e: _instantiate(e.subs(lam, _TH) if gen is not None else e, root, gen)))
                for b in basis_expr
            )
            instances.append((root, eig_basis))
        vector_steps.append(
            EigenvectorStep(
                lam=lam,
                eigenvalue=roots[0] if gen is None else lam,
                root_of=None if gen is None else fexpr,
                shifted=Deferred(_to_matrix, N, fld, show_lam),
                rref=Deferred(_shown_rref, reduced, fld, show_lam),
                pivots=Deferred(_pivots, reduced),
                free=Deferred(_free, reduced, n),
                basis=basis_expr,
                algebraic=mult,
                instances=tuple(instances),
            )
        )
        for ch_F, ch_expr in zip(chains_F, chains_expr):
            if len(ch_F) < 2:
                continue
            chain_steps.append(
                JordanChainStep(
                    lam=lam,
                    eigenvalue=roots[0] if gen is None else lam,
                    root_of=None if gen is None else fexpr,
                    algebraic=mult,
                    geometric=geometric,
                    shifted=Deferred(_to_matrix, N, fld, show_lam),
                    vectors=Deferred(_shown_vectors, ch_F, fld, show_lam),
                    links=Deferred(_chain_links, N, ch_F, fld, show_lam),
                    instances=Deferred(_chain_instances, ch_expr, tuple(roots), gen),
                )
            )

    blocks = _order_blocks(blocks, has_params and not values)
    entries = tuple(
        EigenvalueEntry(
            value=b.value,
            decimal=b.decimal,
            algebraic=b.algebraic,
            geometric=b.geometric,
            factor=b.factor,
            form=b.form,
            rule=b.rule,
        )
        for b in blocks
    )
    steps.append(EigenvaluesStep(lam=lam, entries=entries))
    steps.extend(vector_steps)
    steps.extend(chain_steps)

    cols: list[sp.ImmutableMatrix] = []
    rows: list[sp.ImmutableMatrix] = []
    col_eigs: list[sp.Expr] = []
    jblocks: list[tuple[sp.Expr, int]] = []
    for b in blocks:
        for chain in b.chains:
            cols.extend(chain)
            col_eigs.extend([b.value] * len(chain))
            jblocks.append((b.value, len(chain)))
        rows.extend(b.left)
    P = sp.ImmutableMatrix.hstack(*cols)
    P_inv = sp.ImmutableMatrix.vstack(*rows)
    J = sp.zeros(n, n)
    pos = 0
    for val, size in jblocks:
        for i in range(size):
            J[pos + i, pos + i] = val
            if i + 1 < size:
                J[pos + i, pos + i + 1] = 1
        pos += size
    J = sp.ImmutableMatrix(J)
    diagonalizable = all(size == 1 for _, size in jblocks)
    steps.append(ModalMatrixStep(P=P, D=J, diagonal=diagonalizable, blocks=tuple(jblocks)))

    all_in_K = all(b.form in ("rational", "exact") for b in blocks)
    if all_in_K != all_linear:
        raise UnsupportedError("internal: the eigenvalue forms disagree with the degrees of the factors")
    if all_in_K:
        # every number lies in K: P^-1 again by elimination on [P | I], and both
        # checks (the same inverse, P J P^-1 = A) as exact arithmetic in K
        PK = domain_matrix(P, K)
        det = sp.factor(K.to_sympy(PK.det()))
        inv_K = _inv(PK)
        inv_direct = _to_matrix(inv_K, _Field(K, K, None, None))
        field_ok = field_ok and inv_K.to_dense() == domain_matrix(P_inv, K).to_dense()
        P_inv = sp.ImmutableMatrix(inv_direct.applyfunc(sp.factor if has_params else (lambda e: e)))
        method = "Gauss-Jordan elimination on [P | I]"
        # with P invertible (its inverse was just found), A P = P J is P J P^-1 = A
        sim_ok = field_ok and (A_K * PK).to_dense() == (PK * domain_matrix(J, K).to_sparse()).to_dense()
        product = Deferred(_product, P, J, P_inv)
    else:
        exact = small_field(P, J, P_inv, A)  # one field for det P and the similarity check
        det = determinant_shown(P, exact)
        method = (
            "rows of P^-1 are the left eigenvectors (left Jordan chains) of A, each block "
            "normalised so that W V = I; computed once per irreducible factor of the "
            "characteristic polynomial, in terms of a generic root"
        )
        product, sim_ok = A, field_ok and _similarity_check(A, P, J, P_inv, values, exact)
    steps.append(InverseStep(P=P, det=det, P_inv=P_inv, method=method))
    steps.append(SimilarityStep(P=P, D=J, P_inv=P_inv, product=product, A=A, ok=sim_ok))
    if strict and not sim_ok:
        raise VerificationError("the decomposition failed its own check P D P^-1 = A; no result is reported")

    generic = None if all_in_K else tuple(generic_entries)
    conditions = (*root_conditions, *parameter_conditions(A, factors, P, P_inv, lam, K, generic=generic)) if has_params else ()
    return Decomposition(
        A=A,
        lam=lam,
        charpoly=expanded,
        factored=factored,
        blocks=tuple(blocks),
        P=P,
        J=J,
        P_inv=P_inv,
        column_eigenvalues=tuple(col_eigs),
        jordan_blocks=tuple(jblocks),
        diagonalizable=diagonalizable,
        steps=tuple(steps),
        conditions=conditions,
        aux=tuple(aux),
        similarity_ok=bool(sim_ok),
    )


def _order_blocks(blocks: list[EigenBlock], keep: bool) -> list[EigenBlock]:
    """Real before complex, ascending; a complex pair as a + ib, then a - ib."""
    placed = [(b, b.numeric) for b in blocks if b.numeric is not None]
    if keep or len(placed) != len(blocks):
        return blocks

    def key(item: tuple[EigenBlock, complex]) -> tuple[int, float, float, int]:
        z = item[1]
        is_complex = abs(z.imag) > 1e-20
        return (1 if is_complex else 0, round(z.real, 12), round(abs(z.imag), 12), 1 if z.imag < 0 else 0)

    return [b for b, _ in sorted(placed, key=key)]


def _similarity_check(A, P, J, P_inv, values, exact: list[DomainMatrix] | None) -> bool:
    """P J P^-1 = A: exactly in a small field (``small_field``), else numerically.

    The exact check in F has already run; this one covers putting the actual
    roots into the generic-root expressions.  Numerically, double precision
    first (a slip leaves a gap of the size of A, rounding one near 1e-16 of
    |P| |J| |P^-1|), 40 digits where that is not conclusive.
    """
    import numpy as np

    if exact is not None:
        Pd, Jd, Qd, Ad = exact
        return (Pd * Jd * Qd - Ad).is_zero_matrix
    n = A.rows
    mats = [with_root_values(M).xreplace(dict(values)) for M in (P, J, P_inv, A)]
    if any(M.free_symbols for M in mats):
        # free parameters without values: the exact check in F stands alone
        return True
    if any(M.has(sp.zoo, sp.nan, sp.oo, -sp.oo) for M in mats):
        # the values lie on a condition of the derivation (c^2 = 4 k m, say): the
        # generic P and P^-1 do not exist there, and the exact check in F stands alone
        return True
    try:
        import mpmath

        # mpmath at double precision: roots of negative numbers are complex, not nan
        fn = numeric_function((), [list(M) for M in mats], "mpmath")
        with mpmath.workdps(16):
            vals = fn()
        Pn, Jn, Qn, An = (np.array([complex(x) for x in v], dtype=complex).reshape(n, n) for v in vals)
        bound = 1e-12 * max(1.0, np.abs(Pn).max() * np.abs(Jn).max() * np.abs(Qn).max() * n * n)
        if float(np.abs(Pn @ Jn @ Qn - An).max()) <= bound:
            return True
    except (TypeError, ValueError, ZeroDivisionError, OverflowError):
        pass
    try:
        Pn, Jn, Qn, An = (M.evalf(40) for M in mats)
        gap = max(abs(complex(x - y)) for x, y in zip(Pn * Jn * Qn, An))
        scale = max(1.0, max(abs(complex(y)) for y in An))
    except (TypeError, ValueError):
        return True
    return gap <= 1e-25 * scale


def small_field(*matrices: sp.MatrixBase) -> list[DomainMatrix] | None:
    """The matrices over one exact field when their numbers lie in Q, Q(i) or Q(one or
    two square roots); None otherwise.

    Such fields cost a millisecond or so to build; indexed roots and towers of
    radicals make the primitive element of the field expensive.
    """
    entries = [e for M in matrices for e in M]
    if any(e.free_symbols or e.has(sp.CRootOf) for e in entries):
        return None
    radicals = set()
    for e in entries:
        radicals |= {p for p in e.atoms(sp.Pow) if p.exp.is_Rational and not p.exp.is_Integer}
    if len(radicals) > 2 or any(p.exp.q != 2 or not p.base.is_Rational for p in radicals):
        return None
    try:
        K, elems = construct_domain(entries, field=True, extension=True)
    except DeriveError:
        raise
    except Exception:  # pragma: no cover - sympy internals
        return None
    if K.is_EX or K.is_EXRAW:
        return None
    out, pos = [], 0
    for M in matrices:
        r, c = M.shape
        out.append(DomainMatrix([elems[pos + i * c : pos + i * c + c] for i in range(r)], (r, c), K))
        pos += r * c
    return out
