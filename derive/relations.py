"""Parameter relations and regimes.

A symbolic system holds for generic parameter values.  On a degenerate
relation (c^2 = 4 k m for a spring-mass-damper: the critically damped case)
the eigenvalues coincide and the generic derivation no longer applies.  Such
a case is solved on its own: the relation is solved for one parameter that
it contains to the first power (k = c^2/(4 m)), keeping every coefficient a
rational function of the remaining parameters, so the characteristic
polynomial factors exactly (here as (lambda + c/(2m))^2).

Where every parameter has a numeric value, ``regimes`` says which side of
each degenerate relation those values are on.
"""

from __future__ import annotations

from dataclasses import replace
from typing import Any, Iterable, Mapping, Sequence

import sympy as sp

from .errors import InputError
from .parsing import nearest, parse_expression
from .model import Condition, Parameter, System
from .model import Relation as Comparison

__all__ = [
    "Relation",
    "Regime",
    "split_assumptions",
    "parse_relations",
    "apply_relations",
    "regimes",
    "regime_sign",
    "check_regimes",
]

#: (expression, sign): the expression is negative (-1) or positive (+1)
Regime = tuple[sp.Expr, int]


def split_assumptions(items: Any, *, symbols: Mapping[str, sp.Symbol], key: str = "assume") -> tuple[Any, tuple[Regime, ...]]:
    """Separate regime inequalities ("c^2 < 4*k*m") from relations ("c^2 = 4*k*m").

    >>> k, m, c = sp.symbols("k m c", positive=True)
    >>> split_assumptions(["c^2 < 4 k m"], symbols={"k": k, "m": m, "c": c})
    ([], ((c**2 - 4*k*m, -1),))
    """
    if _empty(items) or isinstance(items, Mapping):
        return items, ()
    items = _as_list(items, key)
    relations: list[Any] = []
    out: list[Regime] = []
    for i, item in enumerate(items):
        where = f"{key}[{i}]"
        if isinstance(item, sp.core.relational.StrictLessThan) or isinstance(item, sp.core.relational.StrictGreaterThan):
            expr = sp.expand(item.lhs - item.rhs)
            sign = -1 if isinstance(item, sp.core.relational.StrictLessThan) else 1
            _check_regime(sp.sstr(item), expr, sign, where)
            out.append((expr, sign))
            continue
        if isinstance(item, str) and ("<" in item or ">" in item):
            if "=" in item or item.count("<") + item.count(">") != 1:
                raise InputError(
                    f"a regime is written 'lhs < rhs' or 'lhs > rhs' (strict, one comparison), found {item!r}",
                    key=where,
                    hint="the boundary (the '=' case) is a relation of its own: solve it with 'lhs = rhs'",
                )
            op = "<" if "<" in item else ">"
            lhs, rhs = item.split(op)
            expr = sp.expand(_text((lhs, rhs), symbols, where))
            if not expr.free_symbols:
                raise InputError(
                    f"the regime {item!r} contains no parameter",
                    key=where,
                    hint="a regime fixes the sign of a discriminant, e.g. 'c^2 < 4*k*m'",
                )
            sign = -1 if op == "<" else 1
            _check_regime(item, expr, sign, where)
            out.append((expr, sign))
            continue
        relations.append(item)
    return relations, tuple(out)

Relation = tuple[sp.Symbol, sp.Expr]  # parameter := expression in the others


def _as_equation(item: Any, symbols: Mapping[str, sp.Symbol], key: str) -> sp.Expr:
    """lhs - rhs of a relation given as Eq, (lhs, rhs), "lhs = rhs" text, or {sym: value}."""
    if isinstance(item, sp.Equality):
        return item.lhs - item.rhs
    if isinstance(item, tuple) and len(item) == 2:
        return sp.sympify(item[0], strict=True) - sp.sympify(item[1], strict=True) if all(isinstance(v, sp.Basic) for v in item) else _text(item, symbols, key)
    if isinstance(item, str):
        if item.count("=") != 1 or "==" in item:
            raise InputError(
                f"a relation is written 'lhs = rhs' with one '=', found {item!r}",
                key=key,
                hint="give each relation on its own, e.g. --case 'c^2 = 4*k*m' (repeat --case for more)",
            )
        lhs, rhs = item.split("=")
        return _text((lhs, rhs), symbols, key)
    raise InputError(
        f"a relation must be an equation such as 'c^2 = 4*k*m', found {item!r}",
        key=key,
        hint="write it as text 'lhs = rhs', or 'lhs < rhs' for a regime",
    )


def _empty(items: Any) -> bool:
    # a sympy relation has no truth value, so "not items" cannot be asked of one
    return items is None or (isinstance(items, (list, tuple, str, Mapping)) and not items)


