"""Exponential polynomials: sums of c * t^k * exp(gamma * t).

Every forcing of the classes engineers write down most (polynomials,
exponentials, sines and cosines and their products, hyperbolic functions) is
an exponential polynomial once sines and cosines are written as complex
exponentials.  The class is closed under the integral the integrating factor
needs, so the particular solution of each decoupled equation comes from a
formula instead of a general-purpose ``integrate`` call:

    integral of s^k e^{beta s} ds = e^{beta t} sum_j (-1)^j k!/(k-j)! t^(k-j) / beta^(j+1)
                                    (beta != 0)
                                  = t^(k+1) / (k+1)                (beta = 0, resonance)

The representation is a mapping ``(k, gamma) -> coefficient`` kept in a
frozen, hashable form; coefficients and exponents are exact sympy numbers or
expressions in the parameters (and in the free constants of a general
solution).
"""

from __future__ import annotations

import functools

from dataclasses import dataclass, field
from typing import Callable, Iterable, Mapping, Sequence

import sympy as sp
from sympy.polys.fields import sfield
from sympy.polys.polyerrors import BasePolynomialError

from .realroots import as_real_parts, conjugate_roots, pair_parts
from .rootring import atoms_of, plainly_nonzero, real_imag, reduce_number

__all__ = [
    "ExpPoly",
    "to_expoly",
    "integrate_against",
    "reads_negative",
    "ZeroTest",
]

ZeroTest = Callable[[sp.Expr], bool]


@functools.lru_cache(maxsize=4096)
def _exponent_key(gamma: sp.Expr) -> tuple:
    """A sort key for an exponent.  sympy's key of a sum holding an indexed
    root evaluates the root, refining its interval every time; a named stand-in
    per root gives a key as deterministic at no cost."""
    roots = atoms_of(gamma, sp.CRootOf)
    if roots:
        gamma = gamma.xreplace({r: sp.Symbol(f"root[{r.poly.as_expr()}, {r.index}]") for r in roots})
    return sp.default_sort_key(gamma)

_TRIG = (sp.sin, sp.cos, sp.tan, sp.sinh, sp.cosh, sp.tanh)


