"""The records of a claim check and the helpers every item check shares.

Zero tests go through the one engine (``derive.verify.zero``) under the
default zero policy; the helpers here only adapt its verdicts to the items.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

import sympy as sp

from ..errors import EXIT_OK, EXIT_VERIFICATION
from ..settings import DEFAULT_ZERO_POLICY
from ..verify.zero import MatrixVerdict, ZeroVerdict, decide, decide_all

__all__ = [
    "STEP_ORDER", "CHECK_FORMATS", "CAUTION", "CheckItem", "CheckReport", "decide_entry", "decide_matrix",
    "is_zero", "clean", "clean_matrix", "matrix_rank", "plain", "short", "factor_text", "small_integers",
]

#: Derivation order: the first failed item in this order is the first wrong step.
STEP_ORDER: tuple[str, ...] = (
    "eigenvalues",
    "eigenvectors",
    "P",
    "D",
    "P_inv",
    "general solution",
    "IVP solution",
)

#: Output formats of :func:`render_check`.
CHECK_FORMATS: tuple[str, ...] = ("text", "latex", "markdown", "json")

#: The caution every check report carries.
CAUTION = (
    "This check report was produced by software. It records a substitution check of the "
    "claimed steps and does not replace the checker's own review: the report and the "
    "derivation must be checked and approved under the user's own quality procedures. "
    "The model (linearity, constant coefficients, parameter values) is the user's "
    "responsibility, and applicable codes and licensed professional practice govern "
    "the use of the result."
)


@dataclass(frozen=True)
class CheckItem:
    """One checked claim: passed or failed, why, and the residual that shows it.

    ``step`` is one of :data:`STEP_ORDER`; ``residual`` is the quantity that
    must vanish (a sympy object, ``None`` when the failure is structural);
    ``method`` says how zero or nonzero was decided; ``expected`` is the right
    value when it could be stated.
    """

    name: str
    step: str
    ok: bool
    detail: str
    residual: Any = None
    method: str = ""
    claimed: Any = None
    expected: Any = None

    @classmethod
    def vanished(cls, name: str, step: str, detail: str, *, verdict: Any, shape: tuple[int, int], claimed: Any) -> CheckItem:
        """A passed item whose residual (a ``shape`` matrix) the zero engine's ``verdict`` decided to be zero.

        ``detail`` is completed with how it was decided.
        """
        return cls(
            name=name, step=step, ok=True, detail=f"{detail} ({verdict.describe()})",
            residual=sp.ImmutableMatrix(sp.zeros(*shape)), method=verdict.method, claimed=claimed,
        )


@dataclass(frozen=True)
class CheckReport:
    """All checked items, in derivation order.

    >>> from derive.check import check
    >>> rep = check([[2, 0], [0, -1]], eigenvalues=[-1, 2])
    >>> rep.ok, rep.exit_code, rep.first_failure is None
    (True, 0, True)
    """

    items: tuple[CheckItem, ...]
    A: sp.ImmutableMatrix
    f: sp.ImmutableMatrix
    t: sp.Symbol
    x0: sp.ImmutableMatrix | None = None
    t0: sp.Expr = sp.Integer(0)
    constants: tuple[sp.Symbol, ...] = ()
    notices: tuple[str, ...] = ()

    @property
    def ok(self) -> bool:
        """True when there is at least one item and every item passed."""
        return bool(self.items) and all(item.ok for item in self.items)

    @property
    def first_failure(self) -> CheckItem | None:
        """The first failed item in derivation order, or None."""
        return next((item for item in self.items if not item.ok), None)

    @property
    def exit_code(self) -> int:
        """0 when every item passes, 1 when any fails."""
        return EXIT_OK if self.ok else EXIT_VERIFICATION

    @property
    def n(self) -> int:
        return self.A.shape[0]


# ---------------------------------------------------------------------------
# Zero tests: the one engine


def decide_entry(expr: Any, t: sp.Symbol | None = None) -> ZeroVerdict:
    """Is ``expr`` identically zero (``t`` the time variable, for switches and impulses)?"""
    return decide(expr, t=t, policy=DEFAULT_ZERO_POLICY)


def decide_matrix(entries: Sequence[Any], t: sp.Symbol | None = None) -> MatrixVerdict:
    """Every entry decided; zero when all are."""
    return decide_all(entries, t, policy=DEFAULT_ZERO_POLICY)


def is_zero(e: Any, t: sp.Symbol | None = None) -> bool:
    """True when ``e`` is identically zero."""
    return decide_entry(e, t).zero


def clean(e: sp.Expr) -> sp.Expr:
    """A residual in its shortest easy form, for display."""
    e = sp.expand(e)
    try:
        e = sp.cancel(e) if e.is_rational_function() else e
    except (sp.PolynomialError, TypeError, ValueError):
        pass
    if sp.count_ops(e) <= DEFAULT_ZERO_POLICY.simplify_ops // 3:
        s = sp.simplify(e)
        if sp.count_ops(s) < sp.count_ops(e):
            e = s
    return e


def clean_matrix(M: sp.MatrixBase) -> sp.ImmutableMatrix:
    """Each entry of ``M`` in its shortest easy form."""
    return sp.ImmutableMatrix(M.rows, M.cols, [clean(e) for e in M])


def matrix_rank(M: sp.MatrixBase, t: sp.Symbol | None = None) -> int:
    """The rank of ``M`` with the zero test deciding the pivots."""
    return int(sp.Matrix(M).rank(iszerofunc=lambda e: is_zero(e, t), simplify=False))


# ---------------------------------------------------------------------------
# Plain text of objects, for the detail sentences


def plain(obj: Any) -> str:
    """``obj`` as plain text."""
    from ..render.printing import plain_text

    return plain_text(obj)


def short(obj: Any, limit: int = 160) -> str:
    """``obj`` as plain text with powers as ^, cut at ``limit`` characters."""
    # Sentences are for people: powers as ^, as a hand derivation writes them.
    text = plain(obj).replace("**", "^")
    return text if len(text) <= limit else text[: limit - 3] + "..."


def factor_text(e: sp.Expr) -> str:
    """``e`` as a factor in running text: parenthesised unless it is a plain atom."""
    text = plain(e)
    if (e.is_Atom and not (e.is_number and e.is_negative)) or text.isalnum():
        return text
    return f"({text})"


def small_integers(v: sp.ImmutableMatrix) -> sp.ImmutableMatrix:
    """v scaled to small integers when its entries are rational (for a readable hint)."""
    entries = [sp.cancel(e) for e in v]
    if all(e.is_Rational for e in entries):
        den = sp.ilcm(*[e.q for e in entries]) if entries else 1
        ints = [int(e * den) for e in entries]
        g = sp.igcd(*ints) if any(ints) else 1
        first = next((x for x in ints if x != 0), 1)
        sign = -1 if first < 0 else 1
        return sp.ImmutableMatrix([[sp.Integer(sign * x // g)] for x in ints])
    return sp.ImmutableMatrix([[e] for e in entries])
