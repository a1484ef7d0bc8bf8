"""The stability class of x' = A x, decided exactly from the spectrum and the Jordan structure.

Asymptotically stable: every eigenvalue has negative real part.  Marginally
stable: none has positive real part and each one on the imaginary axis is
semisimple (its Jordan blocks are 1 by 1), so its modes stay bounded.
Unstable: an eigenvalue with positive real part, or a defective one on the
imaginary axis (its mode grows like t^k).  With symbolic parameters the
conditions of asymptotic stability are the Hurwitz determinants of the
characteristic polynomial being positive (A. Hurwitz's criterion).
"""

from __future__ import annotations

from typing import Mapping, Sequence

import sympy as sp

from ..model import Solution
from .evaluation import approx, decided_sign
from .records import Stability, StabilityReading

__all__ = ["jordan_blocks", "classify", "hurwitz_determinants"]


def jordan_blocks(D: sp.MatrixBase) -> tuple[tuple[int, int], ...]:
    """(first column, size) of each Jordan block of D, read from its superdiagonal ones.

    >>> jordan_blocks(sp.Matrix([[0, 1, 0], [0, 0, 0], [0, 0, -1]]))
    ((0, 2), (2, 1))
    """
    n = D.shape[0]
    out: list[tuple[int, int]] = []
    start = 0
    for i in range(1, n + 1):
        if i == n or D[i - 1, i] != 1:
            out.append((start, i - start))
            start = i
    return tuple(out)


def hurwitz_determinants(A: sp.MatrixBase) -> tuple[sp.Expr, ...]:
    """The Hurwitz determinants Delta_1 .. Delta_n of det(s I - A) (monic; all > 0 iff stable).

    >>> k, c = sp.symbols("k c", positive=True)
    >>> hurwitz_determinants(sp.Matrix([[0, 1], [-k, -c]]))
    (c, c*k)
    """
    s = sp.Dummy("s")
    n = A.shape[0]
    coeffs = A.charpoly(s).all_coeffs()  # 1, a1, .., an

    def a(i: int) -> sp.Expr:
        return coeffs[i] if 0 <= i <= n else sp.Integer(0)

    H = sp.Matrix(n, n, lambda r, c: a(2 * c - r + 1))
    return tuple(sp.factor(sp.simplify(H[:k, :k].det())) for k in range(1, n + 1))


def _settled(e: sp.Expr) -> sp.Expr:
    return e if e.has(sp.CRootOf) else sp.simplify(e)


def _word(lam: sp.Expr) -> str:
    """A number as a reader writes it: the real part first, then the imaginary part with the letter i.

    >>> _word(1 + 2*sp.I), _word(-sp.I), _word(sp.Rational(-1, 2) + sp.sqrt(3)*sp.I/2)
    ('1 + 2 i', '-i', '-1/2 + sqrt(3)/2 i')
    """
    if lam.has(sp.CRootOf) or lam.free_symbols:
        return sp.sstr(lam.xreplace({sp.I: sp.Symbol("i")}))
    re, im = lam.as_real_imag()
    if im == 0:
        return sp.sstr(re)
    unit = "i" if abs(im) == 1 else f"{sp.sstr(abs(im))} i"
    if re == 0:
        return unit if im > 0 else f"-{unit}"
    return f"{sp.sstr(re)} {'+' if im > 0 else '-'} {unit}"


def _number(value: sp.Expr) -> str:
    """A rational as it is (5, 1/2), any other number as a decimal of four figures ("about 1.414")."""
    value = sp.nsimplify(value) if value.is_Float else value
    if value.is_Rational:
        return str(value)
    return f"about {approx(value, 20).real:.4g}"  # roots read from their decimals: sp.N opens each root


def classify(
    solution: Solution, values: Mapping[sp.Symbol, sp.Expr], *, eigenvalues: Sequence[sp.Expr] | None = None
) -> StabilityReading:
    """The stability class of ``solution``'s system at ``values`` (exact; see the module text).

    >>> import derive
    >>> classify(derive.solve([[0, 1], [-1, 0]]), {}).kind
    <Stability.MARGINAL: 'marginally stable'>
    """
    sub = dict(values)
    A = sp.Matrix(solution.system.A.xreplace(sub))
    lams = [_settled(lam.xreplace(sub)) for lam in (eigenvalues or solution.eigenvalues)]
    signs = [decided_sign(sp.re(lam)) for lam in lams]
    if all(s is not None for s in signs):
        return _decided(A, lams, [int(s) for s in signs if s is not None], solution, sub)
    growing = [lam for lam, s in zip(lams, signs) if s == 1]
    if growing:
        return StabilityReading(
            Stability.UNSTABLE, f"the eigenvalue {_word(growing[0])} has a positive real part: its mode grows without bound"
        )
    return _hurwitz(A)