@dataclass(frozen=True)
class ExpPoly:
    """sum over (k, gamma) of coeff * t^k * exp(gamma t), for a fixed variable.

    ``terms`` is a tuple of ``((k, gamma), coeff)`` with distinct keys and no
    zero coefficients.  Instances are built with ``ExpPoly.from_dict``.
    """

    terms: tuple[tuple[tuple[int, sp.Expr], sp.Expr], ...] = ()

    # -- construction -------------------------------------------------
    @staticmethod
    def from_dict(d: Mapping[tuple[int, sp.Expr], sp.Expr]) -> "ExpPoly":
        items = []
        for key, c in d.items():
            c = norm_coeff(c)
            if c != 0:
                items.append((key, c))
        items.sort(key=lambda kv: (_exponent_key(kv[0][1]), kv[0][0]))
        return ExpPoly(tuple(items))

    @staticmethod
    def constant(c: sp.Expr) -> "ExpPoly":
        return ExpPoly.from_dict({(0, sp.Integer(0)): sp.sympify(c, strict=True)})

    @staticmethod
    def term(c: sp.Expr, k: int, gamma: sp.Expr) -> "ExpPoly":
        return ExpPoly.from_dict({(k, sp.sympify(gamma, strict=True)): sp.sympify(c, strict=True)})

    def as_dict(self) -> dict[tuple[int, sp.Expr], sp.Expr]:
        return dict(self.terms)

    # -- arithmetic ---------------------------------------------------
    def __add__(self, other: "ExpPoly") -> "ExpPoly":
        d = self.as_dict()
        for key, c in other.terms:
            d[key] = d.get(key, sp.Integer(0)) + c
        return ExpPoly.from_dict(d)

    @staticmethod
    def combination(pairs: Iterable[tuple[sp.Expr, "ExpPoly"]]) -> "ExpPoly":
        """sum c_j p_j, each coefficient normalised once at the end rather than at every addition."""
        d: dict[tuple[int, sp.Expr], sp.Expr] = {}
        for c, p in pairs:
            if c == 0:
                continue
            for key, v in p.terms:
                d[key] = d.get(key, sp.Integer(0)) + c * v
        return ExpPoly.from_dict(d)

    def scale(self, c: sp.Expr) -> "ExpPoly":
        if c == 0:
            return ExpPoly()
        return ExpPoly.from_dict({key: c * v for key, v in self.terms})

    def __neg__(self) -> "ExpPoly":
        return self.scale(sp.Integer(-1))

    def __sub__(self, other: "ExpPoly") -> "ExpPoly":
        return self + (-other)

    @property
    def is_zero(self) -> bool:
        return not self.terms

    def exponents(self) -> tuple[sp.Expr, ...]:
        seen: list[sp.Expr] = []
        for (k, g), _ in self.terms:
            if g not in seen:
                seen.append(g)
        return tuple(seen)

    def coeff_of(self, sym: sp.Symbol) -> "ExpPoly":
        """The part linear in ``sym`` (coefficients are linear in the constants)."""
        return ExpPoly.from_dict({key: sp.expand(c).coeff(sym) for key, c in self.terms})

    def split_linear(self, syms: Sequence[sp.Symbol]) -> tuple[list["ExpPoly"], "ExpPoly"]:
        """(coeff_of(s) for each s, drop(syms)) in one expansion of each coefficient.

        For coefficients linear in ``syms`` (the constants of a solution); a
        coefficient that is not falls back to coeff_of and drop.
        """
        where = {s: i for i, s in enumerate(syms)}
        parts: list[dict] = [{} for _ in syms]
        rest: dict = {}
        for key, c in self.terms:
            for term in sp.Add.make_args(sp.expand(c)):
                hit = [s for s in term.free_symbols if s in where]
                if not hit:
                    rest[key] = rest.get(key, sp.Integer(0)) + term
                    continue
                rate = term.coeff(hit[0]) if len(hit) == 1 else None
                if rate is None or rate == 0 or rate.has(hit[0]):
                    return [self.coeff_of(s) for s in syms], self.drop(syms)
                d = parts[where[hit[0]]]
                d[key] = d.get(key, sp.Integer(0)) + rate
        return [ExpPoly.from_dict(d) for d in parts], ExpPoly.from_dict(rest)

    def drop(self, syms: Iterable[sp.Symbol]) -> "ExpPoly":
        """Set the given symbols to zero (the constant-free part)."""
        sub = {s: 0 for s in syms}
        return ExpPoly.from_dict({key: c.subs(sub) for key, c in self.terms})

    # -- evaluation ---------------------------------------------------
    def at(self, t_value: sp.Expr) -> sp.Expr:
        return sp.expand(
            sp.Add(*[c * t_value**k * sp.exp(g * t_value) for (k, g), c in self.terms])
        )

    def to_expr(self, t: sp.Symbol, *, t0: sp.Expr = sp.Integer(0)) -> sp.Expr:
        """The expression, exponentials written as exp(gamma (t - t0)) when t0 != 0."""
        out = []
        for (k, g), c in self.terms:
            if g == 0:
                out.append(c * t**k)
            elif t0 == 0:
                out.append(c * t**k * sp.exp(g * t))
            else:
                out.append(sp.expand(c * sp.exp(g * t0)) * t**k * sp.exp(g * (t - t0)))
        return sp.Add(*out)

    def real_form(self, t: sp.Symbol, *, t0: sp.Expr = sp.Integer(0)) -> sp.Expr:
        """The real part, as e^{a t} (cos b t, sin b t) terms.

        Valid when the function is real: conjugate exponents then carry
        conjugate coefficients, so the sum equals its real part and each
        conjugate pair gives 2 Re(c t^k e^{(a + i b) t}).
        """
        split = split_complex
        grouped: dict[tuple[int, sp.Expr, sp.Expr], list[sp.Expr]] = {}
        order: list[tuple[int, sp.Expr, sp.Expr]] = []
        for (k, g), c in self.terms:
            a, b = split(g)
            if b != 0 and reads_negative(b):
                continue  # its conjugate partner carries the pair
            key = (k, a, b)
            if key not in grouped:
                grouped[key] = []
                order.append(key)
            grouped[key].append(c)
        out = []
        for key in order:
            k, a, b = key
            c = sp.Add(*grouped[key])
            cr, ci = split(c)
            tk = t**k
            shift = t - t0
            growth = sp.exp(a * shift) if a != 0 else sp.Integer(1)
            if b == 0:
                out.append(_shifted(cr, a, t0) * tk * growth)
                continue
            # c e^{(a+ib) t} + conj = 2 e^{a t} (Re c cos bt - Im c sin bt), with
            # the phase e^{(a+ib) t0} folded into c when t0 != 0.
            if t0 != 0:
                cs = sp.expand(c * sp.exp((a + sp.I * b) * t0))
                cr, ci = split(cs)
            out.append(
                2 * tk * growth * (cr * sp.cos(b * shift) - ci * sp.sin(b * shift))
            )
        return sp.Add(*out)


