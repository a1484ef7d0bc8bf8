"""The spectrum items of a claim check: eigenvalues, eigenvectors, P, D and P^-1.

Each is tested by its defining property (the characteristic polynomial with
multiplicities, A v = lambda v, A P = P D with det P != 0, P P^-1 = I), so
any equivalent form passes: vectors scaled, values reordered, P's columns
permuted together with D.
"""

from __future__ import annotations

import itertools
from collections.abc import Sequence
from typing import Any

import sympy as sp

from .items import (
    CheckItem, clean, clean_matrix, decide_entry, decide_matrix, factor_text, is_zero, matrix_rank, plain, short,
    small_integers,
)

__all__ = [
    "charpoly", "group_values", "right_eigenvalues", "check_eigenvalues", "eigen_name", "check_eigenvector",
    "check_independence", "check_P", "check_D", "check_P_inv",
]


def charpoly(A: sp.MatrixBase, lam: sp.Symbol) -> sp.Expr:
    """det(lambda I - A), expanded."""
    return sp.expand(sp.Matrix(A).charpoly(lam).as_expr(lam))


def _root_multiplicity(p: sp.Expr, lam: sp.Symbol, mu: sp.Expr, n: int) -> int:
    k = 0
    q = p
    while k < n and is_zero(q.subs(lam, mu)):
        k += 1
        q = sp.diff(q, lam)
    return k


def group_values(values: Sequence[sp.Expr]) -> list[tuple[sp.Expr, int]]:
    """Distinct values (decided by the zero test) with their counts, in first-seen order."""
    groups: list[list[Any]] = []
    for v in values:
        for g in groups:
            if is_zero(g[0] - v):
                g[1] += 1
                break
        else:
            groups.append([v, 1])
    return [(g[0], g[1]) for g in groups]


def right_eigenvalues(p: sp.Expr, lam: sp.Symbol, n: int) -> tuple[sp.Expr, ...] | None:
    """The eigenvalues of A with multiplicity, when sympy finds all roots."""
    try:
        found = sp.roots(sp.Poly(p, lam))
    except (sp.PolynomialError, NotImplementedError):
        return None
    if sum(found.values()) != n:
        return None
    out: list[sp.Expr] = []
    for value in sorted(found, key=sp.default_sort_key):
        out.extend([value] * found[value])
    return tuple(out)


def check_eigenvalues(A: sp.ImmutableMatrix, claimed: tuple[sp.Expr, ...], lam: sp.Symbol) -> CheckItem:
    """The eigenvalues item: the claimed values reproduce the characteristic polynomial."""
    n = A.shape[0]
    p = charpoly(A, lam)
    q = sp.expand(sp.Mul(*[lam - mu for mu in claimed]))
    coeffs = sp.Poly(sp.expand(p - q), lam).all_coeffs()
    verdict = decide_matrix(coeffs)
    claimed_m = sp.ImmutableMatrix([[c] for c in claimed]) if claimed else None
    if len(claimed) == n and verdict.zero:
        return CheckItem(
            name="eigenvalues",
            step="eigenvalues",
            ok=True,
            detail=(
                f"{short(claimed)} are the roots of det(lambda I - A) = {short(p)} "
                f"with their multiplicities ({verdict.describe()})"
            ),
            residual=sp.Integer(0),
            method=verdict.method,
            claimed=claimed_m,
        )
    values = [(mu, clean(p.subs(lam, mu))) for mu in claimed]
    not_roots = [(mu, r) for mu, r in values if not is_zero(r)]
    problems: list[str] = []
    for mu, r in not_roots:
        problems.append(f"p({plain(mu)}) = {short(r, 80)} for the claimed eigenvalue {plain(mu)}: not a root")
    if not not_roots:
        for mu, count in group_values(claimed):
            mult = _root_multiplicity(p, lam, mu, n)
            if mult != count:
                problems.append(
                    f"{plain(mu)} is a root of multiplicity {mult} but is listed {count} time{'s' if count != 1 else ''}"
                )
    if len(claimed) != n:
        problems.insert(0, f"{len(claimed)} values are claimed but A is {n}x{n}, so it has {n} eigenvalues counted with multiplicity")
    if not problems:  # pragma: no cover - the coefficient test and the root test disagree
        problems.append("the claimed values do not reproduce the characteristic polynomial")
    right = right_eigenvalues(p, lam, n)
    detail = f"with p(lambda) = det(lambda I - A) = {short(p, 100)}: " + "; ".join(problems)
    detail += f" ({(decide_entry(not_roots[0][1]) if not_roots else verdict).describe()})"
    if right is not None:
        detail += f"; the right eigenvalues are {short(right)}"
    residual = sp.ImmutableMatrix([[r] for _, r in values]) if values else sp.ImmutableMatrix([[p]])
    decisive = [decide_entry(r) for _, r in not_roots]
    return CheckItem(
        name="eigenvalues",
        step="eigenvalues",
        ok=False,
        detail=detail,
        residual=residual,
        method=(decisive[0].short if decisive else verdict.method),
        claimed=claimed_m,
        expected=sp.ImmutableMatrix([[v] for v in right]) if right is not None else None,
    )


