"""The contract of a forcing method, the problem it is given and the pieces it returns."""

from __future__ import annotations

import time
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, ClassVar, Iterable, TypeAlias

import sympy as sp

from ...model import Condition, System
from ...settings import DEFAULT_SETTINGS, Settings
from ...spectral import Decomposition
from ...steps import Step
from ...verify.pieces import PieceRecord

__all__ = [
    "Budget",
    "Problem",
    "Pieces",
    "ForcingMethod",
    "constant_base",
    "is_real_data",
    "integration_symbol",
    "COORDINATE_LETTERS",
    "coordinate_base",
    "case_names",
]

if TYPE_CHECKING:
    from ...model import Case

Matrix: TypeAlias = sp.ImmutableMatrix

#: The letters the decoupled coordinates (x = P y) may take, in order of preference (not eta, xi:
#: the modal coordinates of derive.modal; not zeta, the damping ratio; not v, the eigenvectors).
COORDINATE_LETTERS = ("y", "z", "w", "psi", "chi")


def constant_base(system: System) -> str:
    """The letter of the free constants: c, unless the system uses c_1 ... already.

    >>> from derive.pipeline import build_system
    >>> constant_base(build_system([[0, 1], [-1, 0]])[0])
    'c'
    """
    used = {s.name for s in system.A.free_symbols | system.f.free_symbols} | {s.name for s in system.states}
    used |= {p.name for p in system.params} | {system.t.name}
    n = system.n
    for base in ("c", "C", "K", "k"):
        if not any(f"{base}_{i + 1}" in used or f"{base}{i + 1}" in used for i in range(n)):
            return base
    return "c_const"


def coordinate_base(system: System, *, taken: Iterable[str] = ()) -> str:
    """The letter of the decoupled coordinates: the first of ``COORDINATE_LETTERS`` no name uses.

    A state ``y`` (or ``y'``, ``y_1``), a parameter, the time or a name in ``taken``
    (inputs, outputs) rules a letter out, so the sheet never writes one letter for two things.

    >>> from derive.pipeline import build_system
    >>> coordinate_base(build_system([[0, 1], [-1, 0]])[0])
    'y'
    >>> coordinate_base(build_system([[0, 1], [-1, 0]], states=sp.symbols("y z"))[0])
    'w'
    """
    names = {x.name for x in system.A.free_symbols | system.f.free_symbols | set(system.states)}
    if system.x0 is not None:
        names |= {x.name for x in system.x0.free_symbols}
    names |= {p.name for p in system.params} | {system.t.name} | set(taken)
    # y' and y'' (a reduction of order) are the state y's derivatives: y is in use
    used = {n.rstrip("'") or n for n in names}
    for letter in COORDINATE_LETTERS:
        if letter in used or any(n.startswith(letter + "_") or n[len(letter):].isdigit() and n.startswith(letter) for n in used):
            continue
        return letter
    return "y_d"


def case_names(case: Case | None) -> tuple[str, ...]:
    """The names a case declares besides the system's: inputs, outputs, and y for the output vector."""
    if case is None or case.options is None:
        return ()
    options = case.options
    names = [s.name for s, _ in options.inputs]
    if options.outputs is not None:
        names += ["y", *options.outputs.names, *(s.name for s, _ in options.outputs.inputs)]
    return tuple(names)


def is_real_data(system: System) -> bool:
    """True when A, f, x0 and t0 are real for real t and real parameters (a real form is then due)."""
    items = list(system.A) + list(system.f) + (list(system.x0) if system.x0 is not None else []) + [system.t0]
    if system.t.is_real is False:
        return False
    for e in items:
        if e.is_real is True:
            continue
        # expressions in t: real when every symbol is real and no i appears
        if not e.has(sp.I) and all((s.is_real or s == system.t) for s in e.free_symbols):
            continue
        return False
    return True


def integration_symbol(system: System) -> sp.Symbol:
    """A name for the variable of integration that the system does not use (s, tau, ...)."""
    used = {x.name for x in system.A.free_symbols | system.f.free_symbols} | {x.name for x in system.states}
    used |= {p.name for p in system.params} | {system.t.name}
    for name in ("s", "tau", "sigma", "s_1"):
        if name not in used:
            return sp.Symbol(name, real=True)
    return sp.Dummy("s", real=True)


