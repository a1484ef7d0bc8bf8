"""Compact coefficients for display: a result collected by mode, short exact coefficients, names, decimals.

Display only: the verified x(t) is never changed.  A component is read as a
sum over its modes (a constant, t^k, e^{lambda t}, e^{sigma t} cos and sin,
the input's own sines and cosines), the coefficients of each mode are added
and put over one denominator in the field they live in (square roots of
integers and i are reduced by g^2 = n while cancelling), and recurring pieces
are named once for the sheet:

* omega for a forcing frequency that is a rational multiple of pi (pi/12);
* Delta for a square root of an integer of two digits or more (sqrt(2161));
* Gamma for a denominator polynomial shared by two coefficients or more;
* A_k and phi_k for the amplitude and phase of a sinusoidal steady state,
  A_k sin(omega t + phi_k), when the input is sinusoidal at one frequency.

Each component can also be written with decimals (``decimal_terms``) when
every parameter has a value, for the engineer who reads numbers while the
checker reads the exact form.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import lru_cache
from typing import Any, Mapping, Sequence

import sympy as sp

from ..exact import root_value
from ..model import Solution
from ..rootring import atoms_of, contains, replace_atoms
from ..reading.sinusoid import sinusoidal_input
from ..render.printing import MathFormatter, RootName, Terms
from .blocks import Block, Eq, Name, P

__all__ = [
    "Naming",
    "naming_for",
    "mode_terms",
    "tidy",
    "compact",
    "decimal_terms",
    "parameter_values",
    "Sinusoid",
    "steady_sinusoids",
    "DIGITS",
    "where_blocks",
    "decimal_text",
    "decimal_number",
    "naming_for_roots",
    "tidy_parts",
    "root_stand_ins",
    "is_long_in_roots",
    "named_coefficient",
    "LONG_OPS",
    "NAMES_KEY",
    "readable_phase",
]

#: significant figures of the decimals beside the exact coefficients
DIGITS = 4

#: an expression larger than this (operations) is shown as it is: cancelling it could take long
_CANCEL_LIMIT = 1500

#: names the sheet itself uses, never given to a subexpression
_SHEET_NAMES = {"A", "D", "P", "J", "x", "y", "f", "g", "c", "s", "t", "e", "i", "lambda", "mu", "M", "r", "q", "F", "X", "b"}


@dataclass(frozen=True)
class Naming:
    """Names for recurring subexpressions of one sheet, in the order they are listed under "where".

    ``forward`` replaces each exact value by its name (pi by 12 omega, sqrt(97)
    by Delta); ``denominators`` are named polynomials (already written in the
    names); ``algebraic`` are (name, n) with name^2 = n, used while cancelling.
    """

    rows: tuple[tuple[sp.Symbol, sp.Expr], ...] = ()
    forward: tuple[tuple[sp.Expr, sp.Expr], ...] = ()
    denominators: tuple[tuple[sp.Expr, sp.Symbol], ...] = ()
    algebraic: tuple[tuple[sp.Symbol, int], ...] = ()
    used: frozenset[str] = frozenset()
    #: (indexed root, its stand-in symbol named as the sheet names the root: lambda_3, sigma_1)
    roots: tuple[tuple[sp.Expr, sp.Symbol], ...] = ()

    def hold(self, expr: Any) -> Any:
        """``expr`` with each named indexed root replaced by its stand-in symbol (value unchanged).

        Every walk of a tree holding a ``CRootOf`` rebuilds the root's polynomial
        at each visit (sympy recomputes its ``args``); the display works on the
        stand-ins and prints them as the roots' names.
        """
        if not self.roots or not isinstance(expr, sp.Basic):
            return expr
        return expr.xreplace(dict(self.roots))

    def apply(self, expr: sp.Expr) -> sp.Expr:
        """``expr`` written in the names (value unchanged)."""
        expr = self.hold(expr)
        return expr.xreplace(dict(self.forward)) if self.forward else expr

    def back(self, expr: sp.Expr) -> sp.Expr:
        """The exact expression behind a named one."""
        out = expr
        for _ in range(3):  # a name defined through another (Gamma in omega)
            out = out.xreplace({sym: poly for poly, sym in self.denominators}).xreplace({sym: value for sym, value in self.rows})
        return out.xreplace({sym: root for root, sym in self.roots}) if self.roots else out

    def numeric(self) -> dict[sp.Symbol, sp.Expr]:
        """Each root stand-in's decimal (40 digits), for ordering and decimals."""
        return {sym: root_value(root) for root, sym in self.roots}

    def pick(self, candidates: Sequence[str], extra: set[str] = set()) -> str:
        """The first candidate name free in this sheet."""
        taken = set(self.used) | {s.name for s, _ in self.rows} | extra
        return next((n for n in candidates if n not in taken), candidates[-1] + "_x")


def _names_in(solution: Solution, xs: Sequence[Any]) -> frozenset[str]:
    sy = solution.system
    names = {s.name for s in sy.states} | {sy.t.name} | {p.symbol.name for p in sy.params}
    for obj in (sy.A, sy.f, *xs):
        names |= {s.name for s in getattr(obj, "free_symbols", ())}
    return frozenset(names | _SHEET_NAMES)


