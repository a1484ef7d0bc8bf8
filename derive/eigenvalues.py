"""The eigenvalues: the characteristic polynomial, its factors and their roots.

det(A - lam I) is computed over the coefficient field K and factored there;
each irreducible factor's roots are written in the form the size rule picks
(rational, radical within ``Settings.radical_ops_limit`` operations, or an
indexed root of the factor), with a decimal and a kind (real, complex, or
unknown while the sign of a discriminant in the parameters is open).  The
conditions in the parameters that the derivation relies on are read here too.
``derive.spectral`` builds the eigenvectors and P, J, P^-1 on top of these.
"""

from __future__ import annotations

from typing import Sequence

import sympy as sp
from sympy.polys.constructor import construct_domain
from sympy.polys.matrices import DomainMatrix

from .relations import regime_sign
from .errors import DeriveError, UnsupportedError
from .model import Condition, Relation

__all__ = [
    "COMPLEX_DATA_NOTICE",
    "domain_matrix",
    "determinant_shown",
    "factor_charpoly",
    "collect_factors",
    "roots_of",
    "with_root_values",
    "numeric_value",
    "decimal_text",
    "root_kind",
    "denominator",
    "parameter_conditions",
]


#: why an answer for complex data stays in complex form (the sheet lists it with the notices)
COMPLEX_DATA_NOTICE = (
    "A, f(t) or the initial values have complex (non-real) entries, so the eigenvalues, eigenvectors "
    "and the result are in complex form: a real form with sines and cosines exists only for real data"
)


def domain_matrix(M: sp.MatrixBase, dom) -> DomainMatrix:
    """M over the domain ``dom`` (its entries are sympy objects already: nothing is parsed)."""
    rows = [[dom.from_sympy(e) for e in M.row(i)] for i in range(M.rows)]
    return DomainMatrix(rows, M.shape, dom)


# ---------------------------------------------------------------------------
# characteristic polynomial and its factors


def factor_charpoly(A: sp.ImmutableMatrix, dom, lam: sp.Symbol):
    n = A.rows
    coeffs = domain_matrix(A, dom).charpoly()  # det(lam I - A), monic
    if dom.is_QQ or dom.is_ZZ:
        # rational coefficients: det(A - lam I) written term by term is already expanded,
        # and the integer polynomial is factored directly, no expression round trip
        sign = -1 if n % 2 else 1
        expanded = sp.Add(*[dom.to_sympy(sign * c) * lam ** (n - i) for i, c in enumerate(coeffs)])
        den, prim = sp.Poly(list(coeffs), lam, domain=dom).clear_denoms(convert=True)
        lc, fl = prim.factor_list()
        return expanded, *collect_factors(n, lam, sp.Integer(lc) / den, [(f.as_expr(), m) for f, m in fl])
    mono = sp.Add(*[dom.to_sympy(c) * lam ** (n - i) for i, c in enumerate(coeffs)])
    expanded = sp.expand((-1) ** n * mono)  # det(A - lam I), as on the sheet
    num, den = sp.fraction(sp.together(mono))
    gens = [lam] + sorted((num.free_symbols | den.free_symbols) - {lam}, key=sp.default_sort_key)
    if dom.is_Algebraic:
        lc, fl = sp.factor_list(num, lam, extension=list(dom.orig_ext))
    else:
        lc, fl = sp.factor_list(num, *gens)
    return expanded, *collect_factors(n, lam, lc / den, fl)


def collect_factors(n: int, lam: sp.Symbol, const: sp.Expr, fl) -> tuple[sp.Expr, list]:
    """(det(A - lam I) as a product, the factors in lam with multiplicities)."""
    factors = []
    for fexpr, mult in fl:
        if not fexpr.has(lam):
            const *= fexpr**mult
            continue
        factors.append((fexpr, int(mult)))
    # det(A - lam I) = (-1)^n * const * prod(factor^mult)
    sign_const = sp.factor((-1) ** n * const)
    factored = sp.Mul(sign_const, *[f**m for f, m in factors], evaluate=False) if sign_const != 1 else sp.Mul(*[f**m for f, m in factors])
    return factored, factors


