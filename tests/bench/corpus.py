"""The benchmark corpus: systems x' = A x + f(t) of our own invention.

Where the spectral structure must be known in advance, A is built as
A = P S P^-1 with S a block-diagonal "structure" matrix (Jordan blocks, real
2x2 rotation blocks a +- ib, companion blocks of chosen polynomials) and P a
unimodular integer matrix (a seeded product of elementary matrices, so
det P = +-1 and P^-1 is an integer matrix too: A stays rational with small
entries).  The symbolic cases are small physical models written directly,
their structure worked out by hand (triangular or with quadratic factors).

Every case is tagged with its spectral kinds and its forcing class, so the
runner can report by category; ``may_refuse`` marks the switched and impulse
cases, which this version of derive may reject as unsupported.

>>> from bench.corpus import CORPUS, by_name
>>> by_name("d2_none_gen").n
2
"""

from __future__ import annotations

import random
from dataclasses import dataclass
from typing import Sequence

import sympy as sp

__all__ = [
    "T",
    "SPECTRAL_KINDS",
    "FORCING_CLASSES",
    "BenchCase",
    "unimodular",
    "block_diag",
    "jordan",
    "rotation",
    "companion",
    "similar",
    "CORPUS",
    "QUICK",
    "TARGET_8X8",
    "by_name",
]

T = sp.Symbol("t")

SPECTRAL_KINDS: tuple[str, ...] = (
    "distinct",  # distinct real rational eigenvalues
    "radical",  # irrational eigenvalues with a radical form
    "complex",  # complex conjugate pairs
    "repeated",  # a repeated eigenvalue with a full eigenspace
    "defective",  # a Jordan block of size >= 2
    "zero",  # zero is an eigenvalue
    "nonradical",  # an irreducible factor with no radical form (quintic, S5)
    "symbolic",  # entries with symbolic parameters
)

FORCING_CLASSES: tuple[str, ...] = (
    "none",
    "polynomial",
    "exponential",
    "sinusoid",
    "product",
    "resonant",
    "switched",
    "impulse",
)


@dataclass(frozen=True)
class BenchCase:
    """One benchmark system with its tags and, when built by construction, P and S.

    ``params`` pairs each symbolic parameter with the exact value used for
    numeric checks; ``structure`` is S and ``modal`` is P when A = P S P^-1.
    """

    name: str
    A: sp.ImmutableMatrix
    f: tuple[sp.Expr, ...]
    spectral: tuple[str, ...]
    forcing: tuple[str, ...]
    x0: tuple[sp.Expr, ...] | None = None
    t0: sp.Expr = sp.Integer(0)
    params: tuple[tuple[sp.Symbol, sp.Expr], ...] = ()
    structure: sp.ImmutableMatrix | None = None
    modal: sp.ImmutableMatrix | None = None
    may_refuse: bool = False
    note: str = ""

    @property
    def n(self) -> int:
        return self.A.rows

    @property
    def is_ivp(self) -> bool:
        return self.x0 is not None

    @property
    def param_values(self) -> dict[sp.Symbol, sp.Expr]:
        return dict(self.params)


# ---------------------------------------------------------------------------
# building blocks


def unimodular(n: int, seed: int, *, steps: int | None = None) -> sp.ImmutableMatrix:
    """A seeded integer matrix with determinant +-1 and small entries.

    >>> abs(unimodular(3, seed=1).det())
    1
    """
    rng = random.Random(seed)
    M = sp.eye(n)
    count = steps if steps is not None else n + 2
    done = 0
    while done < count:
        i, j = rng.randrange(n), rng.randrange(n)
        if i == j:
            continue
        k = rng.choice((-1, 1, 1, 2))
        E = sp.eye(n)
        E[i, j] = k
        candidate = M * E
        # small entries keep A readable and the benchmark about structure, not size
        if max(abs(v) for v in candidate) > 3:
            continue
        M = candidate
        done += 1
    if rng.random() < 0.5 and n > 1:
        M.row_swap(0, n - 1)
    return sp.ImmutableMatrix(M)


