"""Checking a hand derivation of x' = A x + f(t), item by item.

Each claimed item is verified on its own, by substitution, independently of
``derive.solve``: eigenvalues against the characteristic polynomial (with
multiplicities), each eigenvector by A v = lambda v, P by A P = P D with
det P != 0, P^-1 by P P^-1 = I, a general solution by substitution into the
ODE for every value of its constants together with a nonsingular
d x / d c, and an initial value solution also by x(t0) = x0.  Because only
these defining properties are tested, a claim is accepted in any equivalent
form: constants renamed, rescaled or recombined, eigenvectors scaled,
eigenvalues in another order, P's columns permuted together with D.
``derive.solve`` is called only to state the right value of a failed
solution item, never to decide pass or fail.

Zero tests: the one engine of ``derive.verify.zero`` (exact reduction, then
a numeric identity test at 50 digits at random points of t, the constants
and the parameters, on both sides of every step or impulse time); each item
says which method decided.

The package: ``items`` (records, shared helpers), ``claims`` (reading claim
values), ``spectrum`` (eigenvalues, eigenvectors, P, D, P^-1), ``solution``
(the solution items) and here the entry point :func:`check`.

Reference for the method: common practice (substitution check).

``derive.documents.check_report`` renders a ``CheckReport`` as a terminal
table, Markdown, JSON or LaTeX (``templates/check.tex.j2``).
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from typing import Any

import sympy as sp

from ..errors import InputError
from .claims import IMAGINARY_NAMES, claim_symbols, matrix_of, parse_claim_value
from .items import CAUTION, CHECK_FORMATS, STEP_ORDER, CheckItem, CheckReport, is_zero
from .solution import Problem, RightSolution, constants_item, initial_item, ode_item
from .spectrum import (
    check_D, check_eigenvalues, check_eigenvector, check_independence, check_P, check_P_inv, eigen_name,
    group_values,
)

__all__ = [
    "STEP_ORDER",
    "CheckItem",
    "CheckReport",
    "check",
    "CHECK_FORMATS",
    "CAUTION",
    "IMAGINARY_NAMES",
    "claim_symbols",
    "parse_claim_value",
]


def _eigen_pairs(
    eigenvectors: Any,
    eigenvalues: tuple[sp.Expr, ...] | None,
    *,
    n: int,
    parse: Any,
) -> list[tuple[sp.Expr, sp.ImmutableMatrix]]:
    """Normalise the accepted eigenvector forms to (eigenvalue, vector) pairs."""

    def vec(value: Any, key: str) -> sp.ImmutableMatrix:
        return matrix_of(value, n=n, key=key, cols=None, parse=parse)

    def is_vector(value: Any) -> bool:
        if isinstance(value, sp.MatrixBase):
            return True
        return isinstance(value, Sequence) and not isinstance(value, (str, bytes))

    pairs: list[tuple[sp.Expr, sp.ImmutableMatrix]] = []
    if isinstance(eigenvectors, Mapping):
        for k, (mu_raw, value) in enumerate(eigenvectors.items()):
            mu = parse(mu_raw, f"eigenvectors[{mu_raw!r}]") if isinstance(mu_raw, str) else parse(mu_raw, "eigenvectors")
            many = (
                isinstance(value, Sequence) and not isinstance(value, (str, bytes)) and value
                and all(is_vector(v) for v in value)
            ) or (isinstance(value, (list, tuple)) and value and all(isinstance(v, sp.MatrixBase) for v in value))
            if many:
                for j, v in enumerate(value):
                    pairs.append((mu, vec(v, f"eigenvectors[{mu_raw!r}][{j}]")))
            else:
                pairs.append((mu, vec(value, f"eigenvectors[{mu_raw!r}]")))
        return pairs
    if isinstance(eigenvectors, sp.MatrixBase) or isinstance(eigenvectors, (str, bytes)) or not isinstance(eigenvectors, Sequence):
        raise InputError(
            f"eigenvectors is {type(eigenvectors).__name__}; expected a list of (eigenvalue, vector) pairs, "
            "a list of vectors aligned with eigenvalues, or a mapping eigenvalue -> vector",
            key="eigenvectors",
        )
    items = list(eigenvectors)
    paired = [
        isinstance(it, (tuple, list)) and len(it) == 2 and not is_vector(it[0]) and is_vector(it[1]) for it in items
    ]
    if items and all(paired):
        for k, (mu_raw, v) in enumerate(items):
            pairs.append((parse(mu_raw, f"eigenvectors[{k}][0]"), vec(v, f"eigenvectors[{k}][1]")))
        return pairs
    if any(paired):
        k = paired.index(False)
        raise InputError(
            f"eigenvectors[{k}] is not an (eigenvalue, vector) pair like the others", key=f"eigenvectors[{k}]"
        )
    if eigenvalues is None:
        raise InputError(
            "eigenvectors are given as bare vectors, which needs eigenvalues aligned with them; "
            "give eigenvalues too, or write (eigenvalue, vector) pairs",
            key="eigenvectors",
        )
    if len(items) != len(eigenvalues):
        raise InputError(
            f"eigenvectors has {len(items)} vectors but eigenvalues has {len(eigenvalues)} values; "
            "bare vectors are paired with eigenvalues in order",
            key="eigenvectors",
        )
    return [(mu, vec(v, f"eigenvectors[{k}]")) for k, (mu, v) in enumerate(zip(eigenvalues, items))]


def _infer_t(t: Any, *objs: Any) -> sp.Symbol:
    if t is not None:
        if not isinstance(t, sp.Symbol):
            raise InputError(f"t must be a sympy Symbol, found {type(t).__name__}", key="t")
        return t
    for obj in objs:
        if isinstance(obj, (sp.Basic, sp.MatrixBase)):
            for s in obj.free_symbols:
                if isinstance(s, sp.Symbol) and s.name == "t":
                    return s
        elif isinstance(obj, Sequence) and not isinstance(obj, (str, bytes)):
            for e in obj:
                if isinstance(e, sp.Basic):
                    for s in e.free_symbols:
                        if isinstance(s, sp.Symbol) and s.name == "t":
                            return s
    return sp.Symbol("t", real=True)


def check(
    A,
    f=None,
    *,
    t=None,
    x=None,
    constants=None,
    x0=None,
    t0=0,
    eigenvalues=None,
    eigenvectors=None,
    P=None,
    D=None,
    P_inv=None,
) -> CheckReport:
    """Check each claimed step of a hand derivation of x' = A x + f(t) on its own.

    Claims may be sympy objects, numbers or expression strings; ``x`` may use
    any constant names (given in ``constants`` or inferred as the symbols of
    ``x`` other than ``t`` and those of the case).

    >>> rep = check([[3, 0], [0, -1]], P=[[0, 1], [1, 0]], D=[[3, 0], [0, -1]])
    >>> rep.ok, rep.first_failure.name
    (False, 'P')
    """
    notices: list[str] = []
    if isinstance(A, sp.MatrixBase):
        rows = A.tolist()
    elif isinstance(A, (str, bytes)) or not isinstance(A, Sequence):
        raise InputError(f"A must be a square matrix (a sympy Matrix or a list of rows), found {type(A).__name__}", key="A")
    else:
        rows = [list(r) if isinstance(r, Sequence) and not isinstance(r, (str, bytes)) else [r] for r in A]
    n = len(rows)
    if n == 0 or any(len(r) != n for r in rows):
        raise InputError(f"A must be square, found {n} rows of lengths {[len(r) for r in rows]}", key="A")

    t_sym = _infer_t(t, A, f, x)
    base = {t_sym.name: t_sym}
    # A and f may themselves be strings; they can use t and nothing undeclared.
    pre_syms = {**base}
    for obj in (A, f, x0):
        if isinstance(obj, sp.MatrixBase):
            pre_syms.update({s.name: s for s in obj.free_symbols if isinstance(s, sp.Symbol)})
        elif isinstance(obj, Sequence) and not isinstance(obj, (str, bytes)):
            for e in obj:
                for v in (e if isinstance(e, Sequence) and not isinstance(e, (str, bytes)) else [e]):
                    if isinstance(v, sp.Basic):
                        pre_syms.update({s.name: s for s in v.free_symbols if isinstance(s, sp.Symbol)})

    def parse_case(value: Any, key: str) -> sp.Expr:
        return parse_claim_value(value, symbols=pre_syms, key=key, notices=notices)

    Am = sp.ImmutableMatrix([[parse_case(v, f"A[{i}][{j}]") for j, v in enumerate(r)] for i, r in enumerate(rows)])
    if Am.has(t_sym):
        raise InputError(f"A depends on {t_sym}: the check needs constant coefficients", key="A")
    fm = (
        sp.ImmutableMatrix(sp.zeros(n, 1))
        if f is None
        else matrix_of(f, n=n, key="f", cols=None, parse=parse_case)
    )
    x0m = None if x0 is None else matrix_of(x0, n=n, key="x0", cols=None, parse=parse_case)
    t0e = parse_case(t0, "t0")

    const_syms: tuple[sp.Symbol, ...] = ()
    if constants is not None:
        if isinstance(constants, (str, bytes)) or not isinstance(constants, Sequence):
            raise InputError(f"constants is {type(constants).__name__}; expected a list of symbols or names", key="constants")
        made: list[sp.Symbol] = []
        for k, c in enumerate(constants):
            if isinstance(c, sp.Symbol):
                made.append(c)
            elif isinstance(c, str):
                from ..parsing import name_problem

                problem = name_problem(c)
                if problem is not None:
                    raise InputError(f"{problem}; expected a constant name such as c1", key=f"constants[{k}]")
                made.append(sp.Symbol(c))
            else:
                raise InputError(f"constants[{k}] is {type(c).__name__}; expected a Symbol or a name", key=f"constants[{k}]")
        const_syms = tuple(made)
    case_names = claim_symbols(Am, fm, t_sym, x0m, t0e)
    for k, c in enumerate(const_syms):
        if c.name in case_names:
            raise InputError(
                f"the constant {c.name!r} has the name of a symbol of the case; expected a new name",
                key=f"constants[{k}]",
            )
    symbols = claim_symbols(Am, fm, t_sym, x0m, t0e, constants=const_syms)

    def parse(value: Any, key: str) -> sp.Expr:
        return parse_claim_value(value, symbols=symbols, key=key, notices=notices)

    # The eigenvalue variable shows in the details; a Dummy only if the case uses the name.
    lam = sp.Symbol("lambda")
    if lam in Am.free_symbols:
        lam = sp.Dummy("lambda")
    items: list[CheckItem] = []

    ev: tuple[sp.Expr, ...] | None = None
    if eigenvalues is not None:
        if isinstance(eigenvalues, (str, bytes)) or not isinstance(eigenvalues, (Sequence, sp.MatrixBase)):
            raise InputError(f"eigenvalues is {type(eigenvalues).__name__}; expected a list of values", key="eigenvalues")
        ev = tuple(parse(v, f"eigenvalues[{k}]") for k, v in enumerate(eigenvalues))
        items.append(check_eigenvalues(Am, ev, lam))

    if eigenvectors is not None:
        pairs = _eigen_pairs(eigenvectors, ev, n=n, parse=parse)
        groups = group_values([mu for mu, _ in pairs])
        seen: dict[int, int] = {}
        for mu, v in pairs:
            g = next(k for k, (m, _) in enumerate(groups) if is_zero(m - mu))
            seen[g] = seen.get(g, 0) + 1
            items.append(check_eigenvector(Am, mu, v, eigen_name(groups[g][0], seen[g], groups[g][1])))
        for g, (mu, count) in enumerate(groups):
            if count > 1:
                vs = [v for m, v in pairs if is_zero(m - mu)]
                items.append(check_independence(mu, vs))

    Pm = None if P is None else matrix_of(P, n=n, key="P", cols=n, parse=parse)
    Dm = None if D is None else matrix_of(D, n=n, key="D", cols=n, parse=parse)
    Pim = None if P_inv is None else matrix_of(P_inv, n=n, key="P_inv", cols=n, parse=parse)
    if Pim is not None and Pm is None:
        raise InputError("P_inv is claimed without P; P P_inv = I can only be checked with P", key="P_inv")
    d_item = check_D(Am, Dm, lam) if Dm is not None else None
    if Pm is not None:
        items.append(check_P(Am, Pm, Dm, d_item is not None and d_item.ok))
    if d_item is not None:
        items.append(d_item)
    if Pim is not None and Pm is not None:
        items.append(check_P_inv(Pm, Pim))

    const_used = const_syms
    if x is not None:
        new_names: dict[str, sp.Symbol] = {}
        if constants is None:
            def parse_x(value: Any, key: str) -> sp.Expr:
                return parse_claim_value(value, symbols=symbols, key=key, new_names=new_names, notices=notices)
        else:
            parse_x = parse
        xm = matrix_of(x, n=n, key="x", cols=None, parse=parse_x)
        if constants is None:
            case_syms = set(Am.free_symbols) | set(fm.free_symbols) | {t_sym}
            # The symbols of x0 and t0 are parameters of the case too, not constants.
            case_syms |= set(x0m.free_symbols) if x0m is not None else set()
            case_syms |= set(t0e.free_symbols)
            const_used = tuple(sorted((s for s in xm.free_symbols - case_syms if isinstance(s, sp.Symbol)), key=sp.default_sort_key))
            if const_used:
                notices.append("x: taken as the claimant's constants: " + ", ".join(c.name for c in const_used))
        prob = Problem(A=Am, f=fm, t=t_sym, x0=x0m, t0=t0e)
        right = RightSolution(prob)
        if const_used or x0m is None:
            items.append(ode_item(prob, xm, const_used, step="general solution", right=right))
            items.append(constants_item(prob, xm, const_used))
            if x0m is not None:
                notices.append("x has free constants, so it is checked as a general solution; x(t0) = x0 is not checked")
        else:
            items.append(ode_item(prob, xm, (), step="IVP solution", right=right))
            items.append(initial_item(prob, xm, right))

    if not items:
        raise InputError(
            "nothing to check: the claim holds none of eigenvalues, eigenvectors, P, D, P_inv, x",
            key="claim",
        )
    order = {s: k for k, s in enumerate(STEP_ORDER)}
    ordered = tuple(sorted(items, key=lambda it: order[it.step]))  # stable within a step
    return CheckReport(
        items=ordered,
        A=Am,
        f=fm,
        t=t_sym,
        x0=x0m,
        t0=t0e,
        constants=tuple(const_used),
        notices=tuple(dict.fromkeys(notices)),
    )