def eigen_name(mu: sp.Expr, index: int, same: int) -> str:
    """The item name of an eigenvector, numbered when a value has several."""
    label = f"eigenvector for {plain(mu)}"
    return f"{label} (#{index})" if same > 1 else label


def check_eigenvector(A: sp.ImmutableMatrix, mu: sp.Expr, v: sp.ImmutableMatrix, name: str) -> CheckItem:
    """One eigenvector item: A v = mu v with v nonzero."""
    n = A.shape[0]
    nonzero = decide_matrix(list(v))
    if nonzero.zero:
        return CheckItem(
            name=name,
            step="eigenvectors",
            ok=False,
            detail=f"the claimed eigenvector of {plain(mu)} is the zero vector; an eigenvector is nonzero",
            residual=v,
            method=nonzero.method,
            claimed=v,
        )
    r = (A * v - mu * v).applyfunc(sp.expand)
    mu_text = factor_text(mu)
    verdict = decide_matrix(list(r))
    if verdict.zero:
        return CheckItem.vanished(
            name, "eigenvectors", f"A v - {mu_text} v = 0 for v = {short(v)}", verdict=verdict, shape=(n, 1), claimed=v
        )
    shown = clean_matrix(r)
    detail = f"A v - {mu_text} v = {short(shown)} for the claimed eigenvector {short(v)} of {plain(mu)} ({verdict.describe()})"
    expected = None
    try:
        basis = (A - mu * sp.eye(n)).nullspace(iszerofunc=is_zero, simplify=True)
    except (ValueError, TypeError, NotImplementedError):  # pragma: no cover - sympy internals
        basis = None
    if basis == []:
        detail += f"; {plain(mu)} is not an eigenvalue of A, so no nonzero vector satisfies A v = {plain(mu)} v"
    elif basis:
        vecs = [small_integers(sp.ImmutableMatrix(b)) for b in basis]
        expected = vecs[0]
        if len(vecs) == 1:
            detail += f"; a right eigenvector of {plain(mu)} is {short(vecs[0])} (or any nonzero multiple)"
        else:
            detail += f"; the eigenvectors of {plain(mu)} are the nonzero combinations of " + ", ".join(
                short(b) for b in vecs
            )
    return CheckItem(
        name=name, step="eigenvectors", ok=False, detail=detail, residual=shown,
        method=verdict.method, claimed=v, expected=expected,
    )


def check_independence(mu: sp.Expr, vectors: Sequence[sp.ImmutableMatrix]) -> CheckItem:
    """The claimed eigenvectors of one value are linearly independent."""
    M = sp.ImmutableMatrix.hstack(*vectors)
    rank = matrix_rank(M)
    ok = rank == len(vectors)
    detail = (
        f"the {len(vectors)} claimed eigenvectors of {plain(mu)} are linearly independent (rank {rank})"
        if ok
        else f"the {len(vectors)} claimed eigenvectors of {plain(mu)} have rank {rank}: they are linearly dependent, "
        f"so they cannot serve as {len(vectors)} columns of P"
    )
    return CheckItem(
        name=f"eigenvectors for {plain(mu)}: independent",
        step="eigenvectors",
        ok=ok,
        detail=detail,
        residual=None,
        method="exact",
        claimed=M,
    )


def _jordan_pattern(M: sp.MatrixBase) -> list[str]:
    """Why ``M`` is not diagonal or a Jordan matrix (upper bidiagonal, 1s only inside a block)."""
    n = M.rows
    problems: list[str] = []
    for i in range(n):
        for j in range(n):
            if i == j:
                continue
            e = M[i, j]
            if j == i + 1:
                if is_zero(e):
                    continue
                if is_zero(e - 1):
                    if not is_zero(M[i, i] - M[j, j]):
                        problems.append(
                            f"entry ({i + 1},{j + 1}) is 1 but the diagonal entries {plain(M[i, i])} and "
                            f"{plain(M[j, j])} beside it differ"
                        )
                    continue
                problems.append(f"entry ({i + 1},{j + 1}) is {short(e, 60)}; expected 0 or 1")
            elif not is_zero(e):
                problems.append(f"entry ({i + 1},{j + 1}) is {short(e, 60)}; expected 0")
    return problems


