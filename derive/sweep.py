"""Parameter sweeps: one case file, one case per combination of values.

A case file may carry a ``[sweep]`` table whose keys are declared parameters
(or inputs of ``[inputs]``) and whose values are non-empty lists::

    [sweep]
    k = [1, 2, "5/2"]     # numbers: k is replaced by the exact number
    c = ["2*m", 0.5]      # an expression in other parameters: c is replaced by it
    u = ["step(t)", "sin(2*t)"]   # an input: the case is read again with this formula for u

Every combination (the product, in the order of the file) becomes its own
:class:`~derive.model.Case`, solved exactly with the substituted value: a
number removes the parameter from the algebra altogether (so a symbolic case
becomes a numeric one and the eigenvalues are plain numbers), a relation
ties it to the parameters that remain.  The case names read like
``beam-k_2-c_2m`` and obey the output-name rules of
:func:`derive.output.check_stem`.
"""

from __future__ import annotations

import hashlib
import itertools
import re
from collections.abc import Mapping
from dataclasses import dataclass, replace
from typing import Any, Callable, Sequence

import sympy as sp

from .errors import CaseFileError, LimitError
from .model import Case
from .parsing import DEFAULT_LIMITS, Limits, expression_names, nearest, parse_expression

__all__ = ["MAX_SWEEP_CASES", "SweepValue", "parse_sweep", "expand_sweep", "sweep_name"]

#: More combinations than this from one file is almost always a typo in a list.
MAX_SWEEP_CASES = 1000

# How the characters of a value's text appear in a case name; everything else
# outside [A-Za-z0-9._-] becomes "_".  "/" and "*" are common in values, so they
# get readable replacements instead of an anonymous "_".
_NAME_MAP = {"/": "over", "*": "", " ": "", "(": "", ")": "", "+": "plus", "^": "pow", "=": "-eq-", "<": "-lt-", ">": "-gt-"}
_NAME_BAD = re.compile(r"[^A-Za-z0-9._-]")
_MAX_NAME = 120


@dataclass(frozen=True)
class SweepValue:
    """One value of one swept parameter: the exact value and its text for names."""

    parameter: str
    value: sp.Expr
    label: str
    key: str
    #: the formula as written when the swept name is an input of ``[inputs]`` (None for a parameter)
    input_text: str | None = None


def _label(raw: object) -> str:
    text = raw if isinstance(raw, str) else repr(raw)
    text = text.replace("**", "^")
    out = "".join(_NAME_MAP.get(ch, ch) for ch in text)
    return _NAME_BAD.sub("_", out) or "_"


def _capped(name: str) -> str:
    if len(name) > _MAX_NAME:
        # Keep it readable at the front and unique at the back.
        digest = hashlib.sha256(name.encode("utf-8")).hexdigest()[:10]
        name = f"{name[: _MAX_NAME - 11]}-{digest}"
    return name


def relation_name(base: str, relations: Sequence[str]) -> str:
    """The output name of a case solved on relations, so two ``--case`` runs keep both sheets.

    >>> relation_name("mount", ["c^2 = 4*k*m"])
    'mount-case-cpow2-eq-4km'
    >>> relation_name("mount", ["c^2 < 4*k*m"])
    'mount-case-cpow2-lt-4km'
    """
    return _capped("-".join([f"{base}-case", *(_label(r).strip("-") for r in relations)]))


def sweep_name(base: str, values: tuple[SweepValue, ...]) -> str:
    """The case name of one combination, e.g. ``beam-k_2-c_2m``.

    >>> sweep_name("beam", (SweepValue("k", sp.Integer(2), "2", "sweep.k[1]"),))
    'beam-k_2'
    """
    return _capped("-".join([base, *(f"{v.parameter}_{v.label}" for v in values)]))