def _numeric_rate(expr: sp.Expr) -> bool:
    return expr.is_number and not contains(expr, sp.CRootOf)


def root_stand_ins(roots: Sequence[RootName]) -> tuple[tuple[sp.Expr, sp.Symbol], ...]:
    """A symbol for each named indexed root, spelt as the printers name the root (sigma_1, lambda_3).

    >>> z = sp.Symbol("z")
    >>> r = sp.CRootOf(z**3 - 3*z + 1, 0)
    >>> root_stand_ins([RootName(root=r, number=2, decimal="-1.8794")])
    ((CRootOf(z**3 - 3*z + 1, 0), lambda_2),)
    """
    # real parts and imaginary parts are real; an eigenvalue is real when sympy's root count says so
    return tuple((r.root, sp.Symbol(f"{r.letter}_{r.number}", real=True) if r.letter != "lambda" or r.root.is_real
                  else sp.Symbol(f"{r.letter}_{r.number}")) for r in roots)


def naming_for(solution: Solution, *, roots: Sequence[RootName] = ()) -> Naming:
    """The names (omega, Delta, Gamma) for one solution's result; empty where nothing recurs.

    ``roots`` are the sheet's named indexed roots: the display then works on
    stand-in symbols in their place (``Naming.hold``).

    >>> import derive
    >>> t = sp.Symbol("t")
    >>> n = naming_for(derive.solve([[-1]], [sp.sin(sp.pi * t / 12)], t=t))
    >>> [(s.name, v) for s, v in n.rows]
    [('omega', pi/12)]
    """
    t = solution.system.t
    stand = root_stand_ins(roots)
    held = Naming(roots=stand)
    xs = tuple(held.hold(e) for e in solution.x)
    used = _names_in(solution, xs)
    naming = Naming(used=used)
    rows: list[tuple[sp.Symbol, sp.Expr]] = []
    forward: list[tuple[sp.Expr, sp.Expr]] = []
    algebraic: list[tuple[sp.Symbol, int]] = []
    exprs = [e for e in (*xs, *solution.system.f) if isinstance(e, sp.Basic)]
    freqs: list[sp.Expr] = []
    for e in exprs:
        for w in e.atoms(sp.sin, sp.cos):
            rate = sp.expand(w.args[0]).coeff(t)
            if _numeric_rate(rate) and rate.has(sp.pi) and (rate / sp.pi).is_Rational and abs(rate) not in freqs:
                freqs.append(abs(rate))
    if len(freqs) == 1:
        omega = sp.Symbol(naming.pick(("omega", "nu", "varpi")), positive=True)
        rows.append((omega, freqs[0]))
        forward.append((sp.pi, omega * sp.pi / freqs[0]))
    radicals = sorted({p for e in xs if isinstance(e, sp.Basic) for p in e.atoms(sp.Pow)
                       if p.exp == sp.S.Half and p.base.is_Integer and p.base >= 10}, key=lambda p: int(p.base))
    for k, r in enumerate(radicals):
        letter = naming.pick(("Delta", "Theta", "Xi"), {s.name for s, _ in rows})
        name = letter if len(radicals) == 1 else f"{letter}_{k + 1}"
        sym = sp.Symbol(name, positive=True)
        rows.append((sym, r))
        forward.append((r, sym))
        algebraic.append((sym, int(r.base)))
    return _with_denominators(Naming(rows=tuple(rows), forward=tuple(forward), algebraic=tuple(algebraic), used=used,
                                     roots=stand), t, xs)


def _with_denominators(naming: Naming, t: sp.Symbol, xs: Sequence[Any]) -> Naming:
    """``naming`` with Gamma, Gamma_2, ... for denominator polynomials shared by two coefficients or more."""
    seen: dict[sp.Expr, int] = {}
    for e in xs:
        pairs = mode_terms(e, t) if isinstance(e, sp.Expr) else None
        for c, _ in pairs or ():
            den = sp.Mul(*(p.base for p in tidy_parts(c, naming) if p.is_Pow and p.exp == -1))
            for factor in sp.Mul.make_args(den):
                base = factor.base if factor.is_Pow else factor
                if base.is_Add and len(base.args) >= 3:
                    seen[base] = seen.get(base, 0) + 1
    shared = [poly for poly, n in seen.items() if n >= 2]
    if not shared:
        return naming
    name = naming.pick(("Gamma", "Psi", "Phi"))
    dens = tuple((poly, sp.Symbol(name if len(shared) == 1 else f"{name}_{k + 1}", positive=True)) for k, poly in enumerate(shared))
    return Naming(rows=naming.rows + tuple((sym, poly) for poly, sym in dens), forward=naming.forward,
                  denominators=dens, algebraic=naming.algebraic, used=naming.used, roots=naming.roots)


