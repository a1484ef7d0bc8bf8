"""One assembly of the Solution, from one piece or many, for every forcing method.

In order: the square roots of a chosen regime go back in for their
placeholders (``dec.aux``), once, into everything; the steady-state and
result steps are added; the conditions are gathered (a regime implies that
its expression is nonzero: stated once); the solution is verified (one closed
form by ``derive.verify.verify``, intervals by ``verify_pieces``), indexed
roots handled the same way for both; and an unverified result raises
``VerificationError`` carrying the Solution.
"""

from __future__ import annotations

from dataclasses import replace
from typing import Sequence, TypeAlias

import sympy as sp

from ..relations import regime_sign
from ..errors import VerificationError
from ..exact import root_value
from ..laplace import deferred_laplace_check
from ..model import Case, Condition, Relation, Solution, Verification
from ..recombine import restore_roots
from ..rootring import atoms_of, replace_atoms
from ..steady import steady_state_steps
from ..steps import ResultStep, Step, substitute
from ..verify import verify
from ..verify.pieces import PieceRecord, verify_pieces
from .methods.base import Pieces, Problem

__all__ = ["assemble", "regime_conditions", "failure_summary", "verification"]

Matrix: TypeAlias = sp.ImmutableMatrix


def regime_conditions(regimes: Sequence[tuple[sp.Expr, int]]) -> tuple[Condition, ...]:
    """The chosen regimes (expr, sign) as stated conditions."""
    return tuple(
        Condition(expr=e, relation=Relation.NEGATIVE if sign < 0 else Relation.POSITIVE, reason="the regime solved here")
        for e, sign in regimes
    )


def failure_summary(ver: Verification) -> str:
    """What failed, in words, for the VerificationError's message."""
    parts = []
    if not ver.residual_zero:
        parts.append("the residual x' - A x - f is not zero")
    if ver.initial_ok is False:
        parts.append("x(t0) differs from x0")
    if ver.numeric is not None and not ver.numeric.ok:
        parts.append(f"numeric integration differs by {ver.numeric.max_rel_gap:.3g} (relative)")
    if not ver.similarity_ok:
        parts.append("P D P^-1 differs from A")
    return ", ".join(parts) or "unknown"


def _swapped(value: tuple, aux: dict) -> tuple:
    """``value`` with the regime's roots in place of their placeholders (as it is without a regime)."""
    return substitute(value, aux) if aux else value


def _restored(pieces: Pieces, aux: dict, t: sp.Symbol) -> Pieces:
    """The pieces with a regime's square roots in place of their positive placeholders."""
    if not aux:
        return pieces
    cs = pieces.constants
    return replace(
        pieces,
        x=Matrix([restore_roots(e, aux, cs, t) for e in pieces.x]),
        homogeneous=Matrix([restore_roots(e, aux, cs, t) for e in pieces.homogeneous]),
        particular=Matrix([restore_roots(e, aux, (), t) for e in pieces.particular]),
        steps=substitute(pieces.steps, aux),
        records=substitute(pieces.records, aux),
        conditions=substitute(pieces.conditions, aux),
    )


def _numeric_records(records: Sequence[PieceRecord], real: bool) -> tuple[PieceRecord, ...]:
    """Records for the numeric run: indexed roots as their decimals, real data as real parts."""

    def numeric(e: sp.Expr) -> sp.Expr:
        roots = atoms_of(e, sp.CRootOf)
        e = replace_atoms(e, {r: root_value(r) for r in roots})
        # the decimals leave a rounding-size imaginary part in a real solution
        return sp.re(e) if real else e

    return tuple(replace(r, x=r.x.applyfunc(numeric)) for r in records)


