"""Independent checks of a solution, on by default: one ``verify`` for one piece or many.

1. Substitution: x' - A x - f on every interval is reduced to zero exactly,
   first in a polynomial ring with the exponentials, cosines and sines as
   generators (``derive.ringcheck``), else by the one zero test
   (``derive.verify.zero``: exact reduction, then a numeric identity test at
   high precision, integrals by quadrature).
2. Joins: at every switch x(t+) - x(t-) equals the prescribed jump (zero for
   a step): with indexed roots first in one ring that knows the relations
   between the roots of each polynomial (``derive.rootrelations``; the state
   handed across is taken apart along every eigenvector and put together
   again), else by the zero test; a mismatch counts against the residual
   (x' - A x - f taken as a distribution carries a delta there).
3. Initial values: x(t0) - x0 = 0 for an initial value problem (with an
   impulse at t0: x(t0+) = x0 + b).
4. Numeric: x(t) computed by a route of its own (``derive.verify.numeric``)
   and compared with the exact pieces; a general solution with its constants
   at fixed sample values.

These use only the final x(t), A, f and x0, never the intermediate objects of
the derivation, so a slip anywhere in the derivation shows up here.  Tuning
comes from a ``derive.settings.Settings`` record passed in.
"""

from __future__ import annotations

from collections.abc import Sequence

import sympy as sp
import sympy.codegen.ast  # noqa: F401 - lambdify's printers import it on first use: load it with the package

from ..model import System, Verification
from ..initial_at import initial_is_zero_at
from ..ringcheck import initial_is_zero, residuals_are_zero
from ..rootrelations import vanishing
from ..rootring import contains, replace_atoms
from ..settings import DEFAULT_SETTINGS, Settings
from .numeric import NumericSkipped, PieceRecord, numeric_check, numeric_pieces, sample_constants, time_span
from .zero import ZeroVerdict, decide, drop_empty_integrals

__all__ = [
    "verify",
    "verify_solution",
    "numeric_check",
    "residual",
    "PieceRecord",
    "NumericSkipped",
    "sample_constants",
    "time_span",
    "combined_method",
]

_ZERO = sp.Integer(0)


def combined_method(methods: Sequence[str]) -> str:
    """How a set of zero tests was settled: "exact", or the first other method used."""
    return next((m for m in methods if m != "exact"), "exact")


def residual(system: System, x: sp.MatrixBase) -> sp.ImmutableMatrix:
    """x' - A x - f, expanded."""
    return _residual(system.A, system.f, x, system.t)


def _residual(A: sp.MatrixBase, f: sp.MatrixBase, x: sp.MatrixBase, t: sp.Symbol) -> sp.ImmutableMatrix:
    xs = list(x)
    n = len(xs)
    r = [
        sp.expand(xs[i].diff(t) - sp.Add(*[A[i, j] * xs[j] for j in range(n) if A[i, j] != 0]) - f[i])
        for i in range(n)
    ]
    return sp.ImmutableMatrix(n, 1, r)


def verify_solution(
    system: System,
    pieces: Sequence[PieceRecord],
    *,
    constants: Sequence[sp.Symbol] = (),
    eigenvalues: Sequence[sp.Expr] = (),
    decimals: Sequence[complex | None] = (),
    numeric: bool = True,
    similarity_ok: bool = True,
    settings: Settings = DEFAULT_SETTINGS,
    exact: bool = True,
) -> Verification:
    """Residual on every piece, the joins, x(t0) and the numeric check; the result says how each was settled.

    A solution in one piece is one record.  ``exact=False`` runs the numeric
    check alone (records with decimals in place of indexed roots, whose exact
    checks were made on the exact records): the exact fields then say "not run".

    >>> t = sp.Symbol("t")
    >>> sys_ = System(A=sp.ImmutableMatrix([[-1]]), f=sp.ImmutableMatrix([1]), t=t, states=(sp.Symbol("x"),),
    ...               x0=sp.ImmutableMatrix([0]))
    >>> piece = PieceRecord(0, None, sp.ImmutableMatrix([1]), sp.ImmutableMatrix([1 - sp.exp(-t)]), sp.ImmutableMatrix([0]))
    >>> verify_solution(sys_, [piece]).ok
    True
    """
    if not exact:
        return _numeric_only(system, pieces, constants, eigenvalues, decimals, similarity_ok, settings)
    t = system.t
    n = system.n
    policy = settings.zero

    def zero(e: sp.Expr) -> ZeroVerdict:
        return decide(e, t=t, policy=policy)

    all_zero = True
    methods: list[str] = []
    reduced: list[list[sp.Expr]] = [[] for _ in range(n)]
    notes: list[str] = []
    undecided = False
    # every piece in one ring (derive.ringcheck): its generators are read once
    in_ring = residuals_are_zero([(list(p.x), list(p.f)) for p in pieces], system.A, t)
    for p, settled in zip(pieces, in_ring):
        if settled:
            # settled exactly in the polynomial ring (derive.ringcheck)
            methods.append("exact")
            for i in range(n):
                reduced[i].append(_ZERO)
            continue
        for i, e in enumerate(_residual(system.A, p.f, p.x, t)):
            v = zero(e)
            methods.append(v.method)
            # integrals without closed form or unspecified functions: no exact step could settle it
            undecided = undecided or (v.zero and v.kind == "numeric" and ";" in v.method)
            all_zero = all_zero and v.zero
            reduced[i].append(_ZERO if v.zero else e)
    for k in range(1, len(pieces)):
        a = pieces[k].start
        gap = [_at(pieces[k].x[i], t, a) - _at(pieces[k - 1].x[i], t, a) - pieces[k].jump[i] for i in range(n)]
        # the entries share the state handed across: read in one ring, with the relations between the roots
        joined = vanishing(gap) if any(contains(e, sp.CRootOf) for e in gap) else [False] * n
        verdicts = [ZeroVerdict(True, "exact") if s else zero(e) for s, e in zip(joined, gap)]
        methods += [v.method for v in verdicts]
        if all(v.zero for v in verdicts):
            what = "the prescribed jump" if any(e != 0 for e in pieces[k].jump) else "continuity"
            how = "exactly" if all(v.kind == "exact" for v in verdicts) else "by the numeric identity test"
            notes.append(f"At t = {sp.sstr(a)}: {what} x(t+) = x(t-)" + (" + b" if what != "continuity" else "") + f" holds {how}.")
        else:
            all_zero = False
            notes.append(f"At t = {sp.sstr(a)}: the pieces do NOT join: x(t+) - x(t-) - b = {sp.sstr(sp.Matrix(gap).T)}.")
    if len(pieces) > 1:
        # the residual of a solution given per interval is reported per interval
        res = sp.ImmutableMatrix([
            sp.Piecewise(*[(v, t < pieces[k + 1].start) for k, v in enumerate(col[:-1])], (col[-1], True))
            if any(v != 0 for v in col) else _ZERO
            for col in reduced
        ])
    else:
        res = sp.ImmutableMatrix([col[0] for col in reduced])
    if undecided:
        notes.append(
            "The residual holds integrals without a closed form (or unspecified functions): it was decided "
            f"zero by the numeric identity test at {policy.digits} digits, integrals evaluated by quadrature "
            "and an unspecified function replaced by a fixed sample function."
        )
    init_res, init_ok = _initial(system, pieces[0], zero, notes)
    num = None
    if numeric:
        try:
            num = numeric_pieces(
                system, pieces, constants=constants, eigenvalues=eigenvalues, decimals=decimals, settings=settings
            )
        except NumericSkipped as why:
            notes.append(f"numeric integration not run: {why}")
    return Verification(
        residual=res,
        residual_zero=all_zero,
        residual_method=combined_method(methods),
        initial_residual=init_res,
        initial_ok=init_ok,
        numeric=num,
        similarity_ok=similarity_ok,
        notes=tuple(notes),
    )


