"""Step records: what each stage computed, as data.

A step is a small frozen dataclass holding the exact sympy objects of one
piece of the derivation.  Mathematics never writes LaTeX: the renderers in
``derive.render`` turn each step into text, choosing a template partial by the
step's ``kind`` (``templates/steps/<kind>.tex.j2`` for LaTeX).  Adding a step
kind means adding a dataclass here, one partial per renderer, and an entry in
``tests/test_render.py``'s sample of every kind.

Field conventions: matrices are ``ImmutableMatrix``; ``lam`` is the symbol
used for the eigenvalue variable; a ``root_of`` field, when not ``None``, is
the irreducible polynomial (in ``lam``) whose roots share a step: the step is
then computed once, for a generic root ``lam``, and ``instances`` lists the
concrete values.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import ClassVar

import sympy as sp

__all__ = [
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
    "STEP_KINDS",
]

Matrix = sp.ImmutableMatrix


@dataclass(frozen=True)
class Step:
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
    shifted: Matrix  # A - lam I
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
    shifted: Matrix
    rref: Matrix
    pivots: tuple[int, ...]
    free: tuple[int, ...]
    basis: tuple[Matrix, ...]
    algebraic: int
    instances: tuple[tuple[sp.Expr, tuple[Matrix, ...]], ...]


@dataclass(frozen=True)
class ChainLink:
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
    shifted: Matrix
    vectors: tuple[Matrix, ...]  # v_1 (eigenvector), v_2, ...
    links: tuple[ChainLink, ...]
    instances: tuple[tuple[sp.Expr, tuple[Matrix, ...]], ...]


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
    product: Matrix
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
    g: Matrix


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
    g: sp.Expr
    coupling: sp.Symbol | None
    coupling_value: sp.Expr | None
    rhs: sp.Expr
    factor: sp.Expr
    integrand: sp.Expr
    integral: sp.Expr
    constant: sp.Expr
    solution: sp.Expr
    resonant: bool
    t0: sp.Expr = sp.Integer(0)
    conjugate_of: int | None = None  # index of the eigenvalue this one mirrors


@dataclass(frozen=True)
class RecombineStep(Step):
    """x = P y, split into homogeneous and particular parts."""

    kind: ClassVar[str] = "recombine"
    P: Matrix
    y: Matrix
    homogeneous_terms: tuple[tuple[sp.Expr, Matrix], ...]  # (scalar function, vector)
    homogeneous: Matrix
    particular: Matrix
    x: Matrix


@dataclass(frozen=True)
class RealFormPair:
    """A complex pair lam, conj(lam) = a +- i b rewritten in real form."""

    eigenvalue: sp.Expr
    re: sp.Expr
    im: sp.Expr
    vector: Matrix
    vector_re: Matrix
    vector_im: Matrix
    complex_constants: tuple[sp.Expr, sp.Expr]
    real_constants: tuple[sp.Symbol, sp.Symbol]
    real_part: Matrix  # Re(v e^{lam t}) (times the chain polynomial, if any)
    imag_part: Matrix  # Im(v e^{lam t})


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
)