def roots_of(
    q: sp.Poly,
    lam: sp.Symbol,
    has_params: bool,
    regimes: Sequence[tuple[sp.Expr, int]] = (),
    aux: list | None = None,
    *,
    ops_limit: int = 16,
    conditions: list[Condition] | None = None,
) -> tuple[list[sp.Expr], str, str]:
    """The roots of an irreducible factor, in the form the size rule picks.

    Conditions the form relies on (a sign no assumption decides) are appended
    to ``conditions``.
    """
    d = q.degree()
    if d == 1:
        c1, c0 = q.all_coeffs()
        return [sp.cancel(-c0 / c1)], ("exact" if has_params else "rational"), ""
    if d == 2:
        a, b, c = q.all_coeffs()
        disc = sp.factor(b**2 - 4 * a * c)
        sign = regime_sign(disc, regimes) if has_params and aux is not None else 0
        if sign and aux is not None:
            # the regime fixes the sign: a positive placeholder stands for the square
            # root while the algebra runs, so the real form can be taken; it is
            # replaced by the root itself in the result
            w = sp.Dummy("w", positive=True)
            aux.append((w, sp.sqrt(sp.factor(-disc) if sign < 0 else disc)))
            s_ = sp.I * w if sign < 0 else w
            rule = (
                "regime chosen: discriminant "
                + sp.sstr(disc)
                + (" < 0, a complex-conjugate pair" if sign < 0 else " > 0, two real eigenvalues")
            )
            return [(-b + s_) / (2 * a), (-b - s_) / (2 * a)], "radical", rule
        if disc.is_negative:
            s = sp.I * sp.sqrt(sp.factor(-disc))
        else:
            s = sp.sqrt(disc)
        r1 = (-b + s) / (2 * a)
        r2 = (-b - s) / (2 * a)
        return [sp.expand(r1) if not has_params else r1, sp.expand(r2) if not has_params else r2], "radical", ""
    if has_params and d == 4 and q.nth(3) == 0 and q.nth(1) == 0:
        return _biquadratic_roots(q, lam, regimes, aux, conditions)
    if has_params:
        raise UnsupportedError(
            f"the characteristic polynomial has an irreducible factor of degree {d} with "
            f"symbolic coefficients ({q.as_expr()}); give the parameters numeric values or "
            "choose a parameter relation that splits it",
        )
    if any(cf.has(sp.I) for cf in q.all_coeffs()):
        return _gaussian_roots(q, lam, ops_limit)
    if d >= 5:
        roots = [sp.CRootOf(q.as_expr(), lam, i) for i in range(d)]
        return roots, "indexed root", f"irreducible factor of degree {d} (5 or more): no general radical form"
    if d == 3:
        a, b, c, e = q.all_coeffs()
        disc = b**2 * c**2 - 4 * a * c**3 - 4 * b**3 * e - 27 * a**2 * e**2 + 18 * a * b * c * e
        if disc > 0:
            roots = [sp.CRootOf(q.as_expr(), lam, i) for i in range(d)]
            return roots, "indexed root", (
                "three real roots (casus irreducibilis): radicals would need complex cube roots"
            )
    rad, rule = _radical_roots(q, ops_limit)
    if rad is not None:
        return rad, "radical", rule
    roots = [sp.CRootOf(q.as_expr(), lam, i) for i in range(d)]
    return roots, "indexed root", rule


def _radical_roots(q: sp.Poly, ops_limit: int) -> tuple[list[sp.Expr] | None, str]:
    """The roots of a cubic or quartic in radicals when they are within the size limit, else None; the rule applied."""
    rad = sp.roots(q, cubics=True, quartics=True, multiple=True)
    if len(rad) != q.degree():
        return None, "no radical form found"
    ops = max(sp.count_ops(r) for r in rad)
    if ops <= ops_limit:
        return [sp.expand(r) for r in rad], f"radical form within the size limit ({ops} <= {ops_limit} operations)"
    return None, f"radical form needs {ops} operations, above the limit of {ops_limit}"