def mode_terms(expr: sp.Expr, t: sp.Symbol, unknowns: frozenset[sp.Symbol] = frozenset()) -> list[tuple[sp.Expr, sp.Expr]] | None:
    """(coefficient, mode) of an exponential polynomial in ``t``; None for anything else.

    A mode is a product of t^k, one exponential, at most one sine or cosine
    and the ``unknowns`` (y_1, c_1: symbols that are not coefficients); terms
    with the same mode are added.

    >>> t = sp.Symbol("t")
    >>> mode_terms(3 + sp.exp(-t) / 2 + sp.exp(-t) * t, t)
    [(3, 1), (1/2, exp(-t)), (1, t*exp(-t))]
    """
    if not isinstance(expr, sp.Expr):
        return None
    found = _mode_terms(expr, t, unknowns)
    return None if found is None else list(found)


@lru_cache(maxsize=512)
def _mode_terms(expr: sp.Expr, t: sp.Symbol, unknowns: frozenset[sp.Symbol]) -> tuple[tuple[sp.Expr, sp.Expr], ...] | None:
    """``mode_terms``, kept: the naming, the Result, its decimals and its sinusoids read the same components."""
    # (the rootring walks never open an indexed root, as sympy's has, atoms and xreplace do)
    if contains(expr, sp.Piecewise, sp.Heaviside, sp.DiracDelta, sp.Integral):
        return None
    # each exponential held as a symbol while expanding, so e^{-u} is never moved into a denominator
    held = {e: sp.Dummy("E") for e in atoms_of(expr, sp.exp) if e.has(t)}
    rates = {d: e.args[0] for e, d in held.items()}
    # each sine and cosine held whole too: at t0 != 0 the result reads sin(w (t - t0)), which the
    # expand would open into sin(w t - w t0)
    waves = {d: e for e, d in ((e, sp.Dummy("W")) for e in atoms_of(expr, sp.sin, sp.cos) if e.has(t))}
    groups: dict[sp.Expr, list[sp.Expr]] = {}
    stood = replace_atoms(expr, {**held, **{e: d for d, e in waves.items()}})
    polys: dict[sp.Symbol, sp.Expr] = {}
    if not contains(stood, sp.CRootOf):
        stood, polys = _held_sums(stood, {t, *rates, *waves, *unknowns})
    for term in sp.Add.make_args(sp.expand(stood)):
        coeff: list[sp.Expr] = []
        exps: list[sp.Expr] = []
        others: list[sp.Expr] = []
        for factor in sp.Mul.make_args(term):
            base, power = factor.as_base_exp()
            if base in rates and power.is_Integer:
                exps.append(power * rates[base])
            elif factor in waves and sp.diff(waves[factor].args[0], t, 2) == 0:
                others.append(waves[factor])
            elif base in waves:
                return None
            elif not factor.has(t, *rates, *waves, *unknowns):
                coeff.append(factor)
            elif factor == t or (factor.is_Pow and factor.base == t and factor.exp.is_Integer and factor.exp > 0):
                others.append(factor)
            elif isinstance(factor, (sp.sin, sp.cos)) and sp.diff(factor.args[0], t, 2) == 0:
                others.append(factor)
            elif base in unknowns and power.is_Integer and power > 0:
                others.append(factor)
            else:
                return None
        if sum(isinstance(o, (sp.sin, sp.cos)) for o in others) > 1:
            return None
        mode = sp.Mul(*others) * (sp.exp(sp.expand(sp.Add(*exps))) if exps else 1)
        groups.setdefault(mode, []).append(sp.Mul(*coeff))
    # each sum built once: adding term by term rebuilds a growing sum at every step
    summed = ((sp.Add(*cs), m) for m, cs in groups.items())
    if polys:
        summed = ((sp.expand(c.xreplace(polys)), m) for c, m in summed)
    return tuple((c, m) for c, m in summed if c != 0)


def _held_sums(e: sp.Expr, moving: set[sp.Basic]) -> tuple[sp.Expr, dict[sp.Symbol, sp.Expr]]:
    """``e`` with each sum free of ``moving`` (a coefficient: a polynomial in indexed roots' parts)
    held as a symbol, and the symbols' values.

    Expanding the whole expression multiplied every mode into every term of its coefficient, only to
    add them up again; with the coefficients held the expand only opens the modes, and each mode's
    coefficient is expanded once, to the same expanded form.
    """
    polys: dict[sp.Symbol, sp.Expr] = {}

    def walk(a: sp.Expr) -> sp.Expr:
        if a.is_Add and not (a.free_symbols & moving):
            k = sp.Dummy("K")
            polys[k] = a
            return k
        if a.is_Add or a.is_Mul:
            args = [walk(b) for b in a.args]
            return a.func(*args) if any(x is not y for x, y in zip(args, a.args)) else a
        if a.is_Pow and a.exp.is_Integer:
            base = walk(a.base)
            return sp.Pow(base, a.exp) if base is not a.base else a
        return a

    return walk(e), polys