def _spectrum_problems(A: sp.ImmutableMatrix, D: sp.ImmutableMatrix, lam: sp.Symbol) -> list[str]:
    """Differences between the eigenvalue structure of A and that of the (triangular) D."""
    n = A.shape[0]
    p = charpoly(A, lam)
    diag = [D[i, i] for i in range(n)]
    q = sp.expand(sp.Mul(*[lam - d for d in diag]))
    if not decide_matrix(sp.Poly(sp.expand(p - q), lam).all_coeffs()).zero:
        right = right_eigenvalues(p, lam, n)
        text = f"the diagonal of D, {short(tuple(diag))}, is not the list of eigenvalues of A"
        if right is not None:
            text += f" ({short(right)}, in any order)"
        return [text]
    problems: list[str] = []
    I = sp.eye(n)
    for mu, _count in group_values(diag):
        if _count == 1:
            continue  # a simple eigenvalue has one eigenvector in A and in D alike
        NA = sp.Matrix(A) - mu * I
        ND = sp.Matrix(D) - mu * I
        PA, PD = sp.eye(n), sp.eye(n)
        for k in range(1, n + 1):
            PA, PD = (PA * NA).applyfunc(sp.expand), (PD * ND).applyfunc(sp.expand)
            ra, rd = matrix_rank(PA), matrix_rank(PD)
            if ra != rd:
                if k == 1:
                    problems.append(
                        f"A has {n - ra} independent eigenvector(s) for {plain(mu)} but D implies {n - rd}"
                        + ("; A is not diagonalizable, so D must be its Jordan form" if rd < ra else "")
                    )
                else:
                    problems.append(f"the Jordan blocks of D for {plain(mu)} do not match those of A")
                break
            if ra == n - _count:
                break
    return problems


def _column_eigenvalue(A: sp.ImmutableMatrix, p: sp.ImmutableMatrix) -> sp.Expr | None:
    """The eigenvalue whose eigenvector is the column ``p``, or None when p is not one."""
    Ap = (A * p).applyfunc(sp.expand)
    for k in range(p.rows):
        if not is_zero(p[k]):
            mu = sp.cancel(Ap[k] / p[k])
            if decide_matrix(list((Ap - mu * p).applyfunc(sp.expand))).zero:
                return mu
            return None
    return None


def _match_permutation(found: Sequence[sp.Expr], wanted: Sequence[sp.Expr]) -> tuple[int, ...] | None:
    """perm with found[perm[j]] == wanted[j], or None."""
    n = len(wanted)
    if len(found) != n or n > 7:
        return None
    for perm in itertools.permutations(range(n)):
        if all(is_zero(found[perm[j]] - wanted[j]) for j in range(n)):
            return perm
    return None