def _biquadratic_roots(
    q: sp.Poly, lam: sp.Symbol, regimes: Sequence[tuple[sp.Expr, int]], aux: list | None, conditions: list[Condition] | None
) -> tuple[list[sp.Expr], str, str]:
    """Roots of a q(lambda) = a lambda^4 + b lambda^2 + c in the parameters, through mu = lambda^2.

    mu_k = (-b +- sqrt(b^2 - 4ac))/(2a), lambda = +-sqrt(mu_k).  When the
    assumptions make b/a and c/a positive (an undamped chain with positive
    masses and stiffnesses), both mu_k are negative once the discriminant is
    positive, and lambda = +-i omega_k with omega_k = sqrt(-mu_k): each omega_k
    is a positive placeholder while the algebra runs (as for a regime), so the
    real form is taken, and the root is put back in the result.  A
    discriminant whose sign the assumptions leave open is stated as a condition.
    """
    a, b, c = q.nth(4), q.nth(2), q.nth(0)
    disc = sp.factor(b**2 - 4 * a * c)
    sign = regime_sign(disc, regimes) or (1 if disc.is_positive else -1 if disc.is_negative else 0)
    mus = [(-b + sp.sqrt(disc)) / (2 * a), (-b - sp.sqrt(disc)) / (2 * a)]
    shown = "mu^2" if a == 1 else f"({sp.sstr(a)}) mu^2"
    rule = f"characteristic polynomial in lambda^2 alone: mu = lambda^2 solves {shown} + ({sp.sstr(b)}) mu + ({sp.sstr(c)}) = 0"
    if aux is None or sign < 0 or not (sp.factor(b / a).is_positive and sp.factor(c / a).is_positive):
        return [r for mu in mus for r in (sp.sqrt(mu), -sp.sqrt(mu))], "radical", rule + ", lambda = +-sqrt(mu)"
    if sign == 0 and conditions is not None:
        conditions.append(
            Condition(expr=sp.expand(disc), relation=Relation.POSITIVE, reason="the squared frequencies mu = lambda^2 are real (discriminant of the quadratic in mu)")
        )
    roots = []
    for mu in mus:
        w = sp.Dummy("w", positive=True)
        aux.append((w, sp.sqrt(sp.factor(-mu))))
        roots += [sp.I * w, -sp.I * w]
    return roots, "radical", rule + "; both mu < 0, so lambda = +-i omega with omega = sqrt(-mu)"


def _gaussian_roots(q: sp.Poly, lam: sp.Symbol, ops_limit: int) -> tuple[list[sp.Expr], str, str]:
    """Roots of an irreducible factor of degree >= 3 with non-real coefficients (in Q(i)).

    Radicals within the size limit; otherwise indexed roots of the norm
    q * conj(q), a polynomial over Q whose roots are those of q and of its
    conjugate: the d of them where q vanishes are taken (decided at 30
    digits, the two sets being disjoint for an irreducible q with non-real
    coefficients).
    """
    d = q.degree()
    rule = f"irreducible factor of degree {d} over Q(i): no general radical form" if d >= 5 else ""
    if d <= 4:
        rad, rule = _radical_roots(q, ops_limit)
        if rad is not None:
            return rad, "radical", rule
    expr = q.as_expr()
    norm = sp.Poly(sp.expand(expr * expr.xreplace({sp.I: -sp.I})), lam)
    if any(cf.has(sp.I) for cf in norm.all_coeffs()) or not norm.is_irreducible:  # pragma: no cover - theory says no
        raise UnsupportedError(f"the factor {expr} over Q(i) has no indexed form here")
    candidates = [sp.CRootOf(norm.as_expr(), lam, i) for i in range(norm.degree())]
    size = [abs(complex(q.eval(sp.N(r, 30)))) for r in candidates]
    order = sorted(range(len(candidates)), key=lambda i: size[i])
    return [candidates[i] for i in sorted(order[:d])], "indexed root", rule + "; indexed roots of q times its conjugate, over Q"