def parse_sweep(
    raw: object, base: Case, *, file: str | None = None, limits: Limits = DEFAULT_LIMITS, inputs: Mapping[str, Any] = {}
) -> tuple[tuple[SweepValue, ...], ...]:
    """Check a ``[sweep]`` table against the case's parameters; one tuple of values per parameter."""
    if not isinstance(raw, dict):
        raise CaseFileError(f"sweep is {type(raw).__name__}; expected a table such as [sweep] k = [1, 2]", file=file, key="sweep")
    if not raw:
        raise CaseFileError("[sweep] is empty; expected at least one parameter with a list of values", file=file, key="sweep")
    params = {p.name: p for p in base.system.params}
    swept = set(raw)
    out: list[tuple[SweepValue, ...]] = []
    for name, values in raw.items():
        key = f"sweep.{name}"
        if name in inputs:
            out.append(_input_values(name, values, base, key=key, file=file, limits=limits))
            continue
        if name not in params:
            guess = nearest(name, list(params))
            declared = ", ".join(params) or "none"
            raise CaseFileError(
                f"{name!r} is not a declared parameter; a sweep varies parameters declared as "
                f"[parameters.NAME] (declared: {declared})",
                file=file,
                key=key,
                hint=f"did you mean {guess!r}?" if guess else None,
            )
        if not isinstance(values, list) or not values:
            raise CaseFileError(
                f"{key} is {'an empty list' if values == [] else type(values).__name__}; "
                "expected a non-empty list of numbers or expression strings, e.g. [1, 2, \"2*m\"]",
                file=file,
                key=key,
            )
        symbol = params[name].symbol
        others = {p: params[p].symbol for p in params if p not in swept}
        items: list[SweepValue] = []
        for i, v in enumerate(values):
            vkey = f"{key}[{i}]"
            if isinstance(v, bool) or not isinstance(v, (int, float, str)):
                raise CaseFileError(
                    f"{vkey} is {type(v).__name__} ({v!r}); expected a number or an expression string",
                    file=file,
                    key=vkey,
                )
            if isinstance(v, str):
                for used in expression_names(v):
                    if used in swept:
                        raise CaseFileError(
                            f"{vkey} = {v!r} uses {used!r}, which is swept itself; expected an expression "
                            "in parameters that are not swept",
                            file=file,
                            key=vkey,
                        )
            expr, _ = parse_expression(v, symbols=others, key=vkey, file=file, limits=limits)
            if base.system.t in expr.free_symbols:
                raise CaseFileError(f"{vkey} = {v!r} depends on {base.system.t}; expected a constant", file=file, key=vkey)
            for word in ("positive", "negative", "nonnegative", "nonpositive", "nonzero"):
                if getattr(symbol, f"is_{word}") is True and getattr(expr, f"is_{word}") is False:
                    raise CaseFileError(
                        f"{vkey} = {v!r} violates the assumption {word!r} of parameters.{name}",
                        file=file,
                        key=vkey,
                    )
            if any(expr == seen.value for seen in items):
                raise CaseFileError(f"{vkey} = {v!r} repeats an earlier value of {key}", file=file, key=vkey)
            items.append(SweepValue(parameter=name, value=expr, label=_label(v), key=vkey))
        out.append(tuple(items))
    count = 1
    for group in out:
        count *= len(group)
    if count > MAX_SWEEP_CASES:
        raise LimitError(
            f"[sweep] makes {count} cases, more than the limit of {MAX_SWEEP_CASES} per file",
            file=file,
            key="sweep",
        )
    return tuple(out)


