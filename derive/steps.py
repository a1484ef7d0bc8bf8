"""Step records: what each stage computed, as data.

A step is a small frozen dataclass holding the exact sympy objects of one
piece of the derivation.  Mathematics never writes LaTeX: the renderers in
``derive.render`` turn each step into text, choosing a template partial by the
step's ``kind`` (``templates/steps/<kind>.tex.j2`` for LaTeX).  Adding a step
kind means adding a dataclass here, one partial per renderer, and an entry in
``tests/test_render.py``'s sample of every kind.

Field conventions: matrices are ``ImmutableMatrix``; a ``Lazy[...]`` field
may be given a ``Deferred`` and reads as its value; ``lam`` is the symbol
used for the eigenvalue variable; a ``root_of`` field, when not ``None``, is
the irreducible polynomial (in ``lam``) whose roots share a step: the step is
then computed once, for a generic root ``lam``, and ``instances`` lists the
concrete values.
"""

from __future__ import annotations

from dataclasses import dataclass, fields, is_dataclass, replace
from typing import Any, Callable, ClassVar, Generic, Mapping, TypeAlias, TypeVar

import sympy as sp

__all__ = [
    "Deferred",
    "Lazy",
    "substitute",
    "Step",
    "EquationsStep",
    "CharPolyStep",
    "EigenvalueEntry",
    "EigenvaluesStep",
    "EigenvectorStep",
    "ChainLink",
    "JordanChainStep",
    "ModalMatrixStep",
    "InverseStep",
    "SimilarityStep",
    "DecoupleStep",
    "ScalarStep",
    "RecombineStep",
    "RealFormPair",
    "RealFormStep",
    "InitialValuesStep",
    "ResultStep",
    "IntervalStep",
    "JumpStep",
    "ConvolutionStep",
    "SteadyStateStep",
    "ValuesStep",
    "OutputStep",
    "ShiftStep",
    "STEP_KINDS",
]

Matrix: TypeAlias = sp.ImmutableMatrix

T = TypeVar("T")


class Deferred(Generic[T]):
    """A field value computed on first read: ``Deferred(fn, *args)`` stands for ``fn(*args)``.

    A stage hands a step the display-only pieces of its derivation this way
    (the reduced row echelon form shown beside an eigenvector, the scalar
    equations written out), so a solve that is never rendered does not build
    them.  The arguments are bound when the step is made, never late.  Reading
    the field, comparing, printing or pickling the step computes the value once
    and keeps it; renderers and callers see an ordinary field.
    """

    __slots__ = ("fn", "args")

    def __init__(self, fn: Callable[..., T], *args: Any) -> None:
        self.fn = fn
        self.args = args


#: A step field that a stage may fill with its value or with a ``Deferred``
#: computing it; a read always gives the value (``_Resolving``).
Lazy: TypeAlias = T | Deferred[T]


class _Resolving:
    """Mixin of the records that may hold Deferred fields."""

    def __getattribute__(self, name: str) -> Any:
        value = object.__getattribute__(self, name)
        if type(value) is Deferred:
            value = value.fn(*value.args)
            object.__setattr__(self, name, value)
        return value

    def __getstate__(self) -> dict[str, Any]:
        # pickling (batch workers, the cache) sends values, never the closures
        return {f.name: getattr(self, f.name) for f in fields(self)}  # type: ignore[arg-type]


def substitute(value: Any, mapping: Mapping[sp.Basic, sp.Expr]) -> Any:
    """``value`` with ``mapping`` applied to every sympy object in it.

    Steps, records (any dataclass) and tuples are rebuilt field by field; a
    Deferred field stays deferred and is substituted when it is read.

    >>> a, b = sp.symbols("a b")
    >>> substitute((a + 1, ResultStep(t=a, states=(), x=Matrix([a]), homogeneous=Matrix([0]),
    ...            particular=Matrix([a]), constants=())), {a: b})[1].x
    Matrix([[b]])
    """
    if isinstance(value, sp.Basic):
        return value.xreplace(dict(mapping))
    if isinstance(value, tuple):
        return tuple(substitute(v, mapping) for v in value)
    if type(value) is Deferred:
        return Deferred(_substituted, value, dict(mapping))
    if is_dataclass(value) and not isinstance(value, type):
        raw = {f.name: substitute(object.__getattribute__(value, f.name), mapping) for f in fields(value) if f.init}
        return replace(value, **raw)
    return value