def exponential_groups(p: "ExpPoly", t: sp.Symbol, *, real: bool) -> list[tuple[sp.Expr, sp.Expr]]:
    """(rate, term) pairs with p(t) = sum of term * e^{rate t}, for t0 = 0.

    In complex form the rate is each gamma and the term c t^k; in real form
    (``real_form``) the rate is Re gamma and the term t^k times the real
    combination of cos and sin.  A rate may repeat: the caller groups.
    """
    if not real:
        return [(g, c * t**k) for (k, g), c in p.terms]
    grouped: dict[tuple[int, sp.Expr, sp.Expr], list[sp.Expr]] = {}
    for (k, g), c in p.terms:
        a, b = split_complex(g)
        if b != 0 and reads_negative(b):
            continue  # its conjugate partner carries the pair
        grouped.setdefault((k, a, b), []).append(c)
    out = []
    for (k, a, b), cs in grouped.items():
        cr, ci = split_complex(sp.Add(*cs))
        if b == 0:
            out.append((a, cr * t**k))
        else:
            out.append((a, 2 * t**k * (cr * sp.cos(b * t) - ci * sp.sin(b * t))))
    return out


def _shifted(c: sp.Expr, a: sp.Expr, t0: sp.Expr) -> sp.Expr:
    if t0 == 0 or a == 0:
        return c
    return sp.expand(c * sp.exp(a * t0))


def reads_negative(b: sp.Expr) -> bool:
    """True when b is negative, or for a sign the assumptions leave open, when -b sorts first."""
    if b.is_negative:
        return True
    if b.is_positive:
        return False
    # Parameters of unknown sign: order by the printed form, consistently.
    return sp.default_sort_key(b) > sp.default_sort_key(-b)


def split_complex(z: sp.Expr) -> tuple[sp.Expr, sp.Expr]:
    """Exact real and imaginary parts of an exact number or real-parameter expression.

    A complex indexed root is written sigma + i omega first (``realroots``), so
    the parts are polynomials in named real algebraic numbers.
    """
    if z.has(sp.CRootOf):
        fast = real_imag(z, _root_parts)
        if fast is not None:
            return fast
    z = sp.expand(z)
    if z.has(sp.CRootOf):
        z = sp.expand(as_real_parts(z))
        if all(r.is_real for r in atoms_of(z, sp.CRootOf)):  # else sympy's re() and im() below
            im = z.coeff(sp.I)
            return sp.expand(z - sp.I * im), sp.expand(im)
    if z.is_real:
        return z, sp.Integer(0)
    re, im = z.as_real_imag()
    return sp.expand(re), sp.expand(im)