def _as_list(items: Any, key: str) -> list[Any]:
    """One relation given on its own is a list of one; anything not a list of them is refused."""
    if isinstance(items, (str, sp.Basic)):
        return [items]
    if isinstance(items, (list, tuple)):
        return list(items)
    raise InputError(
        f"found {type(items).__name__}; expected a list of relations such as ['c^2 = 4*k*m']",
        key=key,
    )


def _text(pair: tuple[Any, Any], symbols: Mapping[str, sp.Symbol], key: str) -> sp.Expr:
    lhs, _ = parse_expression(str(pair[0]).strip(), symbols=symbols, key=key)
    rhs, _ = parse_expression(str(pair[1]).strip(), symbols=symbols, key=key)
    return lhs - rhs


def parse_relations(
    items: Iterable[Any] | Mapping[Any, Any] | None,
    *,
    symbols: Mapping[str, sp.Symbol],
    key: str = "assume",
) -> tuple[Relation, ...]:
    """Relations as substitutions parameter := expression.

    >>> k, m, c = sp.symbols("k m c", positive=True)
    >>> parse_relations(["c^2 = 4 k m"], symbols={"k": k, "m": m, "c": c})
    ((k, c**2/(4*m)),)
    """
    if _empty(items):
        return ()
    out: list[Relation] = []
    if isinstance(items, Mapping):
        for s, v in items.items():
            sym = s if isinstance(s, sp.Symbol) else symbols.get(str(s))
            where = f"{key}.{s}"
            if sym is None:
                guess = nearest(str(s), list(symbols))
                raise InputError(
                    f"{s!r} is not a declared parameter (parameters: {', '.join(sorted(symbols)) or 'none'})",
                    key=where,
                    hint=f"did you mean {guess!r}?" if guess else None,
                )
            value = sp.sympify(v, strict=True) if isinstance(v, sp.Basic) else -_text(("0", v), symbols, where)
            problem = _inadmissible(sym, value) if not value.has(sym) else f"{sym} appears on both sides"
            if problem is not None:
                raise InputError(
                    f"the relation {sym} = {sp.sstr(value)} cannot be used: {problem}",
                    key=where,
                    hint="check the relation's signs, or the assume list of the parameter",
                )
            out.append((sym, value))
        return tuple(out)
    for i, item in enumerate(_as_list(items, key)):
        where = f"{key}[{i}]"
        shown = item if isinstance(item, str) else sp.sstr(item)
        eq = sp.expand(_as_equation(item, symbols, where))
        params = sorted(eq.free_symbols, key=lambda s: s.name)
        if not params:
            verdict = "always holds" if eq == 0 else "never holds"
            raise InputError(
                f"the relation {shown!r} has no parameter left once both sides are expanded: it {verdict}",
                key=where,
                hint="a relation ties parameters together, e.g. 'c^2 = 4*k*m'",
            )
        out.append(_solve_relation(shown, eq, params, where))
    return tuple(out)


def _solve_relation(shown: str, eq: sp.Expr, params: Sequence[sp.Symbol], where: str) -> Relation:
    """parameter := value from ``eq = 0``, the value agreeing with the parameter's assumptions.

    A parameter the relation contains to the first power is preferred (the
    coefficients stay rational functions of the others); a value that
    contradicts an assumption (m = 0 for m positive) is no solution.
    """
    reasons: list[str] = []
    several: list[str] = []
    order = sorted(params, key=lambda s: (not _first_power(eq, s), -_position(s, eq), s.name))
    for s in order:
        admissible = []
        for value in _solutions(eq, s):
            problem = _inadmissible(s, value)
            if problem is None:
                admissible.append(value)
            else:
                reasons.append(problem)
        if len(admissible) == 1:
            return s, admissible[0]
        if admissible:
            several.append(" or ".join(f"{s} = {_math(v)}" for v in admissible))
    if several:
        # Taking one branch silently would solve a case the user did not pick.
        raise InputError(
            f"the relation {shown!r} has several solutions: {'; '.join(several)}",
            key=where,
            hint="write the one meant as the relation, e.g. '" + several[0].split(" or ")[0] + "'"
            " (an assume list such as [\"positive\"] on the parameter also rules out the others)",
        )
    if not reasons:
        raise InputError(
            f"the relation {shown!r} cannot be solved for any of its parameters "
            f"({', '.join(p.name for p in params)})",
            key=where,
            hint="write the relation so that one parameter can be expressed by the others, e.g. 'k = c^2/(4*m)'",
        )
    raise InputError(
        f"the relation {shown!r} contradicts the parameters' assumptions: " + "; ".join(dict.fromkeys(reasons)),
        key=where,
        hint="check the relation's signs, or the assume list of the parameters it names",
    )