def _substituted(later: Deferred[Any], mapping: Mapping[sp.Basic, sp.Expr]) -> Any:
    return substitute(later.fn(*later.args), mapping)


@dataclass(frozen=True)
class Step(_Resolving):
    """Base of all step records.  ``kind`` names the renderer partial."""

    kind: ClassVar[str] = "step"


@dataclass(frozen=True)
class EquationsStep(Step):
    """The equations as written, and the A and f read off them."""

    kind: ClassVar[str] = "equations"
    equations: tuple[str, ...]
    states: tuple[sp.Symbol, ...]
    t: sp.Symbol
    A: Matrix
    f: Matrix


@dataclass(frozen=True)
class CharPolyStep(Step):
    """det(A - lam I), expanded and factored over the coefficient field."""

    kind: ClassVar[str] = "charpoly"
    lam: sp.Symbol
    shifted: Lazy[Matrix]  # A - lam I
    expanded: sp.Expr
    factored: sp.Expr
    factors: tuple[tuple[sp.Expr, int], ...]  # (irreducible factor, multiplicity)
    domain: str  # "QQ", "QQ(k, m)", ...


@dataclass(frozen=True)
class EigenvalueEntry:
    """One eigenvalue: exact value, decimal, multiplicities and form.

    ``form`` is "rational", "radical" or "indexed root"; ``rule`` says why that
    form was chosen (the size rule), empty when nothing had to be decided.
    """

    value: sp.Expr
    decimal: str
    algebraic: int
    geometric: int
    factor: sp.Expr
    form: str
    rule: str = ""


@dataclass(frozen=True)
class EigenvaluesStep(Step):
    kind: ClassVar[str] = "eigenvalues"
    lam: sp.Symbol
    entries: tuple[EigenvalueEntry, ...]


@dataclass(frozen=True)
class EigenvectorStep(Step):
    """Null space of A - lam I from its reduced row echelon form.

    ``root_of`` is ``None`` when ``eigenvalue`` is a single exact value; else
    the computation is for a generic root and ``instances`` pairs each
    concrete eigenvalue with its basis vectors.
    """

    kind: ClassVar[str] = "eigenvector"
    lam: sp.Symbol
    eigenvalue: sp.Expr
    root_of: sp.Expr | None
    shifted: Lazy[Matrix]
    rref: Lazy[Matrix]
    pivots: Lazy[tuple[int, ...]]
    free: Lazy[tuple[int, ...]]
    basis: tuple[Matrix, ...]
    algebraic: int
    instances: tuple[tuple[sp.Expr, tuple[Matrix, ...]], ...]


@dataclass(frozen=True)
class ChainLink(_Resolving):
    """(A - lam I) v_next = v_prev: the augmented system, reduced, and v_next."""

    rhs: Matrix
    augmented_rref: Matrix
    solution: Matrix


@dataclass(frozen=True)
class JordanChainStep(Step):
    """A Jordan chain for a defective eigenvalue (geometric < algebraic)."""

    kind: ClassVar[str] = "jordan_chain"
    lam: sp.Symbol
    eigenvalue: sp.Expr
    root_of: sp.Expr | None
    algebraic: int
    geometric: int
    shifted: Lazy[Matrix]
    vectors: Lazy[tuple[Matrix, ...]]  # v_1 (eigenvector), v_2, ...
    links: Lazy[tuple[ChainLink, ...]]
    instances: Lazy[tuple[tuple[sp.Expr, tuple[Matrix, ...]], ...]]


@dataclass(frozen=True)
class ModalMatrixStep(Step):
    """P (columns: eigenvectors or chains) and D, or the Jordan form J."""

    kind: ClassVar[str] = "modal_matrix"
    P: Matrix
    D: Matrix
    diagonal: bool
    blocks: tuple[tuple[sp.Expr, int], ...]  # (eigenvalue, block size) in order


@dataclass(frozen=True)
class InverseStep(Step):
    """P^-1 with det P.  ``method`` says how the inverse was obtained."""

    kind: ClassVar[str] = "inverse"
    P: Matrix
    det: sp.Expr
    P_inv: Matrix
    method: str


@dataclass(frozen=True)
class SimilarityStep(Step):
    """The check P D P^-1 = A (and P P^-1 = I)."""

    kind: ClassVar[str] = "similarity"
    P: Matrix
    D: Matrix
    P_inv: Matrix
    product: Lazy[Matrix]
    A: Matrix
    ok: bool


