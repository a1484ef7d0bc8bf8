"""x = P y: homogeneous and particular parts, the real form, the constants.

The solution is carried as exponential polynomials until the very end, so the
real form is a structural rewrite (2 Re(c t^k e^{(a + i b) t})) rather than a
call to a simplifier, and the constants of an initial value problem follow
from y(t0) = c, that is P c = x0.
"""

from __future__ import annotations

import functools
from dataclasses import dataclass
from typing import Iterable, Sequence

import sympy as sp

from .expoly import ExpPoly, conjugate, exponential_groups, split_complex
from .rootring import atoms_of, collected, common_out, contains, expanded, reduce_number, replace_atoms
from .spectral import EigenBlock
from .steps import Deferred, InitialValuesStep, RealFormPair, RealFormStep, RecombineStep, Step

__all__ = ["Recombined", "recombine", "conjugate_pairs", "restore_roots", "tidy", "grouped"]


@dataclass(frozen=True)
class Recombined:
    x: sp.ImmutableMatrix
    homogeneous: sp.ImmutableMatrix
    particular: sp.ImmutableMatrix
    constants: tuple[sp.Symbol, ...]
    steps: tuple[Step, ...]
    real_form: bool


def _mat(polys: Sequence[ExpPoly], t: sp.Symbol, t0: sp.Expr = 0) -> sp.ImmutableMatrix:
    return sp.ImmutableMatrix([p.to_expr(t, t0=t0) for p in polys])


def _real(polys: Sequence[ExpPoly], t: sp.Symbol, t0: sp.Expr = 0) -> sp.ImmutableMatrix:
    return sp.ImmutableMatrix([p.real_form(t, t0=t0) for p in polys])


def _combined(constants: Sequence[sp.Symbol], phis, t: sp.Symbol, t0: sp.Expr) -> sp.ImmutableMatrix:
    """sum_j c_j phi_j(t), component by component."""
    return sp.ImmutableMatrix([sum((c * p.to_expr(t, t0=t0) for c, p in zip(constants, col)), sp.Integer(0)) for col in zip(*phis)])


def _homogeneous_terms(
    constants: Sequence[sp.Symbol], phis, t: sp.Symbol, t0: sp.Expr
) -> tuple[tuple[sp.Expr, sp.ImmutableMatrix], ...]:
    """(scalar function, vector) for each c_j phi_j: c_j e^{lam t} v where phi_j has that shape."""
    terms = []
    for c, phi in zip(constants, phis):
        fs = _factor_scalar(phi, t, t0)
        terms.append((c, _mat(phi, t, t0)) if fs is None else (c * fs[0], fs[1]))
    return tuple(terms)


def _summed(a, b) -> sp.ImmutableMatrix:
    return sp.ImmutableMatrix([u + v for u, v in zip(a(), b())])


def _column_layout(blocks: Sequence[EigenBlock]) -> list[list[list[int]]]:
    """Column indices of P for each block, chain by chain."""
    out = []
    pos = 0
    for b in blocks:
        chains = []
        for ch in b.chains:
            chains.append(list(range(pos, pos + len(ch))))
            pos += len(ch)
        out.append(chains)
    return out


def conjugate_pairs(blocks: Sequence[EigenBlock]) -> list[tuple[int, int]]:
    """(block of a + ib, block of a - ib) index pairs, b > 0, found numerically."""
    pairs = []
    used: set[int] = set()
    if any(b.kind == "complex" and b.numeric is None for b in blocks):
        return _symbolic_pairs(blocks)
    for i, b in enumerate(blocks):
        if b.kind != "complex" or b.numeric is None or b.numeric.imag <= 0 or i in used:
            continue
        for j, c in enumerate(blocks):
            if j == i or j in used or c.kind != "complex" or c.numeric is None:
                continue
            if abs(c.numeric - b.numeric.conjugate()) <= 1e-20 * max(1.0, abs(b.numeric)):
                pairs.append((i, j))
                used.update((i, j))
                break
    return pairs