def block_diag(*blocks: sp.Matrix) -> sp.ImmutableMatrix:
    """Block-diagonal matrix of the given blocks (1x1 blocks may be numbers)."""
    mats = [sp.Matrix([[b]]) if not isinstance(b, sp.MatrixBase) else sp.Matrix(b) for b in blocks]
    return sp.ImmutableMatrix(sp.diag(*mats))


def jordan(value: int | sp.Expr, size: int) -> sp.ImmutableMatrix:
    """Upper Jordan block of the given size.

    >>> jordan(2, 2)
    Matrix([
    [2, 1],
    [0, 2]])
    """
    J = sp.eye(size) * value
    for i in range(size - 1):
        J[i, i + 1] = 1
    return sp.ImmutableMatrix(J)


def rotation(a: int | sp.Expr, b: int | sp.Expr) -> sp.ImmutableMatrix:
    """Real 2x2 block with eigenvalues a +- i b."""
    return sp.ImmutableMatrix([[a, b], [-b, a]])


def companion(coeffs: Sequence[int]) -> sp.ImmutableMatrix:
    """Companion matrix of the monic polynomial lam^d + c_{d-1} lam^{d-1} + ... + c_0.

    ``coeffs`` is (c_{d-1}, ..., c_0), highest first.

    >>> companion((0, -2))  # lam^2 - 2
    Matrix([
    [0, 1],
    [2, 0]])
    """
    d = len(coeffs)
    C = sp.zeros(d, d)
    for i in range(d - 1):
        C[i, i + 1] = 1
    for j, c in enumerate(reversed(coeffs)):
        C[d - 1, j] = -c
    return sp.ImmutableMatrix(C)


def similar(S: sp.Matrix, seed: int) -> tuple[sp.ImmutableMatrix, sp.ImmutableMatrix]:
    """(A, P) with A = P S P^-1 for a seeded unimodular P."""
    P = unimodular(S.rows, seed)
    A = sp.ImmutableMatrix(P * S * P.inv())
    return A, P


def _built(
    name: str,
    S: sp.Matrix,
    *,
    seed: int,
    f: Sequence[sp.Expr | int] | None = None,
    spectral: Sequence[str],
    forcing: Sequence[str],
    x0: Sequence[int | sp.Expr] | None = None,
    t0: sp.Expr | int = 0,
    may_refuse: bool = False,
    note: str = "",
) -> BenchCase:
    A, P = similar(S, seed)
    n = A.rows
    fv = tuple(sp.sympify(v) for v in (f if f is not None else [0] * n))
    return BenchCase(
        name=name,
        A=A,
        f=fv,
        spectral=tuple(spectral),
        forcing=tuple(forcing),
        x0=None if x0 is None else tuple(sp.sympify(v) for v in x0),
        t0=sp.sympify(t0),
        structure=sp.ImmutableMatrix(S),
        modal=P,
        may_refuse=may_refuse,
        note=note,
    )


def _direct(
    name: str,
    A: Sequence[Sequence[sp.Expr | int]],
    *,
    params: Sequence[tuple[sp.Symbol, sp.Expr | int]],
    f: Sequence[sp.Expr | int] | None = None,
    spectral: Sequence[str],
    forcing: Sequence[str],
    x0: Sequence[int | sp.Expr] | None = None,
    note: str = "",
) -> BenchCase:
    Am = sp.ImmutableMatrix(A)
    n = Am.rows
    return BenchCase(
        name=name,
        A=Am,
        f=tuple(sp.sympify(v) for v in (f if f is not None else [0] * n)),
        spectral=tuple(spectral),
        forcing=tuple(forcing),
        x0=None if x0 is None else tuple(sp.sympify(v) for v in x0),
        params=tuple((s, sp.sympify(v)) for s, v in params),
        note=note,
    )


# ---------------------------------------------------------------------------
# the corpus

t = T
R = sp.Rational
e = sp.exp
sin, cos = sp.sin, sp.cos

# positive parameters: removes sign case splits that are not the point here
k, k1, k2, w, q = sp.symbols("k k1 k2 omega q", positive=True)
a, b, c = sp.symbols("a b c", positive=True)