@dataclass(frozen=True)
class DecoupleStep(Step):
    """Substituting x = P y gives y' = D y + g with g = P^-1 f."""

    kind: ClassVar[str] = "decouple"
    t: sp.Symbol
    y: tuple[sp.Symbol, ...]
    D: Matrix
    P_inv: Matrix
    f: Matrix
    g: Lazy[Matrix]


@dataclass(frozen=True)
class ScalarStep(Step):
    """One decoupled equation y_i' = lam_i y_i + h_i(t) by integrating factor.

    ``coupling`` is the next component of the same Jordan block (``None`` for
    a diagonal entry); ``rhs`` is h_i with the coupling already substituted.
    ``factor`` is the integrating factor exp(-lam_i (t - t0)), ``integral`` the
    integral of factor * rhs (an antiderivative for a general solution, from
    t0 to t for an initial value problem) and ``solution`` is y_i(t).
    ``resonant`` is true when a forcing exponent equals lam_i.
    """

    kind: ClassVar[str] = "scalar"
    index: int
    t: sp.Symbol
    y: sp.Symbol
    eigenvalue: sp.Expr
    g: Lazy[sp.Expr]
    coupling: sp.Symbol | None
    coupling_value: Lazy[sp.Expr | None]
    rhs: Lazy[sp.Expr]
    factor: Lazy[sp.Expr]
    integrand: Lazy[sp.Expr]
    integral: Lazy[sp.Expr]
    constant: sp.Expr
    solution: Lazy[sp.Expr]
    resonant: bool
    t0: sp.Expr = sp.Integer(0)
    conjugate_of: int | None = None  # index of the eigenvalue this one mirrors


@dataclass(frozen=True)
class RecombineStep(Step):
    """x = P y, split into homogeneous and particular parts."""

    kind: ClassVar[str] = "recombine"
    P: Matrix
    y: Lazy[Matrix]
    homogeneous_terms: Lazy[tuple[tuple[sp.Expr, Matrix], ...]]  # (scalar function, vector)
    homogeneous: Lazy[Matrix]
    particular: Lazy[Matrix]
    x: Lazy[Matrix]


@dataclass(frozen=True)
class RealFormPair(_Resolving):
    """A complex pair lam, conj(lam) = a +- i b rewritten in real form."""

    eigenvalue: sp.Expr
    re: sp.Expr
    im: sp.Expr
    vector: Matrix
    vector_re: Matrix
    vector_im: Matrix
    complex_constants: tuple[sp.Expr, sp.Expr]
    real_constants: tuple[sp.Symbol, sp.Symbol]
    real_part: Lazy[Matrix]  # Re(v e^{lam t}) (times the chain polynomial, if any)
    imag_part: Lazy[Matrix]  # Im(v e^{lam t})


@dataclass(frozen=True)
class RealFormStep(Step):
    kind: ClassVar[str] = "real_form"
    t: sp.Symbol
    pairs: tuple[RealFormPair, ...]
    homogeneous: Matrix
    particular: Matrix


@dataclass(frozen=True)
class InitialValuesStep(Step):
    """x(t0) = x0 as a linear system M c = r for the constants, and its solution."""

    kind: ClassVar[str] = "initial_values"
    t0: sp.Expr
    x0: Matrix
    matrix: Matrix
    constants: tuple[sp.Symbol, ...]
    rhs: Matrix
    values: tuple[tuple[sp.Symbol, sp.Expr], ...]


@dataclass(frozen=True)
class ResultStep(Step):
    kind: ClassVar[str] = "result"
    t: sp.Symbol
    states: tuple[sp.Symbol, ...]
    x: Matrix
    homogeneous: Matrix
    particular: Matrix
    constants: tuple[sp.Symbol, ...]


@dataclass(frozen=True)
class IntervalStep(Step):
    """One interval between switching times, solved as an IVP from the state handed over.

    ``end`` is ``None`` for the last interval (it runs on without end).  ``f``
    is the forcing with every switch function resolved on the interval, ``g``
    its decoupled form P^-1 f; ``x_start`` is the state at ``start`` (after
    any jump there) and ``y_start`` = P^-1 x_start the modal starting values;
    ``y`` and ``x`` are the decoupled and the physical solution on the
    interval and ``x_end`` the state at its end, handed to the next one.
    ``method`` is "closed form" (exponential-polynomial forcing) or
    "convolution".
    """

    kind: ClassVar[str] = "interval"
    index: int
    t: sp.Symbol
    start: sp.Expr
    end: sp.Expr | None
    f: Matrix
    g: Lazy[Matrix]
    x_start: Matrix
    y_start: Lazy[Matrix]
    y: Lazy[Matrix]
    x: Matrix
    x_end: Matrix | None
    method: str