def _symbolic_pairs(blocks: Sequence[EigenBlock]) -> list[tuple[int, int]]:
    """Pairs a + ib, a - ib found exactly, for eigenvalues in parameters without values."""
    pairs = []
    used: set[int] = set()
    for i, b in enumerate(blocks):
        if b.kind != "complex" or i in used:
            continue
        im = split_complex(b.value)[1]
        if not im.is_positive:
            continue
        conj = sp.expand(split_complex(b.value)[0] - sp.I * im)
        for j, c in enumerate(blocks):
            if j != i and j not in used and c.kind == "complex" and sp.expand(c.value - conj) == 0:
                pairs.append((i, j))
                used.update((i, j))
                break
    return pairs


def _factor_scalar(phi: list[ExpPoly], t: sp.Symbol, t0: sp.Expr) -> tuple[sp.Expr, sp.ImmutableMatrix] | None:
    """phi = e^{gamma (t - t0)} v with a constant vector v, when it is of that shape."""
    keys = {key for p in phi for key, _ in p.terms}
    if len(keys) != 1:
        return None
    (k, g), = keys
    if k != 0:
        return None
    vec = []
    for p in phi:
        d = p.as_dict()
        c = d.get((k, g), sp.Integer(0))
        vec.append(sp.expand(c * sp.exp(g * t0)) if t0 != 0 else c)
    return sp.exp(g * (t - t0)), sp.ImmutableMatrix(vec)