@lru_cache(maxsize=4096)
def _count_ops(e: sp.Expr) -> int:
    """sp.count_ops, kept: a sheet asks it of the same coefficients in the derivation and in the Result."""
    return int(sp.count_ops(e))


def _reduce(p: sp.Expr, algebraic: Sequence[tuple[sp.Symbol, int]]) -> sp.Expr:
    """A polynomial reduced by name^2 = n for each named root (and i^2 = -1)."""
    for sym, n in algebraic:
        if p.has(sym):
            p = sp.Poly(p, sym).rem(sp.Poly(sym**2 - n, sym)).as_expr()
    return sp.expand(p)


@lru_cache(maxsize=2048)
def _field_form(c: sp.Expr, algebraic: tuple[tuple[sp.Symbol, int], ...]) -> tuple[sp.Expr, sp.Expr]:
    """(numerator, denominator) of ``c`` over one denominator free of the algebraic names, reduced."""
    num, den = sp.fraction(sp.cancel(sp.together(c)))
    num, den = _reduce(num, algebraic), _reduce(den, algebraic)
    # integer coefficients above and below: 6 - 87 Delta/97 is (582 - 87 Delta)/97
    k = sp.ilcm(_denominator(num), _denominator(den))
    num, den = sp.expand(num * k), sp.expand(den * k)
    for sym, _ in algebraic:
        if den.has(sym):
            # multiply by the conjugate in sym: the denominator loses sym
            conj = den.xreplace({sym: -sym})
            num, den = _reduce(num * conj, algebraic), _reduce(den * conj, algebraic)
    if any(num.has(sym) for sym, _ in algebraic) or den != 1:
        g = sp.gcd(num, den)
        if g != 1 and not any(g.has(sym) for sym, _ in algebraic):
            num, den = sp.cancel(num / g), sp.cancel(den / g)
    return num, den


def _denominator(p: sp.Expr) -> int:
    """The least common denominator of the rational coefficients of a polynomial (1 when there are none)."""
    out = 1
    for term in sp.Add.make_args(p):
        coeff = term.as_coeff_Mul()[0]
        if coeff.is_Rational:
            out = sp.ilcm(out, int(coeff.q))
    return out


def _factored(p: sp.Expr, algebraic: Sequence[tuple[sp.Symbol, int]]) -> list[sp.Expr]:
    """A polynomial as factors: its content, then each part of ``sum_k g^k p_k`` factored over Q."""
    if p.is_Number:
        return [p]
    syms = [sym for sym, _ in algebraic if p.has(sym)]
    content, prim = sp.factor_terms(p).as_coeff_Mul()
    if not syms:
        return [content, *sp.Mul.make_args(sp.factor(prim))]
    parts = sp.collect(sp.expand(prim), syms, evaluate=False)
    # a part free of every other symbol is a number: nothing to factor
    pieces = [(coeff if coeff.is_number else sp.factor(coeff)) * key for key, coeff in parts.items()]
    return [content, *sp.Mul.make_args(sp.Add(*pieces))]


def tidy_parts(coefficient: sp.Expr, naming: Naming) -> list[sp.Expr]:
    """A coefficient as factors (number, numerator, 1/denominator) in its field, written in the names.

    The factors are kept apart, so that a product of them with a mode never
    multiplies a number into a sum.  Square roots named in ``naming`` and the
    imaginary unit are reduced by g^2 = n and cleared from the denominator; a
    coefficient holding an indexed root, or too large, is only renamed.
    """
    c = naming.apply(coefficient)
    if c.is_Rational or contains(c, sp.CRootOf) or _count_ops(c) > _CANCEL_LIMIT:
        return [c]
    held = {sym for _, sym in naming.roots} & c.free_symbols
    if held or _transcendental_numbers(c):
        # e^{-4/5} of a state handed across a switch: factoring over Q would split 1 - e^{-4/5} into
        # (e^{1/5} - 1)(e^{1/5} + 1)(e^{2/5} + 1) e^{-4/5}; the rational content alone reads best
        return _root_polynomial_parts(c, held)
    iota = sp.Dummy("iota")
    algebraic = (*naming.algebraic, (iota, -1))
    num, den = _field_form(c.xreplace({sp.I: iota}), algebraic)
    n_parts = _factored(num, algebraic)
    d_parts = _factored(den, algebraic)
    # factor can leave a sign of its own among the factors (-(a + b)): it joins the number,
    # so no (-1) is printed beside 1/6
    signs = [f for f in n_parts[1:] if f.is_Number]
    n_parts = [n_parts[0], *(f for f in n_parts[1:] if not f.is_Number)]
    number = n_parts[0] * sp.Mul(*signs) / d_parts[0]
    rest_den = sp.Mul(*d_parts[1:])
    for poly, sym in naming.denominators:
        rest_den = rest_den.xreplace({poly: sym})
    # one power per factor below, so the printers set a single fraction bar
    factors = [number, *n_parts[1:]] + [sp.Pow(f, -1) for f in sp.Mul.make_args(rest_den) if f != 1]
    return [f.xreplace({iota: sp.I}) for f in factors if f != 1] or [sp.Integer(1)]