def _input_values(
    name: str, values: object, base: Case, *, key: str, file: str | None, limits: Limits
) -> tuple[SweepValue, ...]:
    """The formulas of a swept input, each checked as ``[inputs]`` reads it (parameters and t)."""
    if not isinstance(values, list) or not values:
        raise CaseFileError(f"{key} is not a non-empty list; expected formulas in {base.system.t}, "
                            "e.g. [\"step(t)\", \"sin(2*t)\"]", file=file, key=key)
    symbols = {p.name: p.symbol for p in base.system.params} | {base.system.t.name: base.system.t}
    items: list[SweepValue] = []
    for i, v in enumerate(values):
        vkey = f"{key}[{i}]"
        if isinstance(v, bool) or not isinstance(v, (int, float, str)):
            raise CaseFileError(f"{vkey} is {type(v).__name__} ({v!r}); expected a formula in {base.system.t}",
                                file=file, key=vkey)
        expr, _ = parse_expression(v, symbols=symbols, key=vkey, file=file, limits=limits, t=base.system.t)
        if any(expr == seen.value for seen in items):
            raise CaseFileError(f"{vkey} = {v!r} repeats an earlier value of {key}", file=file, key=vkey)
        items.append(SweepValue(parameter=name, value=expr, label=_label(v), key=vkey, input_text=str(v)))
    return tuple(items)


def _substitute(base: Case, combo: tuple[SweepValue, ...]) -> Case:
    rep: Mapping[Any, sp.Expr] = {
        next(p.symbol for p in base.system.params if p.name == v.parameter): v.value for v in combo if v.input_text is None
    }
    s = base.system
    system = replace(
        s,
        A=sp.ImmutableMatrix(s.A.xreplace(rep)),
        f=sp.ImmutableMatrix(s.f.xreplace(rep)),
        x0=None if s.x0 is None else sp.ImmutableMatrix(s.x0.xreplace(rep)),
        params=tuple(p for p in s.params if p.symbol not in rep),
        second_order=None if s.second_order is None else (
            s.second_order[0].xreplace(rep), s.second_order[1].xreplace(rep), s.second_order[2].xreplace(rep),
            s.second_order[3].xreplace(rep)),
    )
    said = ", ".join(f"{v.parameter} = {v.input_text if v.input_text is not None else sp.sstr(v.value)}" for v in combo)
    line = f"This case is one combination of a parameter sweep declared in the case file: {said}."
    meta = replace(base.meta, notes=f"{base.meta.notes}\n\n{line}" if base.meta.notes else line)
    options = None if base.options is None else base.options.xreplace(rep)
    return replace(base, name=sweep_name(base.name, combo), system=system, meta=meta, options=options)


def expand_sweep(
    base: Case, raw: object, *, file: str | None = None, limits: Limits = DEFAULT_LIMITS,
    inputs: Mapping[str, Any] = {}, rebuild: Callable[[dict[str, Any]], Case] | None = None,
) -> tuple[Case, ...]:
    """One Case per combination of the ``[sweep]`` values, named ``<base>-<param>_<value>...``.

    ``inputs`` is the case file's ``[inputs]`` table and ``rebuild`` reads the
    case again with another such table (``casefile`` passes both); without
    them only parameters can be swept.

    >>> from derive.casefile import loads_case
    >>> base = loads_case('[system]\\nmatrix = [["-k"]]\\n[parameters.k]\\nassume = ["positive"]')
    >>> [c.name for c in expand_sweep(base, {"k": [1, 2]})]
    ['case-k_1', 'case-k_2']
    """
    axes = parse_sweep(raw, base, file=file, limits=limits, inputs=inputs if rebuild is not None else {})
    cases: list[Case] = []
    for combo in itertools.product(*axes):
        # a swept input: the case is read again with its formula, so it enters f exactly as [inputs] puts it
        chosen = {v.parameter: v.input_text for v in combo if v.input_text is not None}
        cases.append(_substitute(rebuild({**inputs, **chosen}) if chosen and rebuild else base, combo))
    seen: dict[str, int] = {}
    for i, c in enumerate(cases):
        if c.name in seen:
            # Distinct values with the same text after sanitising ("1.0" vs 1.0):
            # make the name unique by position rather than silently overwrite.
            cases[i] = replace(c, name=f"{c.name[:_MAX_NAME - 6]}-n{i + 1}")
        seen[cases[i].name] = i
    return tuple(cases)