def with_root_values(e):
    """Indexed roots replaced by their cached decimals: sympy refines a CRootOf
    afresh on every evalf, which dominated the time of non-radical cases."""
    from .exact import root_value

    roots = e.atoms(sp.CRootOf)
    return e.xreplace({r: root_value(r) for r in roots}) if roots else e


def numeric_value(value: sp.Expr, subs: dict) -> complex | None:
    if value.is_Rational:
        return complex(int(value.p) / int(value.q))
    try:
        v = complex(sp.N(with_root_values(value).xreplace(subs), 30))
    except (TypeError, ValueError):
        return None
    return v


def decimal_text(value: sp.Expr, v: complex | None) -> str:
    """The eigenvalue's decimal for the sheet, from its value ``v`` (``numeric_value``)."""
    if value.is_Rational:
        return str(value) if value.q == 1 else f"{float(value):.6g}"
    if v is None:
        return ""
    if abs(v.imag) < 1e-14 * max(1.0, abs(v.real)):
        return f"{v.real:.6g}"
    sign = "+" if v.imag >= 0 else "-"
    return f"{v.real:.6g} {sign} {abs(v.imag):.6g}i"


def root_kind(value: sp.Expr) -> str:
    """"real", "complex", or "unknown" when the sign of a discriminant in the parameters decides."""
    r = value.is_real
    if r is True:
        return "real"
    if r is False:
        return "complex"
    return "unknown"


def denominator(e: sp.Expr, K) -> sp.Expr:
    """The denominator of e in lowest terms: read in the field K of rational functions
    where e lies there (cheap), else by cancelling the expression."""
    if K is not None and K.is_FractionField:
        try:
            return K.from_sympy(e).denom.as_expr()
        except (sp.CoercionFailed, sp.polys.polyerrors.PolynomialError, ValueError, TypeError):
            pass
    radicals = {p for p in e.atoms(sp.Pow) if p.exp.is_Rational and not p.exp.is_Integer}
    if radicals:
        # each radical a generator of a field of rational functions: cancelling the
        # expression with nested square roots in it took minutes on a two-mass chain
        gens = {p: sp.Dummy("g") for p in radicals}
        try:
            dom, (elem,) = construct_domain([e.xreplace(gens)], field=True)
        except (sp.CoercionFailed, sp.polys.polyerrors.PolynomialError, ValueError, TypeError):
            dom = None
        if dom is not None and dom.is_FractionField:
            return elem.denom.as_expr().xreplace({g: p for p, g in gens.items()})
    return sp.fraction(sp.cancel(sp.together(e)))[1]


def parameter_conditions(A, factors, P, P_inv, lam, K=None, *, generic: Sequence[DomainMatrix] | None = None) -> tuple[Condition, ...]:
    """Conditions in the parameters on which the derivation relies.

    ``generic`` are the blocks' V and W over K or K[theta]/(q): their
    denominators, read off the coefficients in K, are those of P and P^-1
    (putting a root in for theta adds none), without cancelling expressions
    that hold the roots.
    """
    out: list[Condition] = []
    seen: set = set()

    def add(expr: sp.Expr, reason: str) -> None:
        expr = sp.factor(expr)
        for f in sp.Mul.make_args(expr):
            if f.is_Pow and f.exp.is_Number:
                f = f.base
            if not f.free_symbols or f.is_positive or f.is_negative or f.is_nonzero:
                continue
            f = sp.expand(f)
            if f.could_extract_minus_sign():
                f = -f
            if f in seen:
                continue
            seen.add(f)
            out.append(Condition(expr=f, relation=Relation.NONZERO, reason=reason))

    fs = [f for f, _ in factors]
    if sum(sp.degree(f, lam) for f in fs) >= 2:
        # disc(prod f_i) = prod disc(f_i) * prod_{i<j} res(f_i, f_j)^2 up to a constant
        # factor: each piece is small to factor, the expanded discriminant is not
        pieces = [sp.discriminant(f, lam) for f in fs if sp.degree(f, lam) >= 2]
        pieces += [sp.resultant(fs[i], fs[j], lam) ** 2 for i in range(len(fs)) for j in range(i + 1, len(fs))]
        add(sp.Mul(*pieces), "the eigenvalues are distinct (discriminant of the characteristic polynomial)")
    if generic is not None and K is not None and K.is_FractionField:
        for den in dict.fromkeys(_field_denominators(generic, K)):
            if den.free_symbols:
                add(den, "a denominator in P or P^-1 is nonzero")
        return tuple(out)
    for e in dict.fromkeys(list(P) + list(P_inv)):
        if not e.free_symbols:
            continue
        den = denominator(e, K)
        if den.free_symbols:
            add(den, "a denominator in P or P^-1 is nonzero")
    return tuple(out)