def _root_parts(r: sp.Expr) -> tuple[sp.Expr, sp.Expr, int] | None:
    """(sigma, omega, +-1) with r = sigma +- i omega for a complex indexed root; None for a real one."""
    pp = pair_parts(r) if isinstance(r, sp.CRootOf) and r.is_real is False else None
    if pp is None:
        if isinstance(r, sp.CRootOf) and r.is_real is False:
            raise LookupError("a complex root without real parts")  # pragma: no cover - the general route decides
        return None
    return pp.sigma, pp.omega, 1 if r == pp.upper else -1


def norm_coeff(c: sp.Expr) -> sp.Expr:
    """A canonical form for one coefficient, so equal coefficients compare equal.

    Numbers (radicals, i, indexed roots) are expanded, with radicals cleared
    from denominators; expressions in parameters are put over one denominator
    and factored, which keeps 1/((k1 - k2)(k1 - k3)) readable instead of
    expanding it.
    """
    c = sp.sympify(c, strict=True)
    if c.is_Rational or c == 0:
        return c
    if not c.free_symbols:
        if c.has(sp.CRootOf):
            fast = reduce_number(c)  # read once into Q[i, roots]/(relations), no expression algebra
            if fast is not None:
                return fast
            return symmetric_reduce(reduce_roots(sp.expand(c)))
        e = sp.expand(c)
        if any(p.exp.is_negative and not p.base.is_Rational for p in e.atoms(sp.Pow)):
            e = sp.expand(sp.radsimp(e))
        return e
    if any(p.exp.is_negative and p.base.free_symbols for p in c.atoms(sp.Pow)):
        # factor puts the sum over one denominator and cancels by itself;
        # expanding first only made it work on the bigger numerator
        return sp.factor(c)
    return sp.expand(c)


def reduce_roots(e: sp.Expr) -> sp.Expr:
    """Reduce powers of an indexed root r of q modulo q(r) = 0 (degree < deg q)."""
    roots = sorted(atoms_of(e, sp.CRootOf), key=sp.default_sort_key)
    fast = _reduce_rational(e, roots) if roots else None
    if fast is not None:
        return fast
    for r in roots:
        z = sp.Dummy("z")
        ez = e.xreplace({r: z})
        num, den = sp.fraction(sp.together(ez))
        q = sp.Poly(r.poly.as_expr().subs(r.poly.gen, z), z)
        pn, pd = num.as_poly(z), den.as_poly(z)
        if pn is None or pd is None:
            continue
        if pd.degree() > 0:
            # invert the denominator in Q[z]/(q): q is irreducible, so it is a unit
            inv = sp.invert(pd.as_expr(), q.as_expr(), z)
            pn = sp.Poly(sp.expand(pn.as_expr() * inv), z)
            pd = sp.Poly(1, z)
        rem = pn.rem(q)
        e = sp.expand(rem.as_expr().subs(z, r) / pd.as_expr())
    return e


