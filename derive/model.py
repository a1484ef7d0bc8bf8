"""The small, frozen data model every stage passes along.

Everything here is immutable: sympy objects are ``ImmutableMatrix`` and
``Expr``, collections are tuples.  Variants are made with
``dataclasses.replace``.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from enum import Enum
from typing import TYPE_CHECKING

import sympy as sp

if TYPE_CHECKING:  # pragma: no cover
    from .options import Outputs, SolveOptions
    from .steps import Step

__all__ = [
    "Parameter",
    "Tolerance",
    "System",
    "SheetMeta",
    "Case",
    "Relation",
    "Condition",
    "NumericCheck",
    "Verification",
    "Solution",
]


@dataclass(frozen=True)
class Parameter:
    """A declared symbolic parameter.

    ``symbol`` carries the sympy assumptions (positive, real, ...).  ``value``
    is an exact number used for numeric checks and plots, and in the algebra
    only when substitution is asked for (``System.substituted``).  ``unit`` and ``description`` are for the sheet's input table.
    """

    symbol: sp.Symbol
    value: sp.Expr | None = None
    unit: str = ""
    description: str = ""
    #: the spread of ``value`` for the tolerance band of the reading (None: no band for it)
    tolerance: Tolerance | None = None

    @property
    def name(self) -> str:
        return self.symbol.name


@dataclass(frozen=True)
class System:
    """x' = A x + f(t), optionally with x(t0) = x0.

    ``states`` are the state symbols (x_1 .. x_n unless the case names them);
    ``equations`` holds the equations as the user wrote them when the system
    was given as text, so the first step can show the extraction of A and f.
    """

    A: sp.ImmutableMatrix
    f: sp.ImmutableMatrix
    t: sp.Symbol
    states: tuple[sp.Symbol, ...]
    x0: sp.ImmutableMatrix | None = None
    t0: sp.Expr = sp.Integer(0)
    params: tuple[Parameter, ...] = ()
    equations: tuple[str, ...] = ()
    substituted: bool = False  # the parameter values were put into A, f, x0 before the decomposition
    #: (M, C, K, F) when the system was given as M q'' + C q' + K q = F (derive.modal shows the modes)
    second_order: tuple[sp.ImmutableMatrix, sp.ImmutableMatrix, sp.ImmutableMatrix, sp.ImmutableMatrix] | None = None
    time_unit: str = ""  # [system] time_unit as written ("" when not given); checked by derive.units
    units: tuple[tuple[str, str], ...] = ()  # [units]: (state or input name, unit as written)

    @property
    def n(self) -> int:
        return self.A.shape[0]

    @property
    def is_homogeneous(self) -> bool:
        return all(e == 0 for e in self.f)

    @property
    def is_ivp(self) -> bool:
        return self.x0 is not None

    def parameter_values(self) -> dict[sp.Symbol, sp.Expr]:
        """Parameters that have a numeric value, as a substitution map."""
        return {p.symbol: p.value for p in self.params if p.value is not None}


@dataclass(frozen=True)
class SheetMeta:
    """What the header block and the purpose section of a sheet carry."""

    title: str = "Solution of a linear system x' = A x + f(t)"
    project: str = ""
    calc_number: str = ""
    revision: str = "A"
    subject: str = ""
    prepared_by: str = ""
    checked_by: str = ""
    date: str = ""
    purpose: str = ""
    assumptions: tuple[str, ...] = ()
    references: tuple[str, ...] = ()
    notes: str = ""
    state_descriptions: tuple[tuple[str, str], ...] = ()  # (state name, meaning and unit)


@dataclass(frozen=True)
class Case:
    """A loaded case: the system, the sheet metadata and where it came from."""

    name: str
    system: System
    meta: SheetMeta = field(default_factory=SheetMeta)
    source: str | None = None
    source_hash: str = ""
    notices: tuple[str, ...] = ()
    options: SolveOptions | None = None  # [solve] and [outputs] (derive.options)
    #: ``[plot] span``: the time the response figure shows from t0 (None: from the slowest time constant)
    plot_span: sp.Expr | None = None
    #: ``[plot] frequency_response``: None not asked, () the range from the modes, (lo, hi) given (derive.frequency_plot)
    frequency_plot: tuple[sp.Expr, ...] | None = None


class Relation(str, Enum):
    """How a condition's expression compares with zero.

    A ``str`` enum: it equals, prints and serialises as its text.

    >>> Relation.NONZERO == "!= 0", f"{Relation.NEGATIVE}"
    (True, '< 0')
    """

    NONZERO = "!= 0"
    NEGATIVE = "< 0"
    POSITIVE = "> 0"
    ZERO = "= 0"
    NONNEGATIVE = ">= 0"
    NONPOSITIVE = "<= 0"

    __str__ = str.__str__
    def __format__(self, format_spec: str) -> str:
        return str.__format__(self, format_spec)


@dataclass(frozen=True)
class Condition:
    """A condition a step relies on, e.g. ``k1 - k2 != 0``.

    ``expr`` is the quantity compared with zero by ``relation`` (most often
    ``Relation.NONZERO``: it must not vanish); ``reason`` says which step
    relies on it.
    """

    expr: sp.Expr
    relation: Relation
    reason: str

    def __post_init__(self) -> None:
        # callers that still pass the text ("!= 0") get the enum member
        object.__setattr__(self, "relation", Relation(self.relation))


@dataclass(frozen=True)
class NumericCheck:
    """A numeric solution of the system compared with the exact one.

    ``rtol`` and ``atol`` are the integrator's tolerances; None for a route
    without them (the stepped matrix exponential).  ``modes`` counts the
    forcing modes t^k e^{gamma t} appended to the state on that route (0 when
    unforced or integrated).
    """

    method: str
    t_start: float
    t_end: float
    points: int
    rtol: float | None
    atol: float | None
    max_abs_gap: float
    max_rel_gap: float
    ok: bool
    modes: int = 0


@dataclass(frozen=True)
class Verification:
    """Independent evidence that the solution is right.

    ``residual`` is x' - A x - f after reduction; ``residual_method`` says how
    zero was established ("exact" or a numeric identity test at high
    precision); ``initial_residual`` is x(t0) - x0 for an initial value problem.
    """

    residual: sp.ImmutableMatrix
    residual_zero: bool
    residual_method: str
    initial_residual: sp.ImmutableMatrix | None
    initial_ok: bool | None
    numeric: NumericCheck | None
    similarity_ok: bool
    notes: tuple[str, ...] = ()

    @property
    def ok(self) -> bool:
        return (
            self.residual_zero
            and self.similarity_ok
            and self.initial_ok is not False
            and (self.numeric is None or self.numeric.ok)
        )


@dataclass(frozen=True)
class Solution:
    """The result of ``derive.solve``.

    ``x`` is a column Matrix in the very ``t`` the caller passed;
    ``constants`` are the free constants of a general solution as they appear
    in ``x`` (empty for an initial value problem).  ``eigenvalues`` follow the
    column order of ``P``; ``D`` is diagonal, or the Jordan form when the
    matrix is defective (``is_diagonalizable`` says which).
    """

    system: System
    x: sp.ImmutableMatrix
    constants: tuple[sp.Symbol, ...]
    eigenvalues: tuple[sp.Expr, ...]
    P: sp.ImmutableMatrix
    D: sp.ImmutableMatrix
    P_inv: sp.ImmutableMatrix
    is_diagonalizable: bool
    homogeneous: sp.ImmutableMatrix
    particular: sp.ImmutableMatrix
    steps: tuple["Step", ...]
    verification: Verification
    conditions: tuple[Condition, ...] = ()
    notices: tuple[str, ...] = ()
    case: Case | None = None
    outputs: Outputs | None = None  # y = C x + D u, when outputs were asked for (derive.options)

    @property
    def ok(self) -> bool:
        return self.verification.ok

    @property
    def t(self) -> sp.Symbol:
        return self.system.t


@dataclass(frozen=True)
class Tolerance:
    """How far a parameter may stray from its value: ``amount`` relative (0.05 for 5 %) or absolute.

    An absolute amount is in the parameter's own unit.  The tolerance box has
    the corners ``value - half_width`` and ``value + half_width``.

    >>> Tolerance(sp.Rational(5, 100), relative=True).half_width(sp.Integer(4)), str(Tolerance(sp.Rational(1, 10)))
    (1/5, '± 0.1')
    """

    amount: sp.Expr
    relative: bool = False

    def half_width(self, value: sp.Expr) -> sp.Expr:
        """The absolute spread about ``value`` (exact)."""
        return sp.Abs(value) * self.amount if self.relative else self.amount

    def __str__(self) -> str:
        if self.relative:
            return f"± {_short(self.amount * 100)} %"
        return f"± {_short(self.amount)}"


def _short(x: sp.Expr) -> str:
    """An exact number as a short decimal where it is one (0.1, 5), else as sympy prints it."""
    if x.is_Integer:
        return str(x)
    value = float(x)
    text = f"{value:.6g}"
    return text if sp.nsimplify(text, rational=True) == x else str(x)