def _decided(A: sp.Matrix, lams: list[sp.Expr], signs: list[int], solution: Solution, sub: dict) -> StabilityReading:
    growing = [lam for lam, s in zip(lams, signs) if s > 0]
    if growing:
        return StabilityReading(
            Stability.UNSTABLE,
            f"the eigenvalue {_word(growing[0])} has real part {_word(sp.simplify(sp.re(growing[0])))} > 0: "
            "its mode grows without bound",
        )
    if all(s < 0 for s in signs):
        slow = max(lams, key=lambda lam: approx(lam).real) if not any(l.free_symbols for l in lams) else None
        # in words, not as a formula in prose: the time constant -1/Re(lambda) (the modes table has the rest)
        unit = f" {solution.system.time_unit}" if solution.system.time_unit else ""
        tail = f" (the slowest mode has the time constant {_number(-1 / sp.simplify(sp.re(slow)))}{unit})" if slow is not None else ""
        return StabilityReading(Stability.ASYMPTOTIC, f"every eigenvalue has a negative real part{tail}: every mode decays")
    axis: list[sp.Expr] = []
    for lam, s in zip(lams, signs):
        if s == 0 and not any(_same(lam, other) for other in axis):
            axis.append(lam)
    n = A.shape[0]
    for lam in axis:
        algebraic = sum(1 for other in lams if _same(lam, other))
        geometric = n - _rank(A - lam * sp.eye(n), solution, lam, sub)
        if geometric < algebraic:
            return StabilityReading(
                Stability.UNSTABLE,
                f"the eigenvalue {_word(lam)} on the imaginary axis is defective (algebraic multiplicity "
                f"{algebraic}, only {geometric} independent eigenvector{'s' if geometric != 1 else ''}): "
                "its modes grow in proportion to a power of the time",
            )
    listed = ", ".join(_word(lam) for lam in axis)
    return StabilityReading(
        Stability.MARGINAL,
        f"no eigenvalue has a positive real part and those on the imaginary axis ({listed}) are semisimple "
        "(one eigenvector per repetition): their modes stay bounded without decaying",
    )


def _same(a: sp.Expr, b: sp.Expr) -> bool:
    d = a - b
    if not d.free_symbols and abs(approx(d)) > 1e-20:
        return False  # clearly apart: no exact test needed
    d = sp.simplify(d)
    return decided_sign(sp.re(d)) == 0 and decided_sign(sp.im(d)) == 0


def _rank(M: sp.Matrix, solution: Solution, lam: sp.Expr, sub: dict) -> int:
    if not sub and not solution.is_diagonalizable:
        # the Jordan form the solution carries: blocks of lam count its eigenvectors
        count = 0
        for start, _size in jordan_blocks(solution.D):
            if _same(solution.D[start, start], lam):
                count += 1
        return M.shape[0] - count
    return M.rank(iszerofunc=lambda e: decided_sign(sp.re(e)) == 0 and decided_sign(sp.im(e)) == 0, simplify=True)


def _hurwitz(A: sp.Matrix) -> StabilityReading:
    if any(not (e.is_real or e.is_real is None and sp.im(e) == 0) for e in A):
        return StabilityReading(
            Stability.UNDECIDED,
            "the signs of the eigenvalues' real parts depend on entries not known to be real "
            "(declare the parameters real or positive, or give their values)",
        )
    deltas = hurwitz_determinants(A)
    verdicts = [decided_sign(d) for d in deltas]
    if all(v == 1 for v in verdicts):
        return StabilityReading(
            Stability.ASYMPTOTIC,
            "every Hurwitz determinant of the characteristic polynomial is positive for all admissible "
            "parameters: every eigenvalue has a negative real part",
        )
    open_ = tuple(d for d, v in zip(deltas, verdicts) if v != 1)
    if any(v == -1 for v in verdicts):
        return StabilityReading(
            Stability.UNSTABLE,
            "a Hurwitz determinant of the characteristic polynomial is negative: an eigenvalue has a positive real part",
        )
    conditions = (
        (Stability.ASYMPTOTIC, tuple(sp.StrictGreaterThan(d, 0) for d in open_)),
        (Stability.UNSTABLE, (sp.Or(*[sp.StrictLessThan(d, 0) for d in open_]),)),
    )
    words = ", ".join(f"{sp.sstr(d)} > 0" for d in open_)
    return StabilityReading(
        Stability.UNDECIDED,
        f"the eigenvalues' real parts depend on the parameters: asymptotically stable exactly when {words} "
        "(Hurwitz determinants of the characteristic polynomial); unstable when one of them is negative; "
        "a zero one is the boundary between",
        conditions,
    )