def _reduce_rational(e: sp.Expr, roots: list) -> sp.Expr | None:
    """reduce_roots for rational coefficients, all roots at once in Q[z_1..z_m].

    The minimal polynomials q_i(z_i) are in distinct variables, so they are a
    Groebner basis and one multivariate remainder is the normal form.  A
    denominator in one root is inverted in Q[z]/(q).  None when the
    coefficients are not rational or the denominator mixes roots (the caller
    then reduces root by root).
    """
    zs = [sp.Dummy(f"z{i}") for i in range(len(roots))]
    try:
        K, f = sfield(e.xreplace(dict(zip(roots, zs))), *zs)
    except (BasePolynomialError, ValueError, TypeError):
        return None
    if not (K.domain.is_ZZ or K.domain.is_QQ):
        return None
    R = K.ring.clone(domain=sp.QQ)
    num, den = f.numer.set_ring(R), f.denom.set_ring(R)
    m = len(roots)
    mods = []
    for i, r in enumerate(roots):
        mods.append(R({tuple(k if j == i else 0 for j in range(m)): sp.QQ.convert(c) for (k,), c in r.poly.terms()}))
    if not den.is_ground:
        used = [i for i in range(m) if den.degree(i) > 0]
        if len(used) != 1:
            return None
        i = used[0]
        num = num * R(sp.invert(den.as_expr(), mods[i].as_expr(), zs[i]))
        den = R.one
    lead = den.LC
    num = num.rem(mods)
    return sp.Add(
        *(sp.Mul(sp.QQ.to_sympy(c / lead), *(r**k for r, k in zip(roots, mono) if k)) for mono, c in num.terms())
    )


def symmetric_reduce(e: sp.Expr) -> sp.Expr:
    """Replace a sum h(r_1) + ... + h(r_d) over all roots of q by its rational value.

    Such sums appear in particular solutions (each column of P contributes the
    same polynomial in its own root); they equal sum_k h_k p_k with the power
    sums p_k = trace(C^k) of the companion matrix C of q.
    """
    by_poly: dict = {}
    for r in atoms_of(e, sp.CRootOf):
        by_poly.setdefault(r.poly, set()).add(r)
    for poly, roots in by_poly.items():
        d = poly.degree()
        if len(roots) != d:
            continue
        z = sp.Dummy("z")
        parts: dict = {}
        rest = []
        for term in sp.Add.make_args(e):
            here = [r for r in roots if term.has(r)]
            if len(here) == 1:
                parts.setdefault(here[0], []).append(term.xreplace({here[0]: z}))
            else:
                rest.append(term)
        if len(parts) != d:
            continue
        sums = [sp.Add(*v) for v in parts.values()]
        if not all(s.is_polynomial(z) for s in sums):
            continue
        polys = [sp.Poly(s, z) for s in sums]
        if any(pp != polys[0] for pp in polys[1:]):
            continue
        h = polys[0]
        coeffs = [sp.Rational(c) for c in poly.monic().all_coeffs()]  # 1, a_{d-1}, ..., a_0
        C = sp.zeros(d, d)
        for i in range(1, d):
            C[i, i - 1] = 1
        for i in range(d):
            C[i, d - 1] = -coeffs[d - i]
        total = sp.Integer(0)
        Ck = sp.eye(d)
        for k in range(h.degree() + 1):
            total += h.coeff_monomial(z**k) * Ck.trace()
            Ck = Ck * C
        e = sp.Add(*rest) + total
    return sp.expand(e)


def conjugate(p: ExpPoly) -> ExpPoly:
    """Complex conjugate, for a real variable t and real parameters."""
    out: dict = {}
    if any(g.has(sp.CRootOf) or c.has(sp.CRootOf) for (_, g), c in p.terms):
        # indexed roots stay as they are, each complex one taken to its partner
        return ExpPoly.from_dict({(k, conjugate_roots(g)): conjugate_roots(c) for (k, g), c in p.terms})
    for (k, g), c in p.terms:
        gr, gi = split_complex(g)
        cr, ci = split_complex(c)
        key = (k, sp.expand(gr - sp.I * gi))
        out[key] = out.get(key, sp.Integer(0)) + cr - sp.I * ci
    return ExpPoly.from_dict(out)


class NotExpPoly(Exception):
    """Raised internally when an expression is outside the class."""


def to_expoly(expr: sp.Expr, t: sp.Symbol) -> ExpPoly:
    """Write ``expr`` as an exponential polynomial in ``t``.

    >>> t = sp.Symbol("t")
    >>> to_expoly(3*t*sp.exp(-2*t), t).terms
    (((1, -2), 3),)

    Raises ``NotExpPoly`` when the expression is not of the class (a step, a
    rational function of t, ...).
    """
    expr = sp.sympify(expr, strict=True)
    if not expr.has(t):
        return ExpPoly.constant(expr)
    try:
        return ExpPoly.from_dict(_read(expr, t))
    except (_NotDirect, NotExpPoly):
        return _via_rewrite(expr, t)