def _transcendental_numbers(c: sp.Expr) -> bool:
    """Whether ``c`` is a number holding an exponential, sine or cosine of a nonzero number."""
    return not c.free_symbols and (c.has(sp.E) or any(f.args[0] != 0 for f in atoms_of(c, sp.exp, sp.sin, sp.cos)))


def _root_polynomial_parts(c: sp.Expr, held: set[sp.Symbol]) -> list[sp.Expr]:
    """A polynomial in indexed roots' stand-ins as (rational content, primitive polynomial).

    Such a coefficient is already reduced (``expoly.reduce_roots``); putting it
    over one denominator and factoring it over Q takes long and shortens
    nothing, so only its common rational factor is taken out.
    """
    expanded = sp.expand(c)
    # e^{sigma_1}, cos(omega_1) of a state handed across a switch count as the roots' own terms
    if expanded.free_symbols - held:
        return [c]
    content, prim = expanded.as_content_primitive()
    lead = prim.as_coeff_Add()[0] if not held and prim.is_Add else sp.Integer(0)
    # 1 - e^{-4/5} rather than -1 + e^{-4/5}: the rational term leads with its sign positive
    if lead.is_negative or (prim.is_Add and all(term.could_extract_minus_sign() for term in prim.args)):
        content, prim = -content, -prim
    return [content, prim] if content != 1 else [prim]


def tidy(coefficient: sp.Expr, naming: Naming) -> sp.Expr:
    """One coefficient over one denominator in its field, factored, written in the names (unevaluated product).

    >>> str(tidy(sp.Rational(1, 3) + sp.sqrt(97) / 97 + 2 / (3 + sp.sqrt(97)), naming_for_roots((97,))))
    '(423*Delta + 3395)/12804'
    """
    parts = tidy_parts(coefficient, naming)
    return parts[0] if len(parts) == 1 else sp.Mul(*parts, evaluate=False)


def naming_for_roots(integers: Sequence[int]) -> Naming:
    """A naming with only square roots of ``integers`` (Delta, Delta_2, ...), for examples and tests."""
    rows = tuple((sp.Symbol("Delta" if len(integers) == 1 else f"Delta_{k + 1}", positive=True), sp.sqrt(n)) for k, n in enumerate(integers))
    return Naming(rows=rows, forward=tuple((v, s) for s, v in rows), algebraic=tuple((s, n) for (s, _), n in zip(rows, integers)))


def _rate_key(mode: sp.Expr, t: sp.Symbol, values: Mapping[sp.Symbol, sp.Expr]) -> tuple[Any, ...]:
    """Order of the modes: the constant, the exponentials (slowest decay last), the input's own modes."""
    exps = [f for f in sp.Mul.make_args(mode) if isinstance(f, sp.exp)]
    trig = [f for f in sp.Mul.make_args(mode) if isinstance(f, (sp.sin, sp.cos))]
    power = sp.degree(mode, t) if mode.is_polynomial(t) else 0
    if mode == 1:
        return (0, 0.0, 0.0, 0, 0, "")
    rate = sp.expand(exps[0].args[0]).coeff(t) if exps else sp.Integer(0)
    freq = sp.expand(trig[0].args[0]).coeff(t) if trig else sp.Integer(0)

    def num(x: sp.Expr) -> float:
        x = x.xreplace(dict(values))
        x = _root_decimals(x)
        try:
            return float(sp.re(sp.N(x, 15)))
        except TypeError:
            return 0.0

    group = 1 if exps else 2
    return (group, num(rate), abs(num(freq)), 0 if isinstance(trig[0] if trig else None, sp.cos) else 1,
            power if isinstance(power, int) else 0, sp.srepr(mode) if not contains(mode, sp.CRootOf) else "")


def parameter_values(solution: Solution) -> dict[sp.Symbol, sp.Expr] | None:
    """Every parameter's value, or None when one has none (no decimals then)."""
    values = {}
    for p in solution.system.params:
        if p.value is None:
            return None
        values[p.symbol] = p.value
    return values


