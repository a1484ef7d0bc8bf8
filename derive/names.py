"""Declared names: which are allowed, what to suggest instead, near misses.

States, parameters and the independent variable are named by the user; a
name may not shadow a function or a constant of the expression syntax, nor
be a word the syntax reserves.  The messages say what the name is and offer
another, without assuming the reader knows the syntax's host language.
"""

from __future__ import annotations

import difflib
import re
from collections.abc import Collection, Iterable, Mapping
from types import MappingProxyType

import sympy as sp

from .functions import CONSTANTS, FUNCTIONS, RESERVED_NAMES

__all__ = ["name_problem", "suggest_name", "split_names", "nearest"]

_IDENTIFIER = re.compile(r"[A-Za-z][A-Za-z0-9_]*\Z")


def name_problem(name: str) -> str | None:
    """Why ``name`` cannot be a declared name, or ``None`` when it can (see :func:`suggest_name`).

    >>> name_problem("T1") is None, name_problem("exp")
    (True, "'exp' is reserved: it is the function exp(x)")
    """
    if not _IDENTIFIER.match(name):
        return (
            f"{name!r} is not a valid name (expected a letter followed by letters, digits or underscores)"
        )
    if name not in RESERVED_NAMES:
        return None
    if name in FUNCTIONS:
        what = f"the function {FUNCTIONS[name].usage}"
    elif name in CONSTANTS:
        what = f"the constant {name} = {sp.N(CONSTANTS[name], 6)}"
    else:
        what = "a word of the formula syntax, so it cannot stand for a value"
    return f"{name!r} is reserved: it is {what}"


def suggest_name(name: str) -> str:
    """What to write instead of a name that :func:`name_problem` refuses.

    >>> suggest_name("lambda")
    "choose another name, e.g. 'lam'"
    """
    if name in RESERVED_NAMES:
        return f"choose another name, e.g. {_ALTERNATIVES.get(name, name + '1')!r}"
    cleaned = re.sub(r"[^A-Za-z0-9_]", "", name).lstrip("0123456789_")
    example = cleaned if cleaned and cleaned not in RESERVED_NAMES else "x1"
    return f"a name starts with a letter and has only letters, digits and underscores, e.g. {example!r}"


# Familiar short forms where appending a digit would read oddly.
_ALTERNATIVES: Mapping[str, str] = MappingProxyType({"lambda": "lam", "e": "e0", "pi": "p0", "in": "u_in"})


def split_names(word: str, names: Collection[str]) -> tuple[str, ...] | None:
    """``word`` as a run of two or more of ``names`` (fewest pieces), or ``None``.

    ``RC`` with R and C declared is one unknown name, and most likely meant
    as the product R*C.

    >>> split_names("RCk", ["R", "C", "k", "Ck"])
    ('R', 'Ck')
    """
    best: dict[int, tuple[str, ...]] = {0: ()}
    for end in range(1, len(word) + 1):
        for start in range(end):
            piece = word[start:end]
            if start in best and piece in names and piece != word:
                cand = best[start] + (piece,)
                if end not in best or len(cand) < len(best[end]):
                    best[end] = cand
    found = best.get(len(word))
    return found if found and len(found) >= 2 else None


def nearest(word: str, candidates: Iterable[str]) -> str | None:
    """The candidate closest to ``word`` (difflib), or ``None``.

    >>> nearest("tempp", ["temp", "time"])
    'temp'
    """
    found = difflib.get_close_matches(word, sorted(candidates), n=1, cutoff=0.6)
    return found[0] if found else None