def recombine(
    P: sp.ImmutableMatrix,
    P_inv: sp.ImmutableMatrix,
    y: Sequence[ExpPoly],
    *,
    blocks: Sequence[EigenBlock],
    constants: Sequence[sp.Symbol],
    t: sp.Symbol,
    t0: sp.Expr,
    x0: sp.ImmutableMatrix | None,
    real: bool,
    numbers: frozenset[sp.Symbol] = frozenset(),
) -> Recombined:
    """Assemble x(t) from the solved y(t); real form and constants as steps.

    ``numbers`` are symbols that stand for real constants (the time shift's
    stand-ins): coefficients in them are expanded like numbers, not factored.
    """
    n = P.rows
    ivp = x0 is not None
    shift = t0 if ivp else sp.Integer(0)
    if not P.free_symbols:
        # y is linear in the constants: split it first, so x = P y is formed from
        # constant-free coefficients, numbers that need no expansion
        y_split = [yj.split_linear(constants) for yj in y]
        phis = [
            [ExpPoly.combination((P[i, j], y_split[j][0][k]) for j in range(n)) for i in range(n)]
            for k in range(len(constants))
        ]
        xp = [ExpPoly.combination((P[i, j], y_split[j][1]) for j in range(n)) for i in range(n)]
    else:
        # parameters: x = P y first, whose coefficients factor over their denominators
        x_ep = [ExpPoly.combination((P[i, j], y[j]) for j in range(n)) for i in range(n)]
        split = [x_ep[i].split_linear(constants) for i in range(n)]
        phis = [[split[i][0][k] for i in range(n)] for k in range(len(constants))]
        xp = [split[i][1] for i in range(n)]
    # the complex-form x = P y is shown on the sheet; it is the result only when no real form is taken
    hom_c = functools.cache(functools.partial(_combined, constants, phis, t, shift))
    xp_mat = functools.cache(functools.partial(_mat, xp, t, shift))
    steps: list[Step] = [
        RecombineStep(
            P=P,
            y=Deferred(_mat, y, t, shift),
            homogeneous_terms=Deferred(_homogeneous_terms, constants, phis, t, shift),
            homogeneous=Deferred(hom_c),
            particular=Deferred(xp_mat),
            x=Deferred(_summed, hom_c, xp_mat),
        )
    ]
    layout = _column_layout(blocks)
    pairs = conjugate_pairs(blocks) if real else []
    # only a full pairing of the complex eigenvalues gives a real form
    n_complex = sum(1 for b in blocks if b.kind == "complex")
    n_unknown = sum(1 for b in blocks if b.kind == "unknown")
    # an indexed complex root r is written sigma + i omega, both named real roots
    # of rational polynomials (realroots), so the real form is taken for it too
    do_real = real and n_unknown == 0 and 2 * len(pairs) == n_complex

    values: dict[sp.Symbol, sp.Expr] = {}
    if x0 is not None:
        cvals = [_combination(P_inv.row(i), x0) for i in range(n)]
        cvals = [v if not v.free_symbols else sp.factor(v) for v in cvals]
        values = dict(zip(constants, cvals))
        steps.append(
            InitialValuesStep(
                t0=t0,
                x0=x0,
                matrix=P,
                constants=tuple(constants),
                rhs=x0,
                values=tuple(values.items()),
            )
        )

    cs = () if ivp else tuple(constants)  # the free constants of the result
    real_pairs: list[RealFormPair] = []
    hom_terms: list[list[tuple[sp.Expr, ExpPoly]]] = [[] for _ in range(n)]  # an IVP's c_j phi_j, summed once
    hom_real: list[list[tuple[sp.Expr, ExpPoly]]] = [[] for _ in range(n)]  # a general solution's real pairs
    hv: list[ExpPoly] | None = None  # an IVP's homogeneous part
    if do_real and pairs:
        paired_cols: dict[int, tuple[int, int]] = {}
        for bi, bj in pairs:
            for chain_i, chain_j in zip(layout[bi], layout[bj]):
                for ci, cj in zip(chain_i, chain_j):
                    paired_cols[ci] = (ci, cj)
                    paired_cols[cj] = (ci, cj)
        for idx, c in enumerate(constants):
            phi = phis[idx]
            if idx not in paired_cols:
                cc = values.get(c, c)
                for i in range(n):
                    hom_terms[i].append((cc, phi[i]))
                continue
            ci, cj = paired_cols[idx]
            if idx != ci:
                continue
            phi_c = [conjugate(p) for p in phi]
            re_part = [((p + q).scale(sp.Rational(1, 2))) for p, q in zip(phi, phi_c)]
            im_part = [((p - q).scale(-sp.I / 2)) for p, q in zip(phi, phi_c)]
            a_sym, b_sym = constants[ci], constants[cj]
            lam = blocks[_block_of(layout, ci)].value
            lr, li = split_complex(lam)
            v = P[:, ci]
            vr = sp.ImmutableMatrix([split_complex(e)[0] for e in v])
            vi = sp.ImmutableMatrix([split_complex(e)[1] for e in v])
            real_pairs.append(
                RealFormPair(
                    eigenvalue=lam,
                    re=lr,
                    im=li,
                    vector=sp.ImmutableMatrix(v),
                    vector_re=vr,
                    vector_im=vi,
                    complex_constants=(values.get(a_sym, a_sym), values.get(b_sym, b_sym)),
                    real_constants=(a_sym, b_sym),
                    real_part=Deferred(_real, re_part, t, shift),
                    imag_part=Deferred(_real, im_part, t, shift),
                )
            )
            if ivp:
                for i in range(n):
                    hom_terms[i] += [(values[a_sym], phi[i]), (values[b_sym], phis[cj][i])]
            else:
                for i in range(n):
                    hom_real[i] += [(a_sym, re_part[i]), (b_sym, im_part[i])]
        if ivp:
            hv = [ExpPoly.combination(terms) for terms in hom_terms]
            homogeneous = _grouped_each(hv, t, shift, real=True, numbers=numbers)
        else:
            # the real constants of the pairs, and the constants of the real eigenvalues
            homogeneous = sp.ImmutableMatrix([grouped(hom_real[i] + hom_terms[i], cs, t, real=True, numbers=numbers) for i in range(n)])
        particular = _grouped_each(xp, t, shift, real=True, numbers=numbers)
        steps.append(RealFormStep(t=t, pairs=tuple(real_pairs), homogeneous=homogeneous, particular=particular))
    else:
        if ivp:
            hv = [ExpPoly.combination((values[c], phi[i]) for c, phi in zip(constants, phis)) for i in range(n)]
            homogeneous = _grouped_each(hv, t, shift, real=do_real, numbers=numbers)
        else:
            homogeneous = sp.ImmutableMatrix([grouped(list(zip(constants, col)), cs, t, real=do_real, numbers=numbers) for col in zip(*phis)])
        particular = _grouped_each(xp, t, shift, real=do_real, numbers=numbers)
    if cs:
        # a general solution: the homogeneous part is grouped by constant and the
        # particular part holds none, so the two groupings are already disjoint
        x = sp.ImmutableMatrix([a + b for a, b in zip(homogeneous, particular)])
    elif shift == 0 and hv is not None:
        # an initial value problem: one grouping of the whole x(t) by exponential
        x = sp.ImmutableMatrix([grouped([(sp.Integer(1), h + p)], (), t, real=do_real, numbers=numbers) for h, p in zip(hv, xp)])
    else:
        x = sp.ImmutableMatrix([tidy(a + b, cs, t, numbers=numbers) for a, b in zip(homogeneous, particular)])
    return Recombined(
        x=x,
        homogeneous=homogeneous,
        particular=particular,
        constants=cs,
        steps=tuple(steps),
        real_form=do_real,
    )