def compact(expr: sp.Expr, t: sp.Symbol, naming: Naming, *, values: Mapping[sp.Symbol, sp.Expr] | None = None,
            sinusoid: "Sinusoid | None" = None, unknowns: frozenset[sp.Symbol] = frozenset(),
            names: dict[sp.Expr, sp.Symbol] | None = None) -> sp.Expr:
    """``expr`` as ``Terms`` ordered by mode with tidy coefficients, or written in the names when it is no sum of modes.

    ``names``, the sheet's register of long coefficients: a coefficient that
    is a long polynomial in indexed roots is shown by a name kappa_n from it
    (added when new), and its exact value is listed once, in the appendix.

    >>> t = sp.Symbol("t")
    >>> compact(sp.exp(-t) / 3 + 1 + sp.exp(-t) / 6, t, Naming())
    Terms(1, exp(-t)/2)
    """
    expr = naming.hold(expr)
    if isinstance(expr, sp.Piecewise):
        # each interval compacted as a result that is not switched, its condition kept
        return sp.Piecewise(*((compact(v, t, naming, values=values, sinusoid=sinusoid, unknowns=unknowns, names=names), c)
                              for v, c in expr.args), evaluate=False)
    if not isinstance(expr, sp.Expr) or not expr.has(t):
        return tidy(expr, naming) if isinstance(expr, sp.Expr) and expr.is_number is not None else expr
    pairs = mode_terms(expr, t, unknowns)
    if pairs is None:
        return naming.apply(expr)
    numeric = {**(values or {}), **naming.numeric()}
    pairs.sort(key=lambda cm: _rate_key(cm[1], t, numeric))
    terms: list[sp.Expr] = []
    for c, m in pairs:
        if sinusoid is not None and isinstance(m, (sp.sin, sp.cos)) and m.args[0] == sinusoid.argument:
            # the sine and cosine at the input's frequency, as one amplitude and phase
            wave = sinusoid.term(naming, t)
            if wave not in terms:
                terms.append(wave)
            continue
        parts = tidy_parts(c, naming)
        if names is not None and is_long_in_roots(sp.Mul(*parts), naming):
            # unevaluated, so the listed value keeps its rational content outside the sum
            parts = [named_coefficient(sp.Mul(*parts, evaluate=False) if len(parts) > 1 else parts[0], names, naming)]
        terms.append(_term(parts, _mode_display(naming.apply(m), t)))
    return Terms(*terms) if len(terms) > 1 else (terms[0] if terms else sp.Integer(0))


#: the key of the sheet's register of long coefficients (``compact``'s ``names``) in ``StepContext.cache``
NAMES_KEY = "named_coefficients"

#: a coefficient in indexed roots with more operations than this is named (kappa_n) where a register is kept
LONG_OPS = 8


def is_long_in_roots(value: sp.Expr, naming: Naming) -> bool:
    """Whether ``value`` holds an indexed root's stand-in and is too long to stand in a sum of modes."""
    return bool(value.free_symbols & {sym for _, sym in naming.roots}) and _count_ops(value) > LONG_OPS


def named_coefficient(value: sp.Expr, names: dict[sp.Expr, sp.Symbol], naming: Naming) -> sp.Symbol:
    """The name of ``value`` in the sheet's register (kappa_1, kappa_2, ... in order of first use)."""
    if value not in names:
        letter = naming.pick(("kappa", "chi", "varkappa"))
        names[value] = sp.Symbol(f"{letter}_{len(names) + 1}")
    return names[value]


def _mode_display(mode: sp.Expr, t: sp.Symbol) -> sp.Expr:
    """A mode with each exponent written rate times t, the rate factored: e^{-(13 + Delta) t/24}."""
    def exponent(u: sp.Expr) -> sp.Expr:
        u = sp.expand(u)
        rate = u.coeff(t)
        rest = sp.expand(u - rate * t)
        shift = rest / rate if rate != 0 else None
        if rest != 0 and shift is not None and shift.is_Rational:
            # a mode from an interval's start a reads e^{r (t - a)}, as the decimal line writes it
            return sp.Mul(rate, t + shift, evaluate=False)
        if rest != 0 or not rate.is_Add:
            return u
        content, prim = rate.as_content_primitive()
        if prim.could_extract_minus_sign():
            content, prim = -content, -prim
        return sp.Mul(content, prim, t, evaluate=False) if content != 1 else sp.Mul(prim, t, evaluate=False)
    return mode.replace(lambda e: isinstance(e, sp.exp), lambda e: sp.exp(exponent(e.args[0]), evaluate=False))


def _term(factors: list[sp.Expr], mode: sp.Expr) -> sp.Expr:
    """coefficient factors times the mode, unevaluated so no number is multiplied into a sum."""
    factors = [*factors, *sp.Mul.make_args(mode)]
    factors = [f for f in factors if f != 1] or [sp.Integer(1)]
    if factors[0] == -1 and len(factors) > 1:
        factors = [sp.Integer(-1), *factors[1:]]
    return factors[0] if len(factors) == 1 else sp.Mul(*factors, evaluate=False)


@dataclass(frozen=True)
class Sinusoid:
    """A steady sinusoid a sin(u) + b cos(u) of one state written A sin(u + phi), with A and phi named."""

    amplitude_name: sp.Symbol
    phase_name: sp.Symbol
    amplitude: sp.Expr
    phase: sp.Expr
    argument: sp.Expr
    #: the amplitude and phase written in the sheet's names (omega, Gamma)
    amplitude_shown: sp.Expr
    phase_shown: sp.Expr

    def term(self, naming: Naming, t: sp.Symbol) -> sp.Expr:
        """A_k sin(omega t + phi_k), in the names."""
        # the phase after the running argument, as written by hand: sin(omega t + phi_1)
        return self.amplitude_name * sp.sin(Terms(naming.apply(self.argument), self.phase_name), evaluate=False)