def _via_rewrite(expr: sp.Expr, t: sp.Symbol) -> ExpPoly:
    """to_expoly by rewriting trigonometric and hyperbolic functions as exponentials,
    expanding, and reading each term (also the reference for ``_read``)."""
    if any(expr.has(fn) for fn in _TRIG):
        expr = expr.rewrite(sp.exp)
    expr = sp.expand(expr, power_exp=True, mul=True, multinomial=True, power_base=False, log=False)
    acc: dict[tuple[int, sp.Expr], sp.Expr] = {}
    for term in sp.Add.make_args(expr):
        coeff = sp.Integer(1)
        k = 0
        gamma = sp.Integer(0)
        for factor in sp.Mul.make_args(term):
            if not factor.has(t):
                coeff *= factor
            elif factor == t:
                k += 1
            elif factor.is_Pow and factor.base == t and factor.exp.is_Integer and factor.exp >= 0:
                k += int(factor.exp)
            elif isinstance(factor, sp.exp) or (factor.is_Pow and factor.base is sp.E):
                slope, rest = _linear(factor.args[0] if isinstance(factor, sp.exp) else factor.exp, t)
                gamma += slope
                if rest != 0:
                    coeff *= sp.exp(rest)
            elif factor.is_Pow and not factor.base.has(t) and factor.exp.has(t):
                # b^(a t + c) = e^{(a t + c) log b}
                slope, rest = _linear(factor.exp, t)
                gamma += slope * sp.log(factor.base)
                if rest != 0:
                    coeff *= factor.base**rest
            else:
                raise NotExpPoly(f"{factor} is not a polynomial, exponential or sinusoid in {t}")
        gamma = sp.expand(gamma)
        key = (k, gamma)
        acc[key] = acc.get(key, sp.Integer(0)) + coeff
    return ExpPoly.from_dict(acc)


class _NotDirect(Exception):
    """An expression the direct reading leaves to the rewrite-and-expand route."""


def _linear(arg: sp.Expr, t: sp.Symbol) -> tuple[sp.Expr, sp.Expr]:
    """(a, b) of an exponent a t + b (expanded); NotExpPoly when it is not linear in t."""
    arg = sp.expand(arg)
    rest, dep = arg.as_independent(t, as_Add=True)
    if dep == t:
        return sp.Integer(1), rest
    if dep.is_Mul:
        slope, var = dep.as_independent(t, as_Add=False)
        if var == t:
            return slope, rest
    slope = sp.diff(arg, t)
    if slope.has(t):
        raise NotExpPoly(f"exponent {arg} is not linear in {t}")
    return slope, sp.expand(arg - slope * t)