def _grouped_each(
    polys: Sequence[ExpPoly], t: sp.Symbol, t0: sp.Expr, *, real: bool, numbers: frozenset[sp.Symbol] = frozenset()
) -> sp.ImmutableMatrix:
    """Each p(t) grouped by exponential (``grouped``, or tidy on the shifted form when t0 != 0)."""
    if t0 == 0:
        return sp.ImmutableMatrix([grouped([(sp.Integer(1), p)], (), t, real=real, numbers=numbers) for p in polys])
    shown = _real(polys, t, t0) if real else _mat(polys, t, t0)
    return shown.applyfunc(lambda e: tidy(e, (), t, numbers=numbers))


def grouped(
    pairs: Sequence[tuple[sp.Expr, ExpPoly]],
    constants: Sequence[sp.Symbol],
    t: sp.Symbol,
    *,
    real: bool,
    numbers: Iterable[sp.Symbol] = (),
) -> sp.Expr:
    """tidy(sum of c p(t)) for t0 = 0, built from the exponential polynomials.

    ``pairs`` holds (c, p) with c one of ``constants`` or a number.  The
    grouping is tidy's (by constant, then by exponential, each coefficient
    expanded, and factored term by term where parameters appear), but nothing
    is expanded as a whole and taken apart again.  Where a coefficient holds
    an exponential of its own (a number e^2 from the forcing), tidy reads the
    expression instead.  Symbols in ``numbers`` stand for real constants and
    count as numbers, not parameters.
    """
    by_const: dict[sp.Expr, dict[sp.Expr, list[sp.Expr]]] = {}
    numeric: list[tuple[sp.Expr, ExpPoly]] = []
    for c, p in pairs:
        if c not in constants:
            numeric.append((c, p))
            continue
        groups = by_const.setdefault(c, {})
        for rate, term in exponential_groups(p, t, real=real):
            groups.setdefault(rate, []).append(term)
    if numeric:
        rest = by_const.setdefault(sp.Integer(1), {})
        summed = numeric[0][1] if len(numeric) == 1 and numeric[0][0] == 1 else ExpPoly.combination(numeric)
        for rate, term in exponential_groups(summed, t, real=real):
            rest.setdefault(rate, []).append(term)
    terms = [term for groups in by_const.values() for ts in groups.values() for term in ts]
    if any(contains(term, sp.exp) for term in terms):
        expr = sp.Add(*[c * (p.real_form(t) if real else p.to_expr(t)) for c, p in pairs])
        return tidy(expr, constants, t, numbers=numbers)
    known = set(constants) | {t} | set(numbers)
    has_params = any(term.free_symbols - known for term in terms)
    out = []
    for c, groups in by_const.items():
        inner = []
        for rate, ts in groups.items():
            coeff = sp.Add(*ts)
            if coeff.has(sp.CRootOf):
                # expanded in the sparse ring; factor would build and factor root polynomials again
                coeff = _by_trig(coeff) if contains(coeff, sp.sin, sp.cos) else expanded(coeff)
            else:
                coeff = sp.expand(coeff)
                if has_params and coeff != 0:
                    coeff = _factor_by_trig(coeff)
            if coeff == 0:
                continue
            inner.append(coeff if rate == 0 else sp.exp(common_out(rate * t)) * coeff)
        out.append(c * sp.Add(*inner))
    return sp.Add(*out)


