"""API arguments -> System: the one place where the Python interface's values become exact.

Numbers become Rationals (a float with a notice), strings go through the
safe parser (``derive.parsing``), sympy objects are kept with their floats
made exact.  Matrices, forcing, initial values and parameters are checked
for shape and for t where t must not appear.
"""

from __future__ import annotations

from fractions import Fraction
from typing import Any, Iterable, Mapping, Sequence

import sympy as sp

from ..errors import InputError
from ..model import Parameter, System

__all__ = ["exact_value", "build_system"]


def exact_value(value: Any, *, symbols: Mapping[str, sp.Symbol], key: str, notices: list[str]) -> sp.Expr:
    """A user value as an exact sympy object: numbers, strings (parsed safely), sympy."""
    if isinstance(value, bool):
        raise InputError(f"expected a number or an expression, found the boolean {value}", key=key)
    if isinstance(value, sp.Basic):
        floats = value.atoms(sp.Float)
        if floats:
            rep = {fl: sp.Rational(str(fl)) for fl in floats}
            notices.append(f"{key}: floating-point numbers read as exact rationals")
            value = value.xreplace(rep)
        return value
    if isinstance(value, int):
        return sp.Integer(value)
    if isinstance(value, float):
        r = sp.Rational(repr(value))
        notices.append(f"{key}: {value!r} read as the exact value {r}")
        return r
    if isinstance(value, str):
        from ..parsing import parse_expression

        expr, notes = parse_expression(value, symbols=symbols, key=key)
        notices.extend(notes)
        return expr
    if isinstance(value, Fraction):
        return sp.Rational(value.numerator, value.denominator)
    raise InputError(f"expected a number or an expression, found {type(value).__name__}", key=key)


def _params(params: Any) -> tuple[tuple[Parameter, ...], dict[str, sp.Symbol]]:
    out: list[Parameter] = []
    if params is None:
        return (), {}
    if isinstance(params, Mapping):
        items: Iterable = params.items()
    else:
        items = [(p, None) if not isinstance(p, Parameter) else (p, p) for p in params]
    for k, v in items:
        if isinstance(v, Parameter):
            out.append(v)
            continue
        sym = k if isinstance(k, sp.Symbol) else sp.Symbol(str(k), real=True)
        val = None
        if v is not None:
            val = exact_value(v, symbols={}, key=f"params[{sym.name}]", notices=[])
        out.append(Parameter(symbol=sym, value=val))
    return tuple(out), {p.name: p.symbol for p in out}


def build_system(
    A: Any,
    f: Any = None,
    *,
    t: sp.Symbol | None = None,
    x0: Any = None,
    t0: Any = 0,
    params: Any = None,
    states: Sequence[sp.Symbol] | None = None,
) -> tuple[System, tuple[str, ...]]:
    """Normalise API arguments into a System (exact objects only)."""
    notices: list[str] = []
    t = t if t is not None else sp.Symbol("t")
    if not isinstance(t, sp.Symbol):
        raise InputError(f"t must be a sympy Symbol, found {type(t).__name__}", key="t")
    plist, names = _params(params)
    names = dict(names)
    names.setdefault(t.name, t)
    if isinstance(A, sp.MatrixBase):
        rows = A.tolist()
    else:
        try:
            rows = [list(r) for r in A]
        except TypeError:
            raise InputError("A must be a square matrix: a sympy Matrix or a list of rows", key="A")
    n = len(rows)
    if n == 0 or any(len(r) != n for r in rows):
        shape = f"{n} rows of lengths {[len(r) for r in rows]}"
        raise InputError(f"A must be square, found {shape}", key="A")
    Am = sp.ImmutableMatrix(
        [[exact_value(v, symbols=names, key=f"A[{i}][{j}]", notices=notices) for j, v in enumerate(r)] for i, r in enumerate(rows)]
    )
    if Am.has(t):
        raise InputError(f"A depends on {t}: this solver needs constant coefficients", key="A")
    if f is None:
        fm = sp.ImmutableMatrix(sp.zeros(n, 1))
    else:
        fl = list(f)
        if len(fl) != n:
            raise InputError(f"A is {n}x{n} but f has {len(fl)} entries", key="f")
        fm = sp.ImmutableMatrix([exact_value(v, symbols=names, key=f"f[{i}]", notices=notices) for i, v in enumerate(fl)])
    x0m = None
    if x0 is not None:
        xl = list(x0)
        if len(xl) != n:
            raise InputError(f"A is {n}x{n} but x0 has {len(xl)} entries", key="x0")
        x0m = sp.ImmutableMatrix([exact_value(v, symbols=names, key=f"x0[{i}]", notices=notices) for i, v in enumerate(xl)])
        if x0m.has(t):
            raise InputError(f"x0 depends on {t}: initial values must be constants", key="x0")
    t0e = exact_value(t0, symbols=names, key="t0", notices=notices)
    if t0e.has(t) or not t0e.is_real and t0e.is_real is not None:
        raise InputError(f"t0 must be a real number, found {t0e}", key="t0")
    known = {p.symbol for p in plist}
    for s in (Am.free_symbols | fm.free_symbols | (x0m.free_symbols if x0m is not None else set())) - {t}:
        if s not in known:
            plist = plist + (Parameter(symbol=s),)
            known.add(s)
    if states is None:
        states = tuple(sp.Symbol(f"x_{i + 1}") for i in range(n))
    system = System(A=Am, f=fm, t=t, states=tuple(states), x0=x0m, t0=t0e, params=plist)
    return system, tuple(notices)