def steady_sinusoids(solution: Solution, naming: Naming) -> dict[int, Sinusoid]:
    """Per state index, the amplitude and phase of its sinusoid at the input's frequency.

    Only when the input is sinusoidal at one frequency (plus constants) and
    the state holds both sin(omega t + c) and cos(omega t + c) free of any
    exponential.  A = sqrt(a^2 + b^2) and phi = atan2(b, a) for
    a sin(u) + b cos(u) = A sin(u + phi).
    """
    sy = solution.system
    t = sy.t
    found = sinusoidal_input(sp.Matrix(sy.f), t)
    if found is None:
        return {}
    omega = found[0]
    # A_k beside the matrix A reads as the amplitude of state k, as in the notation; a case
    # symbol A_1 or phi_1 moves the names on
    case_names = naming.used - _SHEET_NAMES
    amp_base = next(n for n in ("A", "B", "R", "C_amp") if not any(u == n or u.startswith(n + "_") for u in case_names))
    phase_base = next(n for n in ("phi", "psi", "theta", "phi_ph") if not any(u == n or u.startswith(n + "_") for u in case_names))
    out: dict[int, Sinusoid] = {}
    for k, e in enumerate(solution.x):
        pairs = mode_terms(naming.hold(e), t) if isinstance(e, sp.Expr) else None
        if pairs is None:
            continue
        waves = {(type(m), m.args[0]): c for c, m in pairs if isinstance(m, (sp.sin, sp.cos))}
        for (kind, arg), a in waves.items():
            if kind is not sp.sin or (sp.cos, arg) not in waves or sp.expand(arg).coeff(t) - omega != 0:
                continue
            b = waves[(sp.cos, arg)]
            amp = naming.back(sp.sqrt(sp.factor(sp.cancel(sp.together(a**2 + b**2)))))
            phase = naming.back(sp.atan2(b, a))
            shown_amp = sp.Mul(*(sp.sqrt(f) for f in tidy_parts(a**2 + b**2, naming)), evaluate=False)
            na, da = sp.fraction(sp.Mul(*tidy_parts(a, naming)))
            nb, db = sp.fraction(sp.Mul(*tidy_parts(b, naming)))
            shown_phase = naming.apply(phase)
            if da.is_positive and db.is_positive:
                # positive factors do not change the angle: atan2(nb/db, na/da) = atan2(nb da, na db) / g
                nb, na = sp.expand(nb * da), sp.expand(na * db)
                g = sp.gcd(na, nb)
                if g.is_positive:
                    na, nb = sp.cancel(na / g), sp.cancel(nb / g)
                shown_phase = readable_phase(nb, na)
            out[k] = Sinusoid(sp.Symbol(f"{amp_base}_{k + 1}"), sp.Symbol(f"{phase_base}_{k + 1}"), amp, phase, arg,
                              shown_amp, shown_phase)
            break
    return out


def readable_phase(b: sp.Expr, a: sp.Expr) -> sp.Expr:
    """The angle of a + b i: a rational multiple of pi as such, otherwise atan2(b, a) held unevaluated.

    sympy writes atan2(1, -2) as pi - atan(1/2); the printers set the held
    atan2 in the sheet's angle notation, which reads as one angle.

    >>> readable_phase(sp.Integer(1), sp.Integer(1)), readable_phase(sp.Integer(1), sp.Integer(-2))
    (pi/4, atan2(1, -2))
    """
    angle = sp.atan2(b, a)
    if angle.is_Rational or (angle / sp.pi).is_Rational:
        return angle
    return sp.atan2(b, a, evaluate=False)