@dataclass
class Budget:
    """Seconds left for the convolution integrals of one solve (shared by its intervals)."""

    left: float
    each: float

    def take(self) -> float:
        """The limit for the next integral: its own share, or what is left."""
        return min(self.each, self.left)

    def spend(self, since: float) -> None:
        """Charge the time elapsed since the monotonic clock read ``since``."""
        self.left -= time.monotonic() - since


@dataclass(frozen=True)
class Problem:
    """What a forcing method is given: the system, its decomposition and the names.

    ``constant_base`` names the free constants (``c`` gives c_1, c_2, ...);
    ``real`` says whether the data are real (a real form is then due);
    ``s`` is the variable of integration and ``y`` the decoupled unknowns;
    ``numbers`` are symbols that stand for real constants (the time shift's
    cos(w t0), sin(w t0), e^{a t0}): the methods group them like numbers, not
    factor them like parameters.
    """

    system: System
    dec: Decomposition
    settings: Settings
    constant_base: str
    real: bool
    s: sp.Symbol
    y: tuple[sp.Symbol, ...]
    budget: Budget = field(compare=False)
    numbers: frozenset[sp.Symbol] = frozenset()

    @classmethod
    def of(
        cls,
        system: System,
        dec: Decomposition,
        *,
        settings: Settings = DEFAULT_SETTINGS,
        taken: Iterable[str] = (),
        numbers: Iterable[sp.Symbol] = (),
    ) -> "Problem":
        """The problem of one solve (a fresh integration budget); ``taken``: names the case declares besides the system's."""
        letter = coordinate_base(system, taken=taken)
        return cls(
            system=system,
            dec=dec,
            settings=settings,
            constant_base=constant_base(system),
            real=is_real_data(system),
            s=integration_symbol(system),
            y=tuple(sp.Symbol(f"{letter}_{i + 1}") for i in range(system.n)),
            budget=Budget(left=settings.integrate_budget, each=settings.integrate_seconds),
            numbers=frozenset(numbers),
        )

    @property
    def t(self) -> sp.Symbol:
        return self.system.t

    @property
    def n(self) -> int:
        return self.system.n

    def constants(self, *, real: bool = False) -> tuple[sp.Symbol, ...]:
        """c_1 ... c_n (declared real when ``real``)."""
        kw = {"real": True} if real else {}
        return tuple(sp.Symbol(f"{self.constant_base}_{i + 1}", **kw) for i in range(self.n))


@dataclass(frozen=True)
class Pieces:
    """What a forcing method returns: the solution, in one piece or many, with its steps.

    ``x = homogeneous + particular``; ``constants`` are the free constants in
    ``x`` (empty for an initial value problem).  ``steps`` run from the
    decoupling to the recombination (the assembly adds the steady state and
    the result).  ``records`` holds one ``PieceRecord`` per interval for the
    piecewise verification; empty when ``x`` is one closed form for all t,
    checked by ``derive.verify.verify``.  ``steady`` asks for the steady-state
    steps (of the last interval when there are records).
    """

    x: Matrix
    homogeneous: Matrix
    particular: Matrix
    constants: tuple[sp.Symbol, ...]
    steps: tuple[Step, ...]
    records: tuple[PieceRecord, ...] = ()
    conditions: tuple[Condition, ...] = ()
    notices: tuple[str, ...] = ()
    steady: bool = True


class ForcingMethod:
    """Base class of the forcing methods: how x' = A x + f is integrated for one class of f.

    A method is given a ``Problem`` (the system with its decomposition
    A = P J P^-1 already made, the names and the settings) and returns
    ``Pieces``.  It carries out three stages of the pipeline for its class of
    input: decouple (g = P^-1 f and the ``DecoupleStep``), integrate each
    scalar equation, and recombine x = P y (with the constants from x0).  It
    does not verify, restore regime roots, add the result step or build the
    ``Solution``: ``derive.solving.assembly`` does that once for every method.

    Subclasses set ``name`` and implement:

    * ``accepts(problem)`` -- True when the method can integrate this
      forcing.  Methods are asked in the order of
      ``derive.solving.methods.METHODS``; the first that accepts solves.
    * ``solve(problem)`` -- the ``Pieces``.  Raise a ``DeriveError``
      (``UnsupportedError``, ``LimitError``) for an input the method accepted
      but cannot finish; never return an unchecked guess.
    """

    name: ClassVar[str] = "method"

    def accepts(self, problem: Problem) -> bool:  # pragma: no cover - the contract
        raise NotImplementedError

    def solve(self, problem: Problem) -> Pieces:  # pragma: no cover - the contract
        raise NotImplementedError