@dataclass(frozen=True)
class JumpStep(Step):
    """An impulse b delta(t - a) in the forcing: the state jumps, x(a+) = x(a-) + b."""

    kind: ClassVar[str] = "jump"
    t: sp.Symbol
    at: sp.Expr
    weight: Matrix  # b
    before: Matrix  # x(a-)
    after: Matrix  # x(a+)


@dataclass(frozen=True)
class ConvolutionStep(Step):
    """y_i as a convolution integral, for a forcing with no closed-form rule.

    ``kernel`` is the integrand of y_i(t) = (free part ``homogeneous``) +
    integral from t0 to t of kernel ds (s is ``s``): e^{lam (t - s)} g_i(s), plus
    the chain terms (t - s)^m / m! e^{lam (t - s)} g_(i+m)(s) inside a Jordan
    block.  ``integrals`` pairs each separated integral (integrand free of t)
    with its value: a closed form found by sympy's integrate within the time
    limit, or the same ``Integral`` kept for quadrature.  ``solution`` is
    y_i(t) with those values in place.
    """

    kind: ClassVar[str] = "convolution"
    index: int
    t: sp.Symbol
    s: sp.Symbol
    y: sp.Symbol
    eigenvalue: sp.Expr
    g: sp.Expr
    kernel: sp.Expr
    t0: sp.Expr
    homogeneous: sp.Expr  # the free part of y_i (its constant times the exponential)
    integrals: tuple[tuple[sp.Expr, sp.Expr], ...]
    closed: bool  # every integral has a closed form
    written: sp.Expr  # homogeneous + Integral(kernel, (s, t0, t)): the definition, unevaluated
    solution: sp.Expr


@dataclass(frozen=True)
class SteadyStateStep(Step):
    """Steady state of a stable system under constant and/or sinusoidal input.

    ``x_constant`` = -A^-1 f0 answers the constant part ``constant``; for a
    sinusoid of angular frequency ``omega`` the input phasor ``phasor_in`` (f =
    Re(F e^{i omega t})) gives X = (i omega I - A)^-1 F (``phasor``) and each
    state oscillates as ``amplitude[k]`` cos(omega t + ``phase[k]``).
    ``transient`` = x - x_ss decays; ``since`` is the start of the interval the
    forcing holds on (``None`` when it holds throughout).  ``stability`` says
    how Re(lambda) < 0 was established; ``residual_zero`` records that x_ss
    itself satisfies x' = A x + f.
    """

    kind: ClassVar[str] = "steady_state"
    t: sp.Symbol
    eigenvalues: tuple[sp.Expr, ...]
    stability: str
    forcing: Matrix
    constant: Matrix | None
    x_constant: Lazy[Matrix | None]
    omega: sp.Expr | None
    phasor_in: Lazy[Matrix | None]
    phasor: Lazy[Matrix | None]
    amplitude: Lazy[tuple[sp.Expr, ...]]
    phase: Lazy[tuple[sp.Expr, ...]]
    x_ss: Lazy[Matrix]
    transient: Lazy[Matrix]
    since: sp.Expr | None
    residual_zero: Lazy[bool]


STEP_KINDS: tuple[type[Step], ...] = (
    EquationsStep,
    CharPolyStep,
    EigenvaluesStep,
    EigenvectorStep,
    JordanChainStep,
    ModalMatrixStep,
    InverseStep,
    SimilarityStep,
    DecoupleStep,
    ScalarStep,
    RecombineStep,
    RealFormStep,
    InitialValuesStep,
    ResultStep,
    IntervalStep,
    JumpStep,
    ConvolutionStep,
    SteadyStateStep,
)


@dataclass(frozen=True)
class ValuesStep(Step):
    """The declared parameter values put into A, f and x0 before the decomposition (on request).

    ``values`` pairs each parameter with its exact value; the ``*_symbolic``
    fields are the system as written (after any relation), the others with
    the values in.
    """

    kind: ClassVar[str] = "values"
    t: sp.Symbol
    values: tuple[tuple[sp.Symbol, sp.Expr], ...]
    A_symbolic: Matrix
    f_symbolic: Matrix
    x0_symbolic: Matrix | None
    A: Matrix
    f: Matrix
    x0: Matrix | None