def _read(e: sp.Expr, t: sp.Symbol) -> dict[tuple[int, sp.Expr], sp.Expr]:
    """e as {(k, gamma): coefficient}, read off the tree: sums and products of
    polynomials in t, exponentials, sines, cosines, sinh and cosh of a t + b.

    The same terms as rewriting the functions as exponentials and expanding
    (the general route below), without rewriting the tree; the coefficients
    are normalised by ExpPoly.from_dict.  Anything else raises _NotDirect, an
    argument not linear in t NotExpPoly; to_expoly then tries the general route.
    """
    if not e.has(t):
        return {(0, sp.Integer(0)): e}
    if e == t:
        return {(1, sp.Integer(0)): sp.Integer(1)}
    if e.is_Add:
        out: dict = {}
        for a in e.args:
            for key, c in _read(a, t).items():
                out[key] = out.get(key, sp.Integer(0)) + c
        return out
    if e.is_Mul:
        out = {(0, sp.Integer(0)): sp.Integer(1)}
        for a in e.args:
            out = _times(out, _read(a, t))
        return out
    if e.is_Pow and e.exp.is_Integer and e.exp >= 0:
        base = _read(e.base, t)
        out = {(0, sp.Integer(0)): sp.Integer(1)}
        for _ in range(int(e.exp)):
            out = _times(out, base)
        return out
    if isinstance(e, sp.exp):
        slope, rest = _linear(e.args[0], t)
        return {(0, slope): sp.exp(rest) if rest != 0 else sp.Integer(1)}
    if isinstance(e, (sp.sin, sp.cos, sp.sinh, sp.cosh)):
        slope, rest = _linear(e.args[0], t)
        i = sp.I if isinstance(e, (sp.sin, sp.cos)) else sp.Integer(1)
        up = sp.exp(i * rest) if rest != 0 else sp.Integer(1)
        down = sp.exp(-i * rest) if rest != 0 else sp.Integer(1)
        # sin u = (e^{iu} - e^{-iu}) / 2i, cos u = (e^{iu} + e^{-iu}) / 2, sinh, cosh likewise
        sign = -1 if isinstance(e, (sp.sin, sp.sinh)) else 1
        half = 1 / (2 * sp.I) if isinstance(e, sp.sin) else sp.Rational(1, 2)
        g = sp.expand(i * slope)
        if g == 0:
            raise _NotDirect
        return {(0, g): half * up, (0, sp.expand(-g)): sign * half * down}
    raise _NotDirect


def _times(a: dict, b: dict) -> dict:
    out: dict = {}
    for (k1, g1), c1 in a.items():
        for (k2, g2), c2 in b.items():
            key = (k1 + k2, sp.expand(g1 + g2))
            out[key] = out.get(key, sp.Integer(0)) + c1 * c2
    return out


@dataclass(frozen=True)
class IntegralResult:
    """Antiderivative F of e^{-lam s} h(s), with bookkeeping for the sheet."""

    antiderivative: ExpPoly  # F(t), itself an exponential polynomial
    resonant: bool
    nonzero: tuple[sp.Expr, ...] = field(default=())  # beta values assumed nonzero


def integrate_against(h: ExpPoly, lam: sp.Expr, *, is_zero: ZeroTest) -> IntegralResult:
    """Antiderivative of e^{-lam s} h(s) ds by formula (no general integrator).

    ``is_zero`` decides exactly whether gamma - lam vanishes (resonance).
    """
    out: dict[tuple[int, sp.Expr], sp.Expr] = {}
    resonant = False
    assumed: list[sp.Expr] = []
    for (k, gamma), c in h.terms:
        beta = sp.expand(gamma - lam)
        # an indexed root of degree 3 or more minus a number in Q(i) is never zero; is_zero
        # would ask sympy's assumptions, which refine the root's interval again and again
        if not (beta.has(sp.CRootOf) and plainly_nonzero(beta)) and is_zero(beta):
            resonant = True
            key = (k + 1, sp.Integer(0))
            out[key] = out.get(key, sp.Integer(0)) + c / (k + 1)
            continue
        if beta.free_symbols:
            assumed.append(beta)
        # e^{beta t} sum_j (-1)^j k!/(k-j)! t^(k-j) / beta^(j+1)
        for j in range(k + 1):
            coef = (-1) ** j * sp.factorial(k) / sp.factorial(k - j) / beta ** (j + 1)
            key = (k - j, beta)
            out[key] = out.get(key, sp.Integer(0)) + c * coef
    return IntegralResult(ExpPoly.from_dict(out), resonant, tuple(assumed))


def shift_exponents(p: ExpPoly, delta: sp.Expr) -> ExpPoly:
    """Multiply by e^{delta t}: every exponent moves by delta."""
    return ExpPoly.from_dict({(k, sp.expand(g + delta)): c for (k, g), c in p.terms})