def _numeric_only(
    system: System,
    pieces: Sequence[PieceRecord],
    constants: Sequence[sp.Symbol],
    eigenvalues: Sequence[sp.Expr],
    decimals: Sequence[complex | None],
    similarity_ok: bool,
    settings: Settings,
) -> Verification:
    """The numeric run alone: the zero tests of records holding decimals would only repeat the exact ones."""
    notes: list[str] = []
    num = None
    try:
        num = numeric_pieces(system, pieces, constants=constants, eigenvalues=eigenvalues, decimals=decimals, settings=settings)
    except NumericSkipped as why:
        notes.append(f"numeric integration not run: {why}")
    return Verification(
        residual=sp.ImmutableMatrix(sp.zeros(system.n, 1)),
        residual_zero=True,
        residual_method="not run (numeric check only)",
        initial_residual=None,
        initial_ok=None,
        numeric=num,
        similarity_ok=similarity_ok,
        notes=tuple(notes),
    )


def _at(e: sp.Expr, t: sp.Symbol, a: sp.Expr) -> sp.Expr:
    """e at t = a: the value put in for t (subs, which costs more, only where an integral may bind t)."""
    # contains, replace_atoms: never into an indexed root's polynomial (rebuilt on every read)
    return e.subs(t, a) if contains(e, sp.Integral) else replace_atoms(e, {t: a})


def _initial(system: System, first: PieceRecord, zero, notes: list[str]) -> tuple[sp.ImmutableMatrix | None, bool | None]:
    """x(t0) - x0 (- b for an impulse at t0) and whether it vanishes; (None, None) without x0."""
    if system.x0 is None:
        return None, None
    n = system.n
    t = system.t
    jump = any(e != 0 for e in first.jump)
    if not jump and system.t0 == 0 and initial_is_zero(list(first.x), list(system.x0), t):
        return sp.ImmutableMatrix(sp.zeros(n, 1)), True
    if not jump and system.t0 != 0 and initial_is_zero_at(list(first.x), list(system.x0), t, system.t0):
        return sp.ImmutableMatrix(sp.zeros(n, 1)), True
    diffs = [
        sp.expand(drop_empty_integrals(first.x[i].subs(t, system.t0)) - system.x0[i] - first.jump[i]) for i in range(n)
    ]
    verdicts = [zero(d) for d in diffs]
    if jump:
        notes.append("The impulse at t0 acts on x0: the check is x(t0+) = x0 + b.")
    return sp.ImmutableMatrix([0 if v.zero else d for v, d in zip(verdicts, diffs)]), all(v.zero for v in verdicts)


def verify(
    system: System,
    x: sp.MatrixBase,
    *,
    constants: Sequence[sp.Symbol] = (),
    similarity_ok: bool = True,
    numeric: bool = True,
    eigenvalues: Sequence[sp.Expr] = (),
    decimals: Sequence[complex | None] = (),
    settings: Settings = DEFAULT_SETTINGS,
) -> Verification:
    """Check a solution in one piece against the system (``verify_solution`` with one record)."""
    x = sp.ImmutableMatrix(x)
    record = PieceRecord(system.t0, None, system.f, x, sp.ImmutableMatrix(sp.zeros(system.n, 1)))
    return verify_solution(
        system, [record], constants=constants, eigenvalues=eigenvalues, decimals=decimals,
        numeric=numeric, similarity_ok=similarity_ok, settings=settings,
    )