@dataclass(frozen=True)
class OutputStep(Step):
    """Outputs y = C x + D u from the solution x(t): ``written`` as the case gave them (None: a row of C, D), ``y`` the result.

    ``inputs`` are the names of u (the declared inputs); empty when u is the
    forcing vector f.  ``method`` says how y - (C x + D u) = 0 was settled.
    """

    kind: ClassVar[str] = "outputs"
    t: sp.Symbol
    states: tuple[sp.Symbol, ...]
    names: tuple[sp.Symbol, ...]
    written: tuple[sp.Expr | None, ...]
    C: Matrix
    D: Matrix
    inputs: tuple[sp.Symbol, ...]
    u: Matrix
    y: Matrix
    method: str


STEP_KINDS += (ValuesStep, OutputStep)


@dataclass(frozen=True)
class ShiftStep(Step):
    """Time measured from t0: tau = t - t0, forcing ``f_shifted`` = f(tau + t0), x(tau = 0) = x0."""

    kind: ClassVar[str] = "shift"
    t: sp.Symbol
    tau: sp.Symbol
    t0: sp.Expr
    x0: Matrix
    f: Matrix
    f_shifted: Matrix


STEP_KINDS += (ShiftStep,)


@dataclass(frozen=True)
class ReductionStep(Step):
    """Equations of higher order, or M q'' + C q' + K q = F, rewritten as a first-order system.

    ``definitions`` gives each state as (state, variable, order): the state
    ``y'`` stands for the first derivative of ``y``.  ``rows`` pairs each state
    with the right side of its derivative, as the reduction wrote it (named
    inputs still as symbols); ``A`` and ``f`` are the system solved.
    ``second_order`` is (M, C, K, F) for the matrix form, else None.
    """

    kind: ClassVar[str] = "reduction"
    t: sp.Symbol
    equations: tuple[str, ...]
    definitions: tuple[tuple[sp.Symbol, sp.Symbol, int], ...]
    rows: tuple[tuple[sp.Symbol, sp.Expr], ...]
    A: Matrix
    f: Matrix
    second_order: tuple[Matrix, Matrix, Matrix, Matrix] | None = None


@dataclass(frozen=True)
class ModalStep(Step):
    """The modal route of M q'' + C q' + K q = F when C = 0 or C = alpha M + beta K.

    ``modes`` is a ``derive.modal.Modes`` record (possibly deferred: the
    generalized eigenproblem is solved only for the sheet); ``eta`` are the
    modal coordinates, q = Phi eta, and ``rayleigh`` the (alpha, beta) of C.
    """

    kind: ClassVar[str] = "modal"
    t: sp.Symbol
    coordinates: tuple[sp.Symbol, ...]
    eta: tuple[sp.Symbol, ...]
    M: Matrix
    C: Matrix
    K: Matrix
    F: Matrix
    rayleigh: tuple[sp.Expr, sp.Expr]
    modes: Lazy[Any]
    #: det(K - omega^2 M), factored, in the symbol omega
    frequency_equation: Lazy[sp.Expr]


@dataclass(frozen=True)
class LaplaceCheckStep(Step):
    """The solution found again through the Laplace transform, as an independent check.

    ``G`` is C (sI - A)^-1 B + D for the input matrix ``B`` (``inputs`` names
    its columns); ``ran`` says whether the check was made (``reason`` says why
    not, or, when it ran, how B was chosen); ``x`` is the response from
    partial fractions of X(s) = (sI - A)^-1 (x(t0) + F(s)) and ``agrees`` the
    exact comparison with the solution, decided by ``method``.
    """

    kind: ClassVar[str] = "laplace_check"
    t: sp.Symbol
    s: sp.Symbol
    ran: bool
    reason: str
    B: Matrix | None = None
    inputs: tuple[sp.Expr, ...] = ()
    G: Matrix | None = None
    x: Matrix | None = None
    agrees: bool | None = None
    method: str = ""


STEP_KINDS += (ReductionStep, ModalStep, LaplaceCheckStep)
__all__ += ["ReductionStep", "ModalStep", "LaplaceCheckStep"]