def _first_power(eq: sp.Expr, s: sp.Symbol) -> bool:
    return bool(eq.is_polynomial(s)) and sp.Poly(eq, s).degree() == 1


def _solutions(eq: sp.Expr, s: sp.Symbol) -> list[sp.Expr]:
    """Every solution for ``s``, found without ``s``'s own assumptions (those are checked after)."""
    free = sp.Dummy(s.name)
    try:
        found = sp.solve(eq.xreplace({s: free}), free, dict=False)
    except (NotImplementedError, ValueError, TypeError):
        return []
    return [sp.factor(v) for v in found if isinstance(v, sp.Expr) and not v.has(free)]


#: (assumption, its sympy property, words for "the value is never ...")
_ASSUMED: tuple[tuple[str, str], ...] = (
    ("positive", "is_positive"),
    ("negative", "is_negative"),
    ("nonnegative", "is_nonnegative"),
    ("nonpositive", "is_nonpositive"),
    ("nonzero", "is_nonzero"),
)


def _inadmissible(s: sp.Symbol, value: sp.Expr) -> str | None:
    """Why ``s = value`` contradicts an assumption on ``s``, or ``None``."""
    if value.has(sp.I) or value.is_real is False:
        return f"{s} = {sp.sstr(value)} is not real"
    for name, prop in _ASSUMED:
        if getattr(s, prop) and getattr(value, prop) is False:
            return f"{s} = {sp.sstr(value)} is never {name}, but {s} is assumed {name}"
    return None


def _check_regime(shown: str, expr: sp.Expr, sign: int, where: str) -> None:
    """Refuse a regime that the assumptions already decide (never or always true)."""
    always = expr.is_positive if sign > 0 else expr.is_negative
    never = expr.is_nonpositive if sign > 0 else expr.is_nonnegative
    if never:
        raise InputError(
            f"the regime {shown!r} can never hold: with the parameters' assumptions "
            f"{sp.sstr(expr)} is always {'<= 0' if sign > 0 else '>= 0'}",
            key=where,
            hint="check the regime's direction and the assume lists of its parameters",
        )
    if always:
        raise InputError(
            f"the regime {shown!r} holds for every value the assumptions allow, so it selects nothing",
            key=where,
            hint="a regime fixes the sign of a discriminant that the assumptions leave open, e.g. 'c^2 < 4*k*m'",
        )


def _position(s: sp.Symbol, eq: sp.Expr) -> int:
    # a parameter on the right-hand side of "c^2 = 4 k m" is the natural one to eliminate
    return 1 if eq.coeff(s) != 0 else 0


def apply_relations(
    system: System, relations: Sequence[Relation], *, key: str = "assume"
) -> tuple[System, tuple[Condition, ...], tuple[str, ...]]:
    """Substitute the relations into A, f and x0; the eliminated parameter leaves the list."""
    if not relations:
        return system, (), ()
    sub = dict(relations)
    A = sp.ImmutableMatrix(system.A.xreplace(sub).applyfunc(sp.cancel))
    f = sp.ImmutableMatrix(system.f.xreplace(sub).applyfunc(sp.cancel))
    x0 = None if system.x0 is None else sp.ImmutableMatrix(system.x0.xreplace(sub))
    shown = "; ".join(f"{s} = {sp.sstr(v)}" for s, v in relations)
    for name, mat in (("A", A), ("f", f), ("x0", x0)):
        if mat is not None and any(e.has(sp.zoo, sp.nan, sp.oo, -sp.oo) for e in mat):
            raise InputError(
                f"with the relation {shown} an entry of {name} divides by zero: the system has no meaning there",
                key=key,
                hint="a relation that makes a parameter in a denominator zero describes a different model; "
                "write that model as its own case",
            )
    params: list[Parameter] = [p for p in system.params if p.symbol not in sub]
    values = {p.symbol: p.value for p in params if p.value is not None}
    notices = []
    conditions = []
    for s, v in relations:
        rel = sp.numer(sp.together(s - v))
        if rel.could_extract_minus_sign():
            rel = -rel
        conditions.append(Condition(expr=sp.expand(rel), relation=Comparison.ZERO, reason=f"the case solved here: {s} = {sp.sstr(v)}"))
        notices.append(
            f"solved on the relation {sp.sstr(s)} = {sp.sstr(v)}; the parameter {s} is eliminated"
        )
        old = next((p for p in system.params if p.symbol == s), None)
        if old is not None and old.value is not None and values and all(x in values for x in v.free_symbols):
            implied = v.xreplace(values)
            if sp.simplify(implied - old.value) != 0:
                notices.append(
                    f"the given value {s} = {old.value} does not satisfy the relation "
                    f"(it implies {s} = {sp.N(implied, 6)}); the numeric check uses the other parameters"
                )
    new = replace(system, A=A, f=f, x0=x0, params=tuple(params))
    return new, tuple(conditions), tuple(notices)


