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
from .model import Condition, Parameter, System

__all__ = ["Relation", "Regime", "split_assumptions", "parse_relations", "apply_relations", "regimes"]

#: (expression, sign): the expression is negative (-1) or positive (+1)
Regime = tuple[sp.Expr, int]


def split_assumptions(items: Any, *, symbols: Mapping[str, sp.Symbol], key: str = "assume") -> tuple[Any, tuple[Regime, ...]]:
    """Separate regime inequalities ("c^2 < 4*k*m") from relations ("c^2 = 4*k*m").

    >>> k, m, c = sp.symbols("k m c", positive=True)
    >>> split_assumptions(["c^2 < 4 k m"], symbols={"k": k, "m": m, "c": c})
    ([], ((c**2 - 4*k*m, -1),))
    """
    if not items or isinstance(items, Mapping):
        return items, ()
    relations: list[Any] = []
    out: list[Regime] = []
    for i, item in enumerate(items):
        where = f"{key}[{i}]"
        if isinstance(item, sp.core.relational.StrictLessThan) or isinstance(item, sp.core.relational.StrictGreaterThan):
            expr = item.lhs - item.rhs
            out.append((sp.expand(expr), -1 if isinstance(item, sp.core.relational.StrictLessThan) else 1))
            continue
        if isinstance(item, str) and ("<" in item or ">" in item):
            if "=" in item or item.count("<") + item.count(">") != 1:
                raise InputError(
                    f"a regime is written 'lhs < rhs' or 'lhs > rhs' (strict, one comparison), found {item!r}",
                    key=where,
                )
            op = "<" if "<" in item else ">"
            lhs, rhs = item.split(op)
            expr = sp.expand(_text((lhs, rhs), symbols, where))
            if not expr.free_symbols:
                raise InputError(f"the regime {item!r} contains no parameter", key=where)
            out.append((expr, -1 if op == "<" else 1))
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
                f"a relation is written 'lhs = rhs' with one '=', found {item!r}", key=key
            )
        lhs, rhs = item.split("=")
        return _text((lhs, rhs), symbols, key)
    raise InputError(f"a relation must be an equation such as 'c^2 = 4*k*m', found {item!r}", key=key)


def _text(pair, symbols, key) -> sp.Expr:
    from .parsing import parse_expression

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
    if not items:
        return ()
    if isinstance(items, Mapping):
        out = []
        for s, v in items.items():
            sym = s if isinstance(s, sp.Symbol) else symbols.get(str(s))
            if sym is None:
                raise InputError(f"{s!r} is not a declared parameter", key=key)
            out.append((sym, sp.sympify(v, strict=True) if isinstance(v, sp.Basic) else _text((sym.name, v), symbols, key)))
        return tuple(out)
    out: list[Relation] = []
    for i, item in enumerate(items):
        where = f"{key}[{i}]"
        eq = sp.expand(_as_equation(item, symbols, where))
        params = sorted(eq.free_symbols, key=lambda s: s.name)
        if not params:
            raise InputError(f"the relation {item!r} contains no parameter", key=where)
        # prefer a parameter the relation contains to the first power
        choice = None
        for s in sorted(params, key=lambda s: (-_position(s, eq), s.name)):
            poly = sp.Poly(eq, s) if eq.is_polynomial(s) else None
            if poly is not None and poly.degree() == 1:
                choice = (s, sp.factor(sp.solve(eq, s)[0]))
                break
        if choice is None:
            sols = [(s, v) for s in params for v in sp.solve(eq, s) if _consistent(s, v)]
            if not sols:
                raise InputError(f"the relation {item!r} cannot be solved for a parameter", key=where)
            choice = sols[0]
        out.append(choice)
    return tuple(out)


def _position(s: sp.Symbol, eq: sp.Expr) -> int:
    # a parameter on the right-hand side of "c^2 = 4 k m" is the natural one to eliminate
    return 1 if eq.coeff(s) != 0 else 0


def _consistent(s: sp.Symbol, v: sp.Expr) -> bool:
    if s.is_positive and v.is_negative:
        return False
    return True


def apply_relations(system: System, relations: Sequence[Relation]) -> tuple[System, tuple[Condition, ...], tuple[str, ...]]:
    """Substitute the relations into A, f and x0; the eliminated parameter leaves the list."""
    if not relations:
        return system, (), ()
    sub = dict(relations)
    A = sp.ImmutableMatrix(system.A.xreplace(sub).applyfunc(sp.cancel))
    f = sp.ImmutableMatrix(system.f.xreplace(sub).applyfunc(sp.cancel))
    x0 = None if system.x0 is None else sp.ImmutableMatrix(system.x0.xreplace(sub))
    params: list[Parameter] = [p for p in system.params if p.symbol not in sub]
    values = {p.symbol: p.value for p in params if p.value is not None}
    notices = []
    conditions = []
    for s, v in relations:
        rel = sp.numer(sp.together(s - v))
        if rel.could_extract_minus_sign():
            rel = -rel
        conditions.append(Condition(expr=sp.expand(rel), relation="= 0", reason=f"the case solved here: {s} = {sp.sstr(v)}"))
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