def tidy(e: sp.Expr, constants: Sequence[sp.Symbol], t: sp.Symbol, *, numbers: Iterable[sp.Symbol] = ()) -> sp.Expr:
    """Group a solution component by constant, then by exponential factor.

    c_1 e^{-t}(cos 2t - 2 sin 2t) + ... reads better than the expanded sum and
    is what a checker compares with a hand derivation.  Exponentials are held
    as placeholders while expanding: left alone, expand and collect rewrite
    e^{-t/2} as 1/sqrt(e^t) and pull e^{-k t} into denominators.  Symbols
    in ``numbers`` stand for real constants: a coefficient in them alone is
    expanded, not factored.
    """
    exps = sorted(atoms_of(e, sp.exp), key=sp.default_sort_key)
    hold = {x: sp.Dummy(f"E{i}") for i, x in enumerate(exps)}
    back = {v: sp.exp(common_out(k.args[0])) for k, v in hold.items()}
    e = _expanded_held(e, hold)
    placeholders = set(hold.values())
    has_params = bool(e.free_symbols - set(constants) - placeholders - {t} - set(numbers))
    groups: dict[tuple, dict[sp.Expr, list[sp.Expr]]] = {}
    order: list[tuple] = []
    for term in sp.Add.make_args(e):
        factors = sp.Mul.make_args(term)
        cs = tuple(f for f in factors if f in constants)
        ex = sp.Mul(*[f for f in factors if _is_placeholder(f, placeholders)])
        rest = sp.Mul(*[f for f in factors if f not in constants and not _is_placeholder(f, placeholders)])
        if cs not in groups:
            groups[cs] = {}
            order.append(cs)
        groups[cs].setdefault(ex, []).append(rest)
    out = []
    for cs in order:
        inner = []
        for ex, rests in groups[cs].items():
            coeff = sp.Add(*rests)
            if coeff.has(sp.CRootOf):  # factor would build and factor root polynomials again
                coeff = _by_trig(coeff)
            elif has_params:
                coeff = _factor_by_trig(coeff)
            inner.append(replace_atoms(ex, back) * coeff)
        out.append(sp.Mul(*cs) * sp.Add(*inner))
    # a placeholder can also sit inside a coefficient (an exponential in a denominator)
    return _trig_factored(replace_atoms(sp.Add(*out), back), t)


def _expanded_held(e: sp.Expr, hold: dict) -> sp.Expr:
    """sp.expand of ``e`` with the exponentials in ``hold`` replaced by their placeholders.

    Each indexed root stands in as a symbol of its own while expanding: a deep
    expand rebuilds and expands a root's polynomial at every visit (most of the
    steady-state step's time on a quintic), and the roots are atoms to it anyway.
    """
    roots = atoms_of(e, sp.CRootOf)
    stand = {r: sp.Dummy(f"R{i}", real=True) if r.is_real else sp.Dummy(f"R{i}") for i, r in enumerate(roots)}
    e = expanded(replace_atoms(e, {**hold, **stand}))
    return replace_atoms(e, {v: r for r, v in stand.items()})


def _trig_factored(e: sp.Expr, t: sp.Symbol) -> sp.Expr:
    """Each sin/cos argument in t with common factors out: the deep expand above wrote
    sin(w (t - 1)) as sin(w t - w), which no checker reads off a page."""
    rule = {}
    for a in atoms_of(e, sp.sin, sp.cos):
        u = a.args[0]
        if u.is_Add and t in u.free_symbols:
            v = _linear_factored(u, t) if contains(u, sp.CRootOf) else sp.factor_terms(u)
            if v is not None and v != u:
                rule[a] = a.func(v)
    return replace_atoms(e, rule)


