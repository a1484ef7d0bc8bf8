"""A sum printed in the order its terms are given, for results collected by mode (display only)."""

from __future__ import annotations

from typing import Any, Sequence

import sympy as sp

__all__ = ["Terms", "signed", "terms_text"]


class Terms(sp.Expr):
    """A sum shown with its terms in the order given (display only: never computed with).

    The printers order the terms of an ``Add`` their own way; a result
    collected by mode (constant, each exponential, the input's own modes)
    reads in that order, so it is handed to the printers as ``Terms``.
    ``value`` is the sum itself.

    >>> t = sp.Symbol("t")
    >>> terms_text(Terms(sp.Integer(2), -sp.exp(-t)).args, str, "(%s)")
    '2 - exp(-t)'
    """

    def __new__(cls, *terms: Any) -> "Terms":
        return sp.Expr.__new__(cls, *(sp.sympify(x, strict=True) for x in terms))

    @property
    def value(self) -> sp.Expr:
        """The sum of the terms."""
        return sp.Add(*self.args)


def signed(term: sp.Expr) -> tuple[bool, sp.Expr]:
    """(negative, magnitude) of a term; an unevaluated product keeps its factors (no sum is multiplied out).

    >>> signed(sp.Mul(-3, sp.Symbol("x") + 1, evaluate=False))
    (True, 3*(x + 1))
    """
    if term.is_Mul and term.args and term.args[0].is_Number and term.args[0].is_negative:
        head = -term.args[0]
        rest = term.args[1:]
        return True, (sp.Mul(head, *rest, evaluate=False) if head != 1 else sp.Mul(*rest, evaluate=False) if len(rest) > 1 else rest[0])
    if term.could_extract_minus_sign():
        return True, -term
    return False, term


def terms_text(terms: Sequence[sp.Expr], show: Any, bracket: str) -> str:
    """Terms joined by their signs, each printed by ``show``; a term that is a sum in ``bracket`` ("(%s)")."""
    out = ""
    for k, term in enumerate(terms):
        negative, body = signed(term)
        text = show(body)
        if body.is_Add:
            text = bracket % text
        if k == 0:
            out = ("-" if negative else "") + text
        else:
            out += (" - " if negative else " + ") + text
    return out or "0"