_CASES: list[BenchCase] = [
    # -- size 2 ------------------------------------------------------------
    _built("d2_none_gen", block_diag(-1, -3), seed=1, spectral=["distinct"], forcing=["none"]),
    _built("d2_poly_ivp", block_diag(1, -2), seed=2, f=[t, 1], x0=[1, 0],
           spectral=["distinct"], forcing=["polynomial"]),
    _built("d2_prod_ivp", block_diag(-1, -2), seed=3, f=[t * e(-3 * t), e(-t) * sin(t)], x0=[0, 1],
           spectral=["distinct"], forcing=["product"]),
    _built("c2_none_ivp", rotation(-1, 2), seed=4, x0=[1, 1], spectral=["complex"], forcing=["none"]),
    _built("c2_sin_gen", rotation(0, 1), seed=5, f=[sin(2 * t), 0], spectral=["complex"], forcing=["sinusoid"]),
    _built("c2_res_ivp", rotation(0, 2), seed=6, f=[cos(2 * t), 0], x0=[0, 0],
           spectral=["complex"], forcing=["sinusoid", "resonant"]),
    _built("r2_exp_gen", companion((-2, -1)), seed=7, f=[e(-t), 0],
           spectral=["radical"], forcing=["exponential"], note="1 +- sqrt(2)"),
    _built("r2_poly_ivp", companion((-1, -1)), seed=8, f=[1, 0], x0=[1, -1],
           spectral=["radical"], forcing=["polynomial"], note="(1 +- sqrt(5))/2"),
    _built("j2_none_ivp", jordan(-2, 2), seed=9, x0=[1, 2], spectral=["defective"], forcing=["none"]),
    _built("j2_res_gen", jordan(-1, 2), seed=10, f=[e(-t), 0],
           spectral=["defective"], forcing=["exponential", "resonant"]),
    _built("z2_poly_gen", block_diag(0, -1), seed=11, f=[1, t],
           spectral=["zero", "distinct"], forcing=["polynomial", "resonant"]),
    _built("z2_nil_ivp", jordan(0, 2), seed=12, f=[t, 1], x0=[1, 0],
           spectral=["zero", "defective"], forcing=["polynomial", "resonant"]),
    _direct("s2_spring_ivp", [[0, 1], [-w**2, 0]], params=[(w, 3)], x0=[1, 0],
            spectral=["symbolic", "complex"], forcing=["none"], note="undamped oscillator, frequency omega"),
    _direct("s2_tanks_gen", [[-k1, 0], [k1, -k2]], params=[(k1, 2), (k2, R(1, 2)), (q, 3)], f=[q, 0],
            spectral=["symbolic", "distinct"], forcing=["polynomial"], note="two tanks in series, inflow q"),
    _direct("s2_spring_res_ivp", [[0, 1], [-w**2, 0]], params=[(w, 2)], f=[0, cos(w * t)], x0=[0, 0],
            spectral=["symbolic", "complex"], forcing=["sinusoid", "resonant"], note="driven at its own frequency"),
    _built("sw2_step_ivp", block_diag(-1, -2), seed=13, f=[sp.Heaviside(t - 1), 0], x0=[0, 0],
           spectral=["distinct"], forcing=["switched"], may_refuse=True, note="unit step at t = 1"),
    _built("im2_pulse_ivp", block_diag(-1, -2), seed=14, f=[sp.DiracDelta(t - 1), 0], x0=[1, 0],
           spectral=["distinct"], forcing=["impulse"], may_refuse=True, note="unit impulse at t = 1"),
    # -- size 3 ------------------------------------------------------------
    _built("d3_none_ivp", block_diag(-1, -2, -3), seed=21, x0=[1, 0, 0], spectral=["distinct"], forcing=["none"]),
    _built("d3_exp_gen", block_diag(1, -1, 2), seed=22, f=[e(3 * t), 0, 0], spectral=["distinct"], forcing=["exponential"]),
    _built("d3_poly2_ivp", block_diag(1, 2, -1), seed=23, f=[t**2, 0, 1], x0=[0, 1, 0],
           spectral=["distinct"], forcing=["polynomial"]),
    _built("rep3_none_gen", block_diag(2, 2, -1), seed=24, spectral=["repeated"], forcing=["none"]),
    _built("rep3_sin_ivp", block_diag(-1, -1, -2), seed=25, f=[0, sin(t), 0], x0=[1, 1, 1],
           spectral=["repeated"], forcing=["sinusoid"]),
    _built("j3_none_gen", jordan(-1, 3), seed=26, spectral=["defective"], forcing=["none"]),
    _built("j3_res_ivp", jordan(1, 3), seed=27, f=[0, 0, e(t)], x0=[0, 0, 1],
           spectral=["defective"], forcing=["exponential", "resonant"]),
    _built("cr3_prod_gen", block_diag(rotation(-1, 1), -2), seed=28, f=[t * cos(t), 0, 0],
           spectral=["complex", "distinct"], forcing=["product"]),
    _built("c3_res_gen", block_diag(rotation(0, 1), -1), seed=29, f=[sin(t), 0, 0],
           spectral=["complex"], forcing=["sinusoid", "resonant"]),
    _built("z3_rep_ivp", block_diag(0, 0, -1), seed=30, f=[1, 0, 0], x0=[0, 1, 0],
           spectral=["zero", "repeated"], forcing=["polynomial", "resonant"]),
    _built("r3_cardano_gen", companion((0, 1, 1)), seed=31,
           spectral=["radical", "complex"], forcing=["none"], note="lam^3 + lam + 1: one real root, one pair"),
    _built("r3_casus_ivp", companion((0, -3, 1)), seed=32, x0=[1, 0, 0],
           spectral=["radical"], forcing=["none"], note="lam^3 - 3 lam + 1: three real roots"),
    _direct("s3_cascade_gen", [[-a, 0, 0], [a, -b, 0], [0, b, -c]], params=[(a, 3), (b, 2), (c, 1)],
            spectral=["symbolic", "distinct"], forcing=["none"], note="three compartments in series"),
    _direct("s3_cascade_ivp", [[-a, 0, 0], [a, -b, 0], [0, b, -c]], params=[(a, 3), (b, 2), (c, R(1, 2))],
            f=[e(-t), 0, 0], x0=[1, 0, 0],
            spectral=["symbolic", "distinct"], forcing=["exponential"]),
    # -- size 4 ------------------------------------------------------------
    _built("d4_none_ivp", block_diag(-1, -2, -3, -4), seed=41, x0=[1, 0, 0, 1],
           spectral=["distinct"], forcing=["none"]),
    _built("cc4_none_gen", block_diag(rotation(-1, 1), rotation(-2, 3)), seed=42,
           spectral=["complex"], forcing=["none"]),
    _built("jj4_none_gen", block_diag(jordan(-1, 2), jordan(-1, 2)), seed=43,
           spectral=["defective", "repeated"], forcing=["none"], note="two Jordan blocks for one eigenvalue"),
    _built("cj4_ivp", sp.Matrix(sp.BlockMatrix([[rotation(0, 1), sp.eye(2)], [sp.zeros(2), rotation(0, 1)]])),
           seed=44, x0=[1, 0, 0, 0], spectral=["complex", "defective"], forcing=["none"],
           note="double pair +- i, defective"),
    _built("rc4_exp_gen", block_diag(companion((0, -3)), rotation(-1, 2)), seed=45, f=[0, 0, e(-t), 0],
           spectral=["radical", "complex"], forcing=["exponential"]),
    _direct("s4_masses_ivp", [[0, 0, 1, 0], [0, 0, 0, 1], [-2 * k, k, 0, 0], [k, -2 * k, 0, 0]],
            params=[(k, 4)], x0=[1, 0, 0, 0], spectral=["symbolic", "complex"], forcing=["none"],
            note="two equal masses, three equal springs"),
    _built("z4_nil_gen", block_diag(jordan(0, 3), -2), seed=46, f=[1, 0, 0, 0],
           spectral=["zero", "defective"], forcing=["polynomial", "resonant"]),
    _built("d4_prod_gen", block_diag(1, -1, 2, -2), seed=47, f=[t * e(2 * t), 0, e(-t) * cos(t), 0],
           spectral=["distinct"], forcing=["product", "resonant"]),
    # -- size 5 ------------------------------------------------------------
    _built("n5_quintic_gen", companion((0, 0, 0, -1, -1)), seed=51,
           spectral=["nonradical"], forcing=["none"], note="lam^5 - lam - 1 (Galois group S5)"),
    _built("n5_quintic_ivp", companion((0, 0, 0, -4, 2)), seed=52, x0=[1, 0, 0, 0, 0],
           spectral=["nonradical"], forcing=["none"], note="lam^5 - 4 lam + 2 (Eisenstein, S5)"),
    _built("d5_sin_ivp", block_diag(-1, -2, -3, -4, -5), seed=53, f=[sin(t), 0, 0, 0, 0], x0=[0, 0, 0, 0, 1],
           spectral=["distinct"], forcing=["sinusoid"]),
    _built("m5_res_gen", block_diag(jordan(-1, 2), rotation(0, 2), 3), seed=54, f=[0, 0, cos(2 * t), 0, 0],
           spectral=["defective", "complex", "distinct"], forcing=["sinusoid", "resonant"]),
    # -- size 6 ------------------------------------------------------------
    _built("d6_poly_gen", block_diag(1, -1, 2, -2, 3, -3), seed=61, f=[0, 0, 0, 0, 0, t],
           spectral=["distinct"], forcing=["polynomial"]),
    _built("c6_none_ivp", block_diag(rotation(-1, 1), rotation(-1, 2), rotation(0, 3)), seed=62,
           x0=[1, 0, 0, 0, 0, 0], spectral=["complex"], forcing=["none"]),
    _built("j6_mix_gen", block_diag(jordan(2, 3), jordan(-1, 2), 0), seed=63,
           spectral=["defective", "zero"], forcing=["none"]),
    _built("n6_quintic_exp_gen", block_diag(companion((0, 0, 0, -1, -1)), -1), seed=64, f=[0, 0, 0, 0, 0, e(-2 * t)],
           spectral=["nonradical", "distinct"], forcing=["exponential"]),
    # -- size 7 ------------------------------------------------------------
    _built("d7_exp_ivp", block_diag(-1, -2, -3, -4, -5, -6, -7), seed=71, f=[e(-8 * t), 0, 0, 0, 0, 0, 0],
           x0=[1, 0, 0, 0, 0, 0, 0], spectral=["distinct"], forcing=["exponential"]),
    _built("m7_mix_gen", block_diag(companion((0, -2)), rotation(-1, 1), jordan(-2, 2), 1), seed=72,
           f=[0, 0, 0, 0, 0, 0, 1], spectral=["radical", "complex", "defective", "distinct"], forcing=["polynomial"]),
    # -- size 8 ------------------------------------------------------------
    _built("d8_distinct_ivp", block_diag(-1, -2, -3, -4, 1, 2, 3, 4), seed=81, x0=[1, 0, 0, 0, 0, 0, 0, 1],
           spectral=["distinct"], forcing=["none"], note="the 8x8 target case"),
    _built("d8_sin_gen", block_diag(-1, -2, -3, -4, -5, -6, -7, -8), seed=82, f=[sin(t), 0, 0, 0, 0, 0, 0, 0],
           spectral=["distinct"], forcing=["sinusoid"]),
    _built("m8_mix_ivp", block_diag(rotation(-1, 2), rotation(-1, 2), jordan(-3, 2), 0, 2), seed=83,
           f=[0, 0, 0, 0, 0, 0, 0, e(-3 * t)], x0=[1, 0, 0, 0, 0, 0, 0, 0],
           spectral=["complex", "repeated", "defective", "zero", "distinct"], forcing=["exponential", "resonant"]),
]

CORPUS: tuple[BenchCase, ...] = tuple(_CASES)

#: A smoke subset of small cases covering the main kinds (about ten).
QUICK: tuple[str, ...] = (
    "d2_none_gen",
    "c2_none_ivp",
    "r2_exp_gen",
    "j2_res_gen",
    "z2_poly_gen",
    "s2_spring_ivp",
    "sw2_step_ivp",
    "rep3_none_gen",
    "c3_res_gen",
    "d4_none_ivp",
)

#: The case the 8x8 target is measured on.
TARGET_8X8 = "d8_distinct_ivp"


def by_name(name: str) -> BenchCase:
    """The corpus case with this name (KeyError if there is none)."""
    for case in CORPUS:
        if case.name == name:
            return case
    raise KeyError(name)