def regimes(factors: Sequence[tuple[sp.Expr, int]], lam: sp.Symbol, values: Mapping[sp.Symbol, sp.Expr]) -> tuple[str, ...]:
    """Which regime the given parameter values select, for each quadratic factor in the parameters."""
    out = []
    for fexpr, _ in factors:
        if sp.degree(fexpr, lam) != 2 or not (fexpr.free_symbols - {lam}):
            continue
        a, b, c = sp.Poly(fexpr, lam).all_coeffs()
        disc = sp.factor(b**2 - 4 * a * c)
        rel = f"{sp.sstr(disc)} = 0"
        if not all(s in values for s in disc.free_symbols):
            out.append(
                f"the factor {sp.sstr(fexpr)} has discriminant {sp.sstr(disc)}: two real eigenvalues when it is "
                f"positive, a complex pair when negative, one repeated eigenvalue on {rel} "
                f"(solve that case on its own with the relation {rel})"
            )
            continue
        d = sp.N(disc.xreplace(dict(values)), 15)
        if not (d.is_number and d.is_real):
            continue  # the values make the discriminant undefined: nothing to say about a regime
        if d > 0:
            kind = "positive: two distinct real eigenvalues"
        elif d < 0:
            kind = "negative: a complex-conjugate pair (oscillatory response)"
        else:
            kind = "zero: a repeated eigenvalue (the boundary case)"
        out.append(
            f"with the given parameter values the discriminant {sp.sstr(disc)} of {sp.sstr(fexpr)} is "
            f"{sp.N(d, 6)}, {kind}; the symbolic result assumes it is nonzero"
        )
    return tuple(out)


def regime_sign(disc: sp.Expr, regimes: Sequence[Regime]) -> int:
    """+1 or -1 when a declared regime fixes the sign of ``disc``, else 0.

    A regime is recognised in any form that differs from ``disc`` by a factor
    whose sign the assumptions decide: ``C*R^2 < 4*L`` fixes the sign of the
    discriminant ``C^2*R^2 - 4*C*L`` when C is assumed positive.

    >>> C, R, L = sp.symbols("C R L", positive=True)
    >>> regime_sign(C**2 * R**2 - 4 * C * L, [(C * R**2 - 4 * L, -1)])
    -1
    """
    for expr, sign in regimes:
        ratio = sp.factor(sp.cancel(sp.together(disc / expr)))
        if ratio.is_positive:
            return sign
        if ratio.is_negative:
            return -sign
    return 0


def check_regimes(
    factors: Sequence[tuple[sp.Expr, int]], lam: sp.Symbol, regimes: Sequence[Regime], *, key: str = "assume"
) -> None:
    """Refuse a regime that fixes the sign of no quadratic factor's discriminant.

    Such a regime would be listed under the result as "the regime solved
    here" while the derivation ignored it.  ``factors`` are the irreducible
    factors of the characteristic polynomial in ``lam`` with multiplicities.
    """
    discs = []
    for fexpr, _ in factors:
        if sp.degree(fexpr, lam) == 2 and fexpr.free_symbols - {lam}:
            a, b, c = sp.Poly(fexpr, lam).all_coeffs()
            discs.append(sp.factor(b**2 - 4 * a * c))
    for expr, sign in regimes:
        if any(regime_sign(d, [(expr, sign)]) for d in discs):
            continue
        written = f"{_math(expr)} {'<' if sign < 0 else '>'} 0"
        listing = ", ".join(_math(_core(d)) for d in discs)
        raise InputError(
            f"the regime {written} does not fix the sign of "
            + (f"a discriminant of the characteristic polynomial ({listing})" if discs else
               "anything in the solution: the characteristic polynomial has no quadratic factor with parameters"),
            key=key,
            hint=(f"write the regime as a condition on {listing}, e.g. '{listing} < 0' for a complex pair"
                  if discs else "leave the regime out"),
        )


def _core(expr: sp.Expr) -> sp.Expr:
    """``expr`` without the factors whose sign the assumptions decide (their sign kept as +-1)."""
    numer, denom = sp.fraction(sp.factor(sp.together(expr)))
    out: sp.Expr = sp.Integer(1)
    for part, power in ((numer, 1), (denom, -1)):
        for factor in sp.Mul.make_args(part):
            if factor.is_positive:
                continue
            if factor.is_negative:
                out = -out
                continue
            out = out * factor**power
    return sp.expand(out) if out.is_polynomial() else out


def _math(expr: sp.Expr) -> str:
    """An expression as the user would type it back (``^`` for powers)."""
    return sp.sstr(expr).replace("**", "^")