def check_P(
    A: sp.ImmutableMatrix, P: sp.ImmutableMatrix, D: sp.ImmutableMatrix | None, D_valid: bool
) -> CheckItem:
    """The P item: det P != 0 and A P = P D (or P^-1 A P diagonal or Jordan)."""
    n = A.shape[0]
    det = sp.expand(P.det(method="berkowitz"))
    dv = decide_entry(det)
    if dv.zero:
        return CheckItem(
            name="P",
            step="P",
            ok=False,
            detail=(
                f"P is singular: det P = 0 ({dv.describe()}), so its columns are not independent "
                "and P has no inverse"
            ),
            residual=sp.Integer(0),
            method=dv.short,
            claimed=P,
        )
    det_text = f"det P = {short(clean(det), 60)}"
    if D is not None and D_valid:
        R = (A * P - P * D).applyfunc(sp.expand)
        verdict = decide_matrix(list(R))
        if verdict.zero:
            return CheckItem.vanished(
                "P", "P", f"A P = P D and {det_text} != 0, so P D P^-1 = A", verdict=verdict, shape=(n, n), claimed=P
            )
        shown = clean_matrix(R)
        detail = f"A P - P D = {short(shown)} (should be the zero matrix), so P D P^-1 != A"
        expected = None
        diag = [D[i, i] for i in range(n)]
        cols = [_column_eigenvalue(A, P[:, j]) for j in range(n)]
        if all(c is not None for c in cols) and D.is_diagonal():
            perm = _match_permutation(cols, diag)
            if perm is not None:
                expected = sp.ImmutableMatrix.hstack(*[P[:, perm[j]] for j in range(n)])
                detail = (
                    f"the columns of P are eigenvectors of A for {short(tuple(cols))} in that order, but the "
                    f"diagonal of D is {short(tuple(diag))}: P's column order does not match D's "
                    f"(A P - P D = {short(shown)}); with the columns reordered, P = {short(expected)}"
                )
        else:
            bad = [j + 1 for j, c in enumerate(cols) if c is None]
            if bad and D.is_diagonal():
                detail += "; column" + ("s " if len(bad) > 1 else " ") + ", ".join(map(str, bad)) + " of P " + (
                    "are not eigenvectors of A" if len(bad) > 1 else "is not an eigenvector of A"
                )
        return CheckItem(
            name="P", step="P", ok=False, detail=f"{detail} ({verdict.describe()})", residual=shown,
            method=verdict.method, claimed=P, expected=expected,
        )
    # No usable D: P must bring A to diagonal or Jordan form on its own.
    M = clean_matrix(P.inv(method="ADJ") * A * P)
    problems = _jordan_pattern(M)
    if not problems:
        return CheckItem(
            name="P",
            step="P",
            ok=True,
            detail=f"{det_text} != 0 and P^-1 A P = {short(M)} is "
            + ("diagonal" if M.is_diagonal() else "a Jordan matrix")
            + ", so the columns of P are (generalised) eigenvectors of A",
            residual=None,
            method="exact",
            claimed=P,
        )
    return CheckItem(
        name="P",
        step="P",
        ok=False,
        detail=f"P^-1 A P = {short(M)} is not diagonal or a Jordan matrix: " + "; ".join(problems[:3]),
        residual=M,
        method="exact",
        claimed=P,
    )


def check_D(A: sp.ImmutableMatrix, D: sp.ImmutableMatrix, lam: sp.Symbol) -> CheckItem:
    """The D item: diagonal or Jordan, with the eigenvalue structure of A."""
    problems = _jordan_pattern(D)
    if problems:
        return CheckItem(
            name="D",
            step="D",
            ok=False,
            detail="D is not diagonal (or a Jordan matrix): " + "; ".join(problems[:3]),
            residual=D - sp.diag(*[D[i, i] for i in range(D.rows)]),
            method="exact",
            claimed=D,
        )
    problems = _spectrum_problems(A, D, lam)
    if problems:
        return CheckItem(
            name="D", step="D", ok=False, detail="; ".join(problems), residual=None, method="exact", claimed=D
        )
    kind = "diagonal" if D.is_diagonal() else "a Jordan matrix"
    return CheckItem(
        name="D",
        step="D",
        ok=True,
        detail=f"D is {kind} and its diagonal holds the eigenvalues of A with their multiplicities "
        "and eigenvector counts",
        residual=None,
        method="exact",
        claimed=D,
    )


def check_P_inv(P: sp.ImmutableMatrix, P_inv: sp.ImmutableMatrix) -> CheckItem:
    """The P_inv item: P P_inv = I and P_inv P = I."""
    n = P.shape[0]
    R = (P * P_inv - sp.eye(n)).applyfunc(sp.expand)
    L = (P_inv * P - sp.eye(n)).applyfunc(sp.expand)
    verdict = decide_matrix(list(R) + list(L))
    if verdict.zero:
        return CheckItem.vanished(
            "P_inv", "P_inv", "P P_inv = I and P_inv P = I", verdict=verdict, shape=(n, n), claimed=P_inv
        )
    shown = clean_matrix(R)
    detail = f"P P_inv - I = {short(shown)} (should be the zero matrix)"
    expected = None
    if not is_zero(sp.expand(P.det(method="berkowitz"))):
        expected = clean_matrix(P.inv(method="ADJ"))
        wrong = [
            f"({i + 1},{j + 1})" for i in range(n) for j in range(n) if not is_zero(expected[i, j] - P_inv[i, j])
        ]
        detail += f"; the right value is P^-1 = {short(expected)} (entries {', '.join(wrong)} differ)"
    else:
        detail += "; P itself is singular, so it has no inverse"
    return CheckItem(
        name="P_inv", step="P_inv", ok=False, detail=f"{detail} ({verdict.describe()})", residual=shown,
        method=verdict.method, claimed=P_inv, expected=expected,
    )