def _linear_factored(u: sp.Expr, t: sp.Symbol) -> sp.Expr | None:
    """w t + b as w (t + b/w) when b/w is rational, without factor_terms (it would walk the
    polynomial of every indexed root in w); None otherwise."""
    timed = [a for a in sp.Add.make_args(u) if t in a.free_symbols]
    rest = sp.Add(*[a for a in sp.Add.make_args(u) if t not in a.free_symbols])
    if len(timed) != 1:
        return None
    w = timed[0] / t
    shift = rest / w
    if t in w.free_symbols or not shift.is_Rational:
        return None
    return w * (t + shift)


def restore_roots(e: sp.Expr, aux: dict, constants: Sequence[sp.Symbol], t: sp.Symbol) -> sp.Expr:
    """Put the square roots of a chosen regime back for their positive placeholders.

    The square of a placeholder is its radicand: c^2 - 4km = -w^2 lets
    c w/(4km - c^2) cancel to c/w before w is replaced by the root.  A
    Piecewise result (switched input) is restored piece by piece.
    """
    if isinstance(e, sp.Piecewise):
        return sp.Piecewise(*[(restore_roots(v, aux, constants, t), cond.xreplace(aux)) for v, cond in e.args])
    for w, root in aux.items():
        radicand = sp.expand(root**2)
        e = e.subs(radicand, w**2).subs(-radicand, -(w**2))
    e = tidy(e, constants, t).xreplace(aux)
    # an interval's constants can leave w^2 in an expanded denominator: grouped
    # again with the root in place, (4km - c^2)/(k (c^2 - 4km)) cancels to -1/k
    return tidy(e, constants, t)


def _factor_by_trig(coeff: sp.Expr) -> sp.Expr:
    """Factor the coefficient of each cos/sin separately: A cos wt + B sin wt, not one fraction."""
    trig = sorted(atoms_of(coeff, sp.sin, sp.cos), key=sp.default_sort_key)
    if not trig:
        return sp.factor(coeff)
    parts = sp.collect(sp.expand(coeff), trig, evaluate=False)
    return sp.Add(*[sp.factor(cf) * tr for tr, cf in parts.items()])


def _by_trig(coeff: sp.Expr) -> sp.Expr:
    """a cos wt + b sin wt, each of a and b one expanded polynomial in the indexed roots.

    Nothing is factored: a factor of a polynomial in sigma and omega is not
    shorter, and the numbers are read term by term against the legend.
    """
    trig = sorted(atoms_of(coeff, sp.sin, sp.cos), key=sp.default_sort_key)
    if not trig:
        return coeff
    fast = collected(coeff, trig)  # in a sparse ring: sympy's expand rereads every root's polynomial
    if fast is not None:
        return sp.Add(*[cf * tr for tr, cf in fast])
    parts = sp.collect(sp.expand(coeff), trig, evaluate=False)
    return sp.Add(*[sp.expand(cf) * tr for tr, cf in parts.items()])


def _combination(row: sp.MatrixBase, x0: sp.MatrixBase) -> sp.Expr:
    """sum_j row_j x0_j, expanded; with indexed roots and numbers only, reduced in their ring."""
    if not x0.free_symbols and any(e.has(sp.CRootOf) for e in row):
        fast = reduce_number(sp.Add(*[sp.Mul(a, b, evaluate=False) for a, b in zip(row, x0) if a != 0 and b != 0]))
        if fast is not None:
            return fast
    return sp.expand(sum((a * b for a, b in zip(row, x0)), sp.Integer(0)))


def _is_placeholder(f: sp.Expr, placeholders: set) -> bool:
    return f in placeholders or (f.is_Pow and f.base in placeholders)


def _block_of(layout: list[list[list[int]]], col: int) -> int:
    for bi, chains in enumerate(layout):
        for ch in chains:
            if col in ch:
                return bi
    raise IndexError(col)