def verification(
    problem: Problem,
    pieces: Pieces,
    *,
    eigenvalues: Sequence[sp.Expr],
) -> Verification:
    """The one verification call: a closed form for all t, or interval by interval.

    The exact checks run on the exact solution.  The numeric run needs
    numbers where indexed roots (CRootOf) stand: ``verify`` puts in their
    decimals itself; for intervals the run is made on records with the
    decimals in place, and only its numeric verdict is kept.
    """
    system, dec = problem.system, problem.dec
    if not pieces.records:
        decimals = [b.numeric for b in dec.blocks for ch in b.chains for _ in ch]
        return verify(
            system,
            pieces.x,
            constants=pieces.constants,
            similarity_ok=dec.similarity_ok,
            eigenvalues=eigenvalues,
            decimals=decimals,
        )
    indexed = any(r.x.has(sp.CRootOf) for r in pieces.records)
    ver = verify_pieces(
        system, pieces.records, constants=pieces.constants, eigenvalues=eigenvalues, numeric=not indexed
    )
    if indexed:
        run = verify_pieces(
            system,
            _numeric_records(pieces.records, problem.real),
            constants=pieces.constants,
            eigenvalues=eigenvalues,
            exact=False,  # its exact checks were made on the exact records above
        )
        numeric_notes = tuple(n for n in run.notes if n.startswith("numeric integration"))
        ver = replace(ver, numeric=run.numeric, notes=ver.notes + numeric_notes)
    return replace(ver, similarity_ok=dec.similarity_ok)


def assemble(
    problem: Problem,
    pieces: Pieces,
    *,
    steps: Sequence[Step] = (),
    regimes: Sequence[tuple[sp.Expr, int]] = (),
    conditions: Sequence[Condition] = (),
    notices: Sequence[str] = (),
    case: Case | None = None,
    check: bool = True,
) -> Solution:
    """The Solution from a method's pieces: roots restored, steps completed, verified.

    ``steps`` are those before the method's (equations, decomposition);
    ``conditions`` and ``notices`` those of the input (parsing, relations),
    listed first.  With ``check`` an unverified result raises
    ``VerificationError`` carrying the Solution.
    """
    system, dec, t = problem.system, problem.dec, problem.t
    aux = dict(dec.aux)
    pieces = _restored(pieces, aux, t)
    tail: list[Step] = []
    if pieces.steady and pieces.records:
        last = pieces.records[-1]
        since = last.start if len(pieces.records) > 1 else None
        tail.extend(steady_state_steps(system, dec.column_eigenvalues, last.x, f=last.f, since=since))
    elif pieces.steady:
        tail.extend(steady_state_steps(system, dec.column_eigenvalues, pieces.x))
    all_steps = _swapped(tuple(steps), aux) + pieces.steps + _swapped(tuple(tail), aux)
    all_steps += (
        ResultStep(
            t=t,
            states=system.states,
            x=pieces.x,
            homogeneous=pieces.homogeneous,
            particular=pieces.particular,
            constants=pieces.constants,
        ),
    )
    # a regime (expr < 0) already implies expr != 0: state it once
    implied = {sp.expand(e) for e, _ in regimes} | {sp.expand(-e) for e, _ in regimes}
    own = tuple(dict.fromkeys(_swapped(dec.conditions, aux) + pieces.conditions))
    kept = tuple(c for c in own if not (c.relation == Relation.NONZERO and sp.expand(c.expr) in implied))
    eigenvalues = tuple(sp.sympify(e, strict=True).xreplace(aux) for e in dec.column_eigenvalues)
    ver = verification(problem, pieces, eigenvalues=eigenvalues)
    closed = not pieces.records and not any(st.kind == "convolution" for st in pieces.steps)
    all_steps += (deferred_laplace_check(system, pieces.x, eigenvalues, closed_form=closed, settings=problem.settings),)
    P, J, P_inv = (Matrix(m.xreplace(aux)) if aux else m for m in (dec.P, dec.J, dec.P_inv))
    sol = Solution(
        system=system,
        x=pieces.x,
        constants=pieces.constants,
        eigenvalues=eigenvalues,
        P=P,
        D=J,
        P_inv=P_inv,
        is_diagonalizable=dec.diagonalizable,
        homogeneous=pieces.homogeneous,
        particular=pieces.particular,
        steps=all_steps,
        verification=ver,
        conditions=tuple(conditions) + kept + regime_conditions(regimes),
        notices=tuple(notices) + pieces.notices,
        case=case,
    )
    if check and not ver.ok:
        raise VerificationError(
            "the derived solution failed verification: " + failure_summary(ver) + "; it is not reported as a result",
            solution=sol,
        )
    return sol