def decimal_terms(expr: sp.Expr, t: sp.Symbol, values: Mapping[sp.Symbol, sp.Expr], *, digits: int = DIGITS,
                  sinusoid: Sinusoid | None = None, naming: Naming | None = None) -> sp.Expr | None:
    """``expr`` ordered by mode with every number a decimal of ``digits`` figures; None if not numeric.

    With a ``naming`` that holds the sheet's indexed roots, the work is done on their stand-ins.
    """
    if naming is not None:
        expr = naming.hold(expr)
        values = {**values, **naming.numeric()}
    if isinstance(expr, sp.Piecewise):
        # a switched result: each interval's value in decimals, its modes from the interval's start
        pieces = [(decimal_terms(v, t, values, digits=digits, sinusoid=sinusoid), c) for v, c in expr.args]
        return None if any(d is None for d, _ in pieces) else sp.Piecewise(*pieces, evaluate=False)
    pairs = mode_terms(expr, t)
    if pairs is None:
        return None
    pairs.sort(key=lambda cm: _rate_key(cm[1], t, values))

    def number(x: sp.Expr) -> sp.Expr | None:
        x = x.xreplace(dict(values))
        x = _root_decimals(x)
        if x.free_symbols:
            return None
        value = sp.N(x, digits + 4)
        if value.has(sp.I) and abs(sp.im(value)) > 1e-30 * (1 + abs(sp.re(value))):
            return None
        value = sp.re(value)
        return sp.Integer(int(value)) if float(value).is_integer() and abs(value) < 10**digits else sp.Float(value, digits)

    #: set while a mode is read when one of its arguments was written w (t - t0)
    shifted: list[bool] = []

    def linear(u: sp.Expr) -> sp.Expr | None:
        u = sp.expand(u)
        exact_rate = u.coeff(t)
        exact_rest = sp.expand(u - exact_rate * t)
        rate, rest = number(exact_rate), number(exact_rest)
        if rate is None or rest is None:
            return None
        shift = exact_rest / exact_rate if exact_rate != 0 else None
        if rest != 0 and rate != 0 and shift is not None and shift.is_Rational:
            # as the exact line reads it, w (t - t0): sympy would pull e^{w t0} out as a factor
            shifted.append(True)
            return sp.Mul(rate, t + shift, evaluate=False)
        return rate * t + rest

    def dec(x: sp.Expr) -> sp.Expr | None:
        if not x.has(t):
            return number(x)
        factors = []
        for f in sp.Mul.make_args(x):
            if isinstance(f, (sp.exp, sp.sin, sp.cos)):
                before = len(shifted)
                u = linear(f.args[0])
                if u is None:
                    return None
                factors.append(f.func(u, evaluate=False) if len(shifted) > before else f.func(u))
            elif f.has(t):
                factors.append(f)
            else:
                v = number(f)
                if v is None:
                    return None
                factors.append(v)
        # a product would merge e^{w (t - t0)} back into e^{w t} times a number
        return sp.Mul(*factors, evaluate=not shifted)

    terms: list[sp.Expr] = []
    done = False
    for c, m in pairs:
        if sinusoid is not None and isinstance(m, (sp.sin, sp.cos)) and m.args[0] == sinusoid.argument:
            if done:
                continue
            amp, ph, arg = dec(sinusoid.amplitude), dec(sinusoid.phase), dec(sinusoid.argument)
            if amp is None or ph is None or arg is None:
                return None
            terms.append(amp * sp.sin(arg + ph))
            done = True
            continue
        shifted.clear()
        cd, md = dec(c), (sp.Integer(1) if m == 1 else dec(m))
        held = bool(shifted)
        if cd is None or md is None:
            return None
        if cd != 0:
            if md == 1 or abs(cd) != 1:
                terms.append(sp.Mul(cd, *sp.Mul.make_args(md), evaluate=False) if md != 1 else cd)
            else:
                terms.append(md if cd == 1 else sp.Mul(-1, *sp.Mul.make_args(md), evaluate=False) if held else -md)
    return Terms(*terms) if len(terms) > 1 else (terms[0] if terms else sp.Integer(0))


def _root_decimals(x: sp.Expr) -> sp.Expr:
    """``x`` with each indexed root replaced by its cached decimal, without opening any root."""
    return replace_atoms(x, {r: root_value(r) for r in atoms_of(x, sp.CRootOf)})


def decimal_number(value: sp.Expr, *, digits: int = DIGITS) -> sp.Expr | None:
    """A real number's decimal to ``digits`` figures as a ``Float`` (None when it has no real value).

    >>> decimal_number(sp.sqrt(2))
    1.414
    """
    if not value.is_number:
        return None
    value = _root_decimals(value)
    number = sp.N(value, digits + 4)
    if not number.is_real:
        return None
    return sp.Float(number, digits)


def decimal_text(value: sp.Expr, fmt: MathFormatter, *, latex: bool, digits: int = DIGITS) -> str:
    """The decimal of an exact number to ``digits`` figures ("" when it has no value)."""
    from ..render.printing import format_decimal

    return format_decimal(value, digits=digits, unit=fmt.style.imaginary_unit, latex=latex)


def where_blocks(rows: Sequence[tuple[sp.Symbol, sp.Expr]], fmt: MathFormatter, *,
                 values: Mapping[sp.Symbol, sp.Expr] | None = None) -> list[Block]:
    """"where" and the named values, one per row, then their decimals on one line."""
    lookup = dict(rows)

    def exact(value: sp.Expr) -> sp.Expr:
        # a name defined in terms of earlier names (Gamma in omega) is evaluated through them
        for _ in range(3):
            value = value.xreplace(lookup)
        return value.xreplace(dict(values or {}))

    out: list[Block] = [P("where", runs_on=True), Eq(tuple((Name(fmt.m(sym), fmt.plain(sym)), value) for sym, value in rows))]
    decs_tex, decs_plain = [], []
    for sym, value in rows:
        text = decimal_text(exact(value), fmt, latex=True)
        if text and not value.is_Rational:
            unit = r"\ \mathrm{rad}" if sym.name.startswith(("phi", "psi", "theta")) else ""
            decs_tex.append(rf"{fmt.m(sym)} \approx {text}{unit}")
            decs_plain.append(f"{fmt.plain(sym)} ≈ {decimal_text(exact(value), fmt, latex=False)}{' rad' if unit else ''}")
    if decs_tex:
        out.append(P("In decimals: ", Name(r",\; ".join(decs_tex), ", ".join(decs_plain)), ".", runs_on=True))
    return out