def _field_denominators(matrices: Sequence[DomainMatrix], K) -> list[sp.Expr]:
    """The denominators (in K) of the coefficients of every entry: elements of K, or polynomials in theta over K."""
    out: list[sp.Expr] = []
    for M in matrices:
        for row in M.to_dense().rep.to_ddm():
            for x in row:
                coeffs = x.rep.to_list() if M.domain != K else [x]
                out.extend(c.denom.as_expr() for c in coeffs if c)
    return out


def determinant_shown(P: sp.ImmutableMatrix, exact: list[DomainMatrix] | None) -> sp.Expr:
    """det P exactly where that is cheap (a small field, radicals with n <= 4), else its decimal.

    ``exact`` is ``small_field(P, ...)`` or None.  Only invertibility is at
    stake here; P^-1 itself is exact either way.
    """
    if exact is not None:
        return exact[0].domain.to_sympy(exact[0].det())
    if P.free_symbols:
        # parameters: no decimal exists, so det P is found exactly with each square
        # root a generator (reduced by its square afterwards)
        return _symbolic_determinant(P)
    if P.rows <= 4 and not P.has(sp.CRootOf):
        try:
            return sp.radsimp(sp.expand(P.det(method="berkowitz")))
        except DeriveError:
            raise
        except Exception:  # pragma: no cover - sympy internals
            pass
    import mpmath

    with mpmath.workdps(30):
        P = with_root_values(P)
        M = mpmath.matrix([[mpmath.mpc(complex(sp.N(e, 30))) if not e.is_Rational else mpmath.mpf(e.p) / e.q for e in P.row(i)] for i in range(P.rows)])
        d = mpmath.det(M)
    d = complex(d)
    # a part below the working precision's noise is rounding, not a digit of det P
    noise = 1e-20 * max(1.0, abs(d))
    re, im = (0.0 if abs(d.real) <= noise else d.real), (0.0 if abs(d.imag) <= noise else d.imag)
    return sp.Float(re, 12) + sp.I * sp.Float(im, 12) if im else sp.Float(re, 12)


def _symbolic_determinant(P: sp.ImmutableMatrix) -> sp.Expr:
    """det P for entries in K(params)(sqrt(D_1), ..., sqrt(D_m)).

    Each square root becomes a symbol g_i, the determinant is taken over the
    rational functions in the parameters and the g_i (fraction-free, cheap),
    and numerator and denominator are reduced by g_i^2 = D_i.  Other radicals
    or indexed roots (not met with parameters: the size rule refuses them) go
    to sympy's own determinant.
    """
    roots = {p for p in P.atoms(sp.Pow) if p.exp.is_Rational and not p.exp.is_Integer}
    if P.has(sp.CRootOf) or any(p.exp.q != 2 for p in roots):
        return sp.factor(P.det(method="berkowitz"))
    bases = {p.base for p in roots}
    gens = {base: sp.Dummy("g") for base in bases}
    swap = {p: gens[p.base] ** int(p.exp.p) for p in roots}
    Q = P.xreplace(swap)
    dom, _ = construct_domain(list(Q), field=True)
    det = dom.to_sympy(domain_matrix(Q, dom).det())
    num, den = sp.fraction(sp.together(det))
    for base, g in gens.items():
        num = sp.rem(sp.expand(num), g**2 - base, g)
        den = sp.rem(sp.expand(den), g**2 - base, g)
    back = {g: sp.sqrt(base) for base, g in gens.items()}
    return sp.factor(num.xreplace(back)) / sp.factor(den.xreplace(back))
