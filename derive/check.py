"""Checking a hand derivation of x' = A x + f(t), item by item.

Each claimed item is verified on its own, by substitution, independently of
``derive.solve``: eigenvalues against the characteristic polynomial (with
multiplicities), each eigenvector by A v = lambda v, P by A P = P D with
det P != 0, P^-1 by P P^-1 = I, a general solution by substitution into the
ODE for every value of its constants together with a nonsingular
d x / d c, and an initial value solution also by x(t0) = x0.  Because only
these defining properties are tested, a claim is accepted in any equivalent
form: constants renamed, rescaled or recombined, eigenvectors scaled,
eigenvalues in another order, P's columns permuted together with D.
``derive.solve`` is called only to state the right value of a failed
solution item, never to decide pass or fail.

Zero tests: exact reduction first (expand, cancel; ``simplify`` on small
expressions); when that does not settle it, a numeric identity test with
mpmath at 50 digits at several random points of t, the constants and the
parameters (sign assumptions respected, and points on both sides of every
step or impulse time, so a piecewise error cannot hide).  Each item says
which method decided.

Reference for the method: common practice (substitution check).

``derive.documents.check_report`` renders a ``CheckReport`` as a terminal
table, Markdown, JSON or LaTeX (``templates/check.tex.j2``).
"""

from __future__ import annotations

import functools
import itertools
import random
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from types import MappingProxyType
from typing import Any

import mpmath
import sympy as sp

from .errors import EXIT_OK, EXIT_VERIFICATION, InputError, TimeLimitError
from .exact import root_value

__all__ = [
    "STEP_ORDER",
    "CheckItem",
    "CheckReport",
    "check",
    "CHECK_FORMATS",
    "CAUTION",
    "claim_symbols",
    "parse_claim_value",
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

DIGITS = 50
POINTS = 5
# Relative size below which a value at 50 digits counts as zero: a true zero
# comes out near 1e-50 of the size of its terms, a nonzero expression at a
# random point is nowhere near 1e-30.
_RELATIVE_TOL = 1e-30
_SIMPLIFY_OPS = 300
_SEED = 6_0221


# ---------------------------------------------------------------------------
# Records


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


@dataclass(frozen=True)
class CheckReport:
    """All checked items, in derivation order.

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
# Zero tests


@dataclass(frozen=True)
class _Verdict:
    zero: bool
    method: str  # "exact", "numeric" or "undecided"
    points: int = 0
    witness: tuple[tuple[sp.Symbol, sp.Expr], ...] = ()

    def describe(self) -> str:
        if self.method == "exact":
            return "decided exactly"
        if self.method == "undecided":
            return "undecided: the expression could not be evaluated at any sample point"
        if self.zero:
            where = f" at {self.points} random points" if self.points > 1 else ""
            return f"decided by a numeric identity test ({DIGITS} digits{where})"
        where = ", ".join(f"{s} = {v}" for s, v in self.witness)
        return f"nonzero by a numeric test ({DIGITS} digits{', at ' + where if where else ''})"

    @property
    def short(self) -> str:
        if self.method == "numeric":
            return f"numeric ({DIGITS} digits)"
        return self.method


def _draw(sym: sp.Symbol, rng: random.Random) -> sp.Expr:
    """A generic exact value for ``sym`` that respects its sign assumptions."""
    if sym.is_integer:
        value: sp.Expr = sp.Integer(rng.randint(1, 6))
    else:
        value = sp.Rational(rng.randint(3, 41), rng.randint(7, 19))
    if sym.is_negative or sym.is_nonpositive:
        return -value
    if sym.is_positive or sym.is_nonnegative:
        return value
    return -value if rng.random() < 0.5 else value


def _breakpoints(expr: sp.Expr, t: sp.Symbol | None, point: Mapping[sp.Symbol, sp.Expr]) -> list[sp.Expr]:
    """Times where a step, impulse or |.| in ``expr`` switches (with the other symbols fixed)."""
    if t is None:
        return []
    found: list[sp.Expr] = []
    for atom in expr.atoms(sp.Heaviside, sp.DiracDelta, sp.Abs, sp.sign):
        arg = atom.args[0].xreplace({s: v for s, v in point.items() if s != t})
        poly = sp.Poly(arg, t) if arg.has(t) else None
        if poly is None or poly.degree() != 1:
            continue
        a, b = poly.all_coeffs()
        if a.is_number and b.is_number and a != 0:
            root = -b / a
            if root.is_real and root not in found:
                found.append(root)
    return found


class _Singular(Exception):
    """The expression has no finite value at the sample point."""


_MP_FUNCTIONS: Mapping[type, Any] = MappingProxyType(
    {
        sp.exp: mpmath.exp,
        sp.sin: mpmath.sin,
        sp.cos: mpmath.cos,
        sp.tan: mpmath.tan,
        sp.sinh: mpmath.sinh,
        sp.cosh: mpmath.cosh,
        sp.tanh: mpmath.tanh,
        sp.log: mpmath.log,
        sp.asin: mpmath.asin,
        sp.acos: mpmath.acos,
        sp.atan: mpmath.atan,
        sp.Abs: abs,
        sp.re: mpmath.re,
        sp.im: mpmath.im,
        sp.conjugate: mpmath.conj,
    }
)


def _mp_value(expr: sp.Expr, point: Mapping[sp.Symbol, sp.Expr]) -> Any:
    """``expr`` at ``point`` with mpmath (call inside ``mpmath.workdps``), walking the tree.

    A walk of our own rather than ``evalf``: sympy's adaptive evaluation of
    cubic radicals inside exponentials takes seconds per value, and shared
    sub-expressions are computed once here.  Nothing is compiled or executed.
    """
    memo: dict[sp.Basic, Any] = {}

    def ev(node: sp.Basic) -> Any:
        if node in memo:
            return memo[node]
        if node.is_Symbol:
            value = ev(point[node])
        elif node.is_Integer:
            value = mpmath.mpf(int(node))
        elif node.is_Rational:
            value = mpmath.mpf(int(node.p)) / int(node.q)
        elif node.is_Float:
            value = mpmath.mpf(str(node))
        elif node is sp.pi:
            value = +mpmath.pi
        elif node is sp.E:
            value = +mpmath.e
        elif node is sp.I:
            value = mpmath.mpc(0, 1)
        elif node.has(sp.zoo, sp.nan, sp.oo, -sp.oo):
            raise _Singular
        elif isinstance(node, sp.Add):
            value = mpmath.fsum([ev(a) for a in node.args])
        elif isinstance(node, sp.Mul):
            value = mpmath.fprod([ev(a) for a in node.args])
        elif isinstance(node, sp.Pow):
            base, exponent = ev(node.base), ev(node.exp)
            if base == 0 and mpmath.re(exponent) <= 0:
                raise _Singular
            value = mpmath.power(base, exponent)
        elif isinstance(node, sp.Heaviside):
            arg = ev(node.args[0])
            if mpmath.im(arg) != 0:
                raise _Singular
            arg = mpmath.re(arg)
            if arg == 0:
                value = ev(node.args[1]) if len(node.args) > 1 else mpmath.mpf(1) / 2
            else:
                value = mpmath.mpf(1 if arg > 0 else 0)
        elif isinstance(node, sp.DiracDelta):
            if ev(node.args[0]) == 0:
                raise _Singular
            value = mpmath.mpf(0)
        elif isinstance(node, sp.sign):
            arg = ev(node.args[0])
            value = mpmath.mpf(0) if arg == 0 else arg / abs(arg)
        elif type(node) in _MP_FUNCTIONS:
            value = _MP_FUNCTIONS[type(node)](*[ev(a) for a in node.args])
        elif isinstance(node, sp.CRootOf):
            # the cached Newton refinement: evalf on a complex indexed root takes seconds
            value = mpmath.mpmathify(root_value(node, mpmath.mp.dps + 5))
        elif node.is_number:
            # other exact constants: sympy knows their value best.
            value = mpmath.mpmathify(sp.N(node, mpmath.mp.dps))
        else:
            raise _Singular
        memo[node] = value
        return value

    try:
        total = ev(expr)
        terms = [ev(a) for a in sp.Add.make_args(expr)]
    except (ZeroDivisionError, ValueError, OverflowError, TypeError, KeyError):
        raise _Singular from None
    if not (mpmath.isfinite(total) and all(mpmath.isfinite(v) for v in terms)):
        raise _Singular
    return total, max([mpmath.mpf(1), mpmath.fsum([abs(v) for v in terms])])


def _numeric_verdict(expr: sp.Expr, t: sp.Symbol | None) -> _Verdict:
    syms = sorted(expr.free_symbols, key=sp.default_sort_key)
    rng = random.Random(_SEED)
    others = [s for s in syms if s != t]
    checked = 0
    plan: list[tuple[int, int]] = [(-1, 0)] * (POINTS if syms else 1)
    base = {s: _draw(s, rng) for s in others}
    breaks = _breakpoints(expr, t if t in syms else None, base)
    for k in range(len(breaks)):
        plan += [(k, -1), (k, 1)]
    with mpmath.workdps(DIGITS + 10):
        for where, side in plan:
            for _ in range(4):  # a few redraws if the point hits a singularity
                point = {s: _draw(s, rng) for s in others} if where < 0 else dict(base)
                if t in syms:
                    if where < 0:
                        point[t] = _draw(t, rng) if rng.random() < 0.5 else sp.Rational(rng.randint(-20, 40), 17)
                        if (t.is_positive or t.is_nonnegative) and point[t] <= 0:
                            point[t] = -point[t] + sp.Rational(1, 7)
                    else:
                        point[t] = breaks[where] + side * sp.Rational(rng.randint(1, 30), rng.randint(20, 40))
                try:
                    value, scale = _mp_value(expr, point)
                except _Singular:
                    continue
                checked += 1
                if abs(value) > _RELATIVE_TOL * scale:
                    witness = tuple((s, point[s]) for s in syms)
                    return _Verdict(False, "numeric", checked, witness)
                break
    if checked == 0:
        return _Verdict(False, "undecided")
    return _Verdict(True, "numeric", checked)


def _plainly_nonzero(e: sp.Expr) -> bool:
    """A product of nonzero rationals, exponentials and nonzero symbols: nonzero by inspection."""
    for factor in sp.Mul.make_args(e):
        if factor.is_Rational and factor != 0:
            continue
        if isinstance(factor, sp.exp):
            continue
        if factor.is_Pow and factor.base.is_zero is False and factor.exp.is_Rational:
            continue
        if factor.is_Symbol and factor.is_zero is False:
            continue
        return False
    return True


def _decide(expr: Any, t: sp.Symbol | None = None) -> _Verdict:
    """Is ``expr`` identically zero?  Exact reduction first, numeric identity test if needed.

    Impulses in ``t`` are judged as distributions: g(t) delta(t - a) vanishes
    when g(a) = 0, so a solution with a wrong jump at a switching time fails
    even though every sample point away from the switch sees no impulse.
    """
    e = sp.Integer(expr) if isinstance(expr, int) else expr
    deltas = [d for d in e.atoms(sp.DiracDelta) if t is not None and d.has(t)] if isinstance(e, sp.Basic) else []
    if not deltas:
        return _decide_regular(e, t)
    e = sp.expand(e)
    weights: dict[sp.Expr, sp.Expr] = {}
    for d in deltas:
        order = d.args[1] if len(d.args) > 1 else 0
        poly = sp.Poly(d.args[0], t)
        if order != 0 or poly.degree() != 1:
            # A derivative of an impulse, or a curved argument: only the
            # regular part below is tested (rare in engineering forcing).
            continue
        a, b = poly.all_coeffs()
        root = sp.cancel(-b / a)
        weights[root] = weights.get(root, sp.Integer(0)) + e.coeff(d) / sp.Abs(a)
    regular = e.xreplace({d: sp.Integer(0) for d in deltas})
    verdicts = [_decide_regular(regular, t)]
    verdicts += [_decide_regular(sp.expand(g.subs(t, root))) for root, g in weights.items()]
    bad = [v for v in verdicts if not v.zero]
    if bad:
        return bad[0]
    return next((v for v in verdicts if v.method != "exact"), verdicts[0])


def _decide_regular(expr: Any, t: sp.Symbol | None = None) -> _Verdict:
    e = expr
    if e == 0:
        return _Verdict(True, "exact")
    e = sp.expand(e)
    if e == 0:
        return _Verdict(True, "exact")
    if e.is_Rational or _plainly_nonzero(e):
        return _Verdict(False, "exact")
    # cancel and simplify are what settle rational functions of parameters,
    # but on cubic radicals they take seconds per entry; there the 50-digit
    # identity test decides instead.
    radical = _has_radicals(e)
    reduced = e
    if not radical:
        try:
            reduced = sp.cancel(e)
        except (sp.PolynomialError, TypeError, ValueError, NotImplementedError):
            reduced = e
        if reduced == 0:
            return _Verdict(True, "exact")
    numeric = _numeric_verdict(reduced, t)
    if not numeric.zero and numeric.method == "numeric":
        return numeric
    # Numerically zero (or not evaluable): try to settle it exactly.
    if not radical and sp.count_ops(reduced) <= _SIMPLIFY_OPS:
        if sp.simplify(reduced) == 0:
            return _Verdict(True, "exact")
    return numeric


def _has_radicals(e: sp.Expr) -> bool:
    """True when ``e`` holds a root of order 3 or more, or a nested root (costly to simplify)."""
    for p in e.atoms(sp.Pow):
        if p.exp.is_Rational and not p.exp.is_Integer:
            if p.exp.q > 2 or any(
                q.exp.is_Rational and not q.exp.is_Integer for q in p.base.atoms(sp.Pow)
            ):
                return True
    return e.has(sp.CRootOf)


@dataclass(frozen=True)
class _MatrixVerdict:
    zero: bool
    method: str
    verdicts: tuple[_Verdict, ...]

    def describe(self) -> str:
        if self.zero:
            numeric = [v for v in self.verdicts if v.method == "numeric"]
            return numeric[0].describe() if numeric else "decided exactly"
        bad = [v for v in self.verdicts if not v.zero]
        return bad[0].describe()


def _decide_all(entries: Sequence[Any], t: sp.Symbol | None = None) -> _MatrixVerdict:
    verdicts = tuple(_decide(e, t) for e in entries)
    zero = all(v.zero for v in verdicts)
    deciding = verdicts if zero else tuple(v for v in verdicts if not v.zero)
    method = "exact" if all(v.method == "exact" for v in deciding) else next(
        v.short for v in deciding if v.method != "exact"
    )
    return _MatrixVerdict(zero, method, verdicts)


def _is_zero(e: Any, t: sp.Symbol | None = None) -> bool:
    return _decide(e, t).zero


def _clean(e: sp.Expr) -> sp.Expr:
    """A residual in its shortest easy form, for display."""
    e = sp.expand(e)
    try:
        e = sp.cancel(e) if e.is_rational_function() else e
    except (sp.PolynomialError, TypeError, ValueError):
        pass
    if sp.count_ops(e) <= _SIMPLIFY_OPS // 3:
        s = sp.simplify(e)
        if sp.count_ops(s) < sp.count_ops(e):
            e = s
    return e


def _clean_matrix(M: sp.MatrixBase) -> sp.ImmutableMatrix:
    return sp.ImmutableMatrix(M.rows, M.cols, [_clean(e) for e in M])


def _rank(M: sp.MatrixBase, t: sp.Symbol | None = None) -> int:
    return int(sp.Matrix(M).rank(iszerofunc=lambda e: _is_zero(e, t), simplify=False))


# ---------------------------------------------------------------------------
# Plain text of objects, for the detail sentences


def _plain(obj: Any) -> str:
    from .render.printing import plain_text

    return plain_text(obj)


def _short(obj: Any, limit: int = 160) -> str:
    # Sentences are for people: powers as ^, as a hand derivation writes them.
    text = _plain(obj).replace("**", "^")
    return text if len(text) <= limit else text[: limit - 3] + "..."


def _factor_text(e: sp.Expr) -> str:
    """``e`` as a factor in running text: parenthesised unless it is a plain atom."""
    text = _plain(e)
    if (e.is_Atom and not (e.is_number and e.is_negative)) or text.isalnum():
        return text
    return f"({text})"


# ---------------------------------------------------------------------------
# Claim inputs: sympy objects, numbers or expression strings (parsed safely)


#: Names that stand for the imaginary unit in claim strings, unless the case uses them.
IMAGINARY_NAMES: tuple[str, ...] = ("i", "j")


def claim_symbols(
    A: sp.MatrixBase, f: sp.MatrixBase, t: sp.Symbol, *extra: Any, constants: Sequence[sp.Symbol] = ()
) -> dict[str, sp.Symbol]:
    """The names a claim string may use: t, the symbols of the case, the constants.

    >>> k = sp.Symbol("k", positive=True)
    >>> sorted(claim_symbols(sp.Matrix([[0, 1], [-k, 0]]), sp.zeros(2, 1), sp.Symbol("t")))
    ['k', 't']
    """
    names: dict[str, sp.Symbol] = {}
    pool: set[sp.Basic] = set(A.free_symbols) | set(f.free_symbols)
    for obj in extra:
        if isinstance(obj, (sp.Basic, sp.MatrixBase)):
            pool |= obj.free_symbols
    for s in sorted(pool, key=sp.default_sort_key):
        if isinstance(s, sp.Symbol):
            names[s.name] = s
    names[t.name] = t
    for c in constants:
        names[c.name] = c
    return names


def parse_claim_value(
    value: Any,
    *,
    symbols: Mapping[str, sp.Symbol],
    key: str,
    file: str | None = None,
    new_names: dict[str, sp.Symbol] | None = None,
    forbidden: Mapping[str, str] | None = None,
    notices: list[str] | None = None,
) -> sp.Expr:
    """One claimed entry as an exact sympy object; strings go through the safe parser only.

    ``new_names``, when given, collects names the case does not declare: each
    becomes a constant symbol (used for solutions without a ``constants``
    list).  ``forbidden`` maps names that may not appear to the reason.
    ``i`` and ``j`` stand for the imaginary unit unless the case declares them.

    >>> parse_claim_value("2 - 3i", symbols={}, key="eigenvalues[0]")
    2 - 3*I
    """
    from .parsing import expression_names, name_problem, parse_expression

    if isinstance(value, bool):
        raise InputError(f"found the boolean {value}; expected a number or an expression string", key=key, file=file)
    if isinstance(value, sp.Basic):
        floats = value.atoms(sp.Float)
        if floats:
            if notices is not None:
                notices.append(f"{key}: floating-point numbers read as exact rationals")
            value = value.xreplace({fl: sp.Rational(str(fl)) for fl in floats})
        return value
    if isinstance(value, int):
        return sp.Integer(value)
    if isinstance(value, float):
        expr, notes = parse_expression(value, symbols=symbols, key=key, file=file)
        if notices is not None:
            notices.extend(notes)
        return expr
    if not isinstance(value, str):
        raise InputError(
            f"found {type(value).__name__}; expected a number or an expression string", key=key, file=file
        )
    table = dict(symbols)
    # The parser refuses complex results (the case data are real), so the
    # imaginary unit of a claimed complex eigenvalue goes in as a placeholder
    # symbol that is replaced by I afterwards.
    units = {name: sp.Dummy(name) for name in IMAGINARY_NAMES if name not in table}
    names = expression_names(value)
    if new_names is not None:
        for name in names:
            if name in table or name in units or name in new_names:
                continue
            if forbidden and name in forbidden:
                raise InputError(f"{forbidden[name]} (in {value!r})", key=key, file=file)
            from .parsing import CONSTANTS, FUNCTIONS

            if name in CONSTANTS or name in FUNCTIONS:
                continue
            problem = name_problem(name)
            if problem is not None:
                raise InputError(f"{problem}; expected a constant name such as c1 (in {value!r})", key=key, file=file)
            new_names[name] = sp.Symbol(name)
        table.update(new_names)
    elif forbidden:
        for name in names:
            if name in forbidden and name not in table:
                raise InputError(f"{forbidden[name]} (in {value!r})", key=key, file=file)
    table.update(units)
    expr, notes = parse_expression(value, symbols=table, key=key, file=file)
    if notices is not None:
        notices.extend(notes)
    if units:
        expr = expr.xreplace({d: sp.I for d in units.values()})
    return expr


def _matrix_of(
    value: Any, *, n: int, key: str, cols: int | None, parse: Any
) -> sp.ImmutableMatrix:
    """An n x cols matrix (cols None: a column vector of n entries) from rows or a Matrix."""
    if isinstance(value, sp.MatrixBase):
        rows = value.tolist() if cols is not None else [[e] for e in value]
        if cols is None and not (value.rows == 1 or value.cols == 1):
            raise InputError(f"{key} is a {value.rows}x{value.cols} matrix; expected a vector of {n} entries", key=key)
    elif isinstance(value, (str, bytes)) or not isinstance(value, Sequence):
        what = f"a list of {n} rows" if cols is not None else f"a list of {n} entries"
        raise InputError(f"{key} is {type(value).__name__}; expected {what}", key=key)
    else:
        rows = list(value) if cols is not None else [[e] for e in value]
    if len(rows) != n:
        what = "rows" if cols is not None else "entries"
        raise InputError(f"A is {n}x{n} but {key} has {len(rows)} {what}", key=key)
    out: list[list[sp.Expr]] = []
    for i, row in enumerate(rows):
        if cols is not None:
            if isinstance(row, (str, bytes)) or not isinstance(row, Sequence):
                raise InputError(f"{key}[{i}] is {type(row).__name__}; expected a row of {cols} entries", key=f"{key}[{i}]")
            if len(row) != cols:
                raise InputError(f"A is {n}x{n} but {key}[{i}] has {len(row)} entries", key=f"{key}[{i}]")
            out.append([parse(v, f"{key}[{i}][{j}]") for j, v in enumerate(row)])
        else:
            out.append([parse(row[0], f"{key}[{i}]")])
    return sp.ImmutableMatrix(out)


# ---------------------------------------------------------------------------
# The item checks


def _charpoly(A: sp.MatrixBase, lam: sp.Symbol) -> sp.Expr:
    return sp.expand(sp.Matrix(A).charpoly(lam).as_expr(lam))


def _root_multiplicity(p: sp.Expr, lam: sp.Symbol, mu: sp.Expr, n: int) -> int:
    k = 0
    q = p
    while k < n and _is_zero(q.subs(lam, mu)):
        k += 1
        q = sp.diff(q, lam)
    return k


def _group_values(values: Sequence[sp.Expr]) -> list[tuple[sp.Expr, int]]:
    """Distinct values (decided by the zero test) with their counts, in first-seen order."""
    groups: list[list[Any]] = []
    for v in values:
        for g in groups:
            if _is_zero(g[0] - v):
                g[1] += 1
                break
        else:
            groups.append([v, 1])
    return [(g[0], g[1]) for g in groups]


def _right_eigenvalues(p: sp.Expr, lam: sp.Symbol, n: int) -> tuple[sp.Expr, ...] | None:
    try:
        found = sp.roots(sp.Poly(p, lam))
    except (sp.PolynomialError, NotImplementedError):
        return None
    if sum(found.values()) != n:
        return None
    out: list[sp.Expr] = []
    for value in sorted(found, key=sp.default_sort_key):
        out.extend([value] * found[value])
    return tuple(out)


def _check_eigenvalues(A: sp.ImmutableMatrix, claimed: tuple[sp.Expr, ...], lam: sp.Symbol) -> CheckItem:
    n = A.shape[0]
    p = _charpoly(A, lam)
    q = sp.expand(sp.Mul(*[lam - mu for mu in claimed]))
    coeffs = sp.Poly(sp.expand(p - q), lam).all_coeffs()
    verdict = _decide_all(coeffs)
    claimed_m = sp.ImmutableMatrix([[c] for c in claimed]) if claimed else None
    if len(claimed) == n and verdict.zero:
        return CheckItem(
            name="eigenvalues",
            step="eigenvalues",
            ok=True,
            detail=(
                f"{_short(claimed)} are the roots of det(lambda I - A) = {_short(p)} "
                f"with their multiplicities ({verdict.describe()})"
            ),
            residual=sp.Integer(0),
            method=verdict.method,
            claimed=claimed_m,
        )
    values = [(mu, _clean(p.subs(lam, mu))) for mu in claimed]
    not_roots = [(mu, r) for mu, r in values if not _is_zero(r)]
    problems: list[str] = []
    for mu, r in not_roots:
        problems.append(f"p({_plain(mu)}) = {_short(r, 80)} for the claimed eigenvalue {_plain(mu)}: not a root")
    if not not_roots:
        for mu, count in _group_values(claimed):
            mult = _root_multiplicity(p, lam, mu, n)
            if mult != count:
                problems.append(
                    f"{_plain(mu)} is a root of multiplicity {mult} but is listed {count} time{'s' if count != 1 else ''}"
                )
    if len(claimed) != n:
        problems.insert(0, f"{len(claimed)} values are claimed but A is {n}x{n}, so it has {n} eigenvalues counted with multiplicity")
    if not problems:  # pragma: no cover - the coefficient test and the root test disagree
        problems.append("the claimed values do not reproduce the characteristic polynomial")
    right = _right_eigenvalues(p, lam, n)
    detail = f"with p(lambda) = det(lambda I - A) = {_short(p, 100)}: " + "; ".join(problems)
    detail += f" ({(_decide(not_roots[0][1]) if not_roots else verdict).describe()})"
    if right is not None:
        detail += f"; the right eigenvalues are {_short(right)}"
    residual = sp.ImmutableMatrix([[r] for _, r in values]) if values else sp.ImmutableMatrix([[p]])
    decisive = [_decide(r) for _, r in not_roots]
    return CheckItem(
        name="eigenvalues",
        step="eigenvalues",
        ok=False,
        detail=detail,
        residual=residual,
        method=(decisive[0].short if decisive else verdict.method),
        claimed=claimed_m,
        expected=sp.ImmutableMatrix([[v] for v in right]) if right is not None else None,
    )


def _eigen_name(mu: sp.Expr, index: int, same: int) -> str:
    label = f"eigenvector for {_plain(mu)}"
    return f"{label} (#{index})" if same > 1 else label


def _check_eigenvector(A: sp.ImmutableMatrix, mu: sp.Expr, v: sp.ImmutableMatrix, name: str) -> CheckItem:
    n = A.shape[0]
    nonzero = _decide_all(list(v))
    if nonzero.zero:
        return CheckItem(
            name=name,
            step="eigenvectors",
            ok=False,
            detail=f"the claimed eigenvector of {_plain(mu)} is the zero vector; an eigenvector is nonzero",
            residual=v,
            method=nonzero.method,
            claimed=v,
        )
    r = (A * v - mu * v).applyfunc(sp.expand)
    mu_text = _factor_text(mu)
    verdict = _decide_all(list(r))
    if verdict.zero:
        return CheckItem(
            name=name,
            step="eigenvectors",
            ok=True,
            detail=f"A v - {mu_text} v = 0 for v = {_short(v)} ({verdict.describe()})",
            residual=sp.ImmutableMatrix(sp.zeros(n, 1)),
            method=verdict.method,
            claimed=v,
        )
    shown = _clean_matrix(r)
    detail = f"A v - {mu_text} v = {_short(shown)} for the claimed eigenvector {_short(v)} of {_plain(mu)} ({verdict.describe()})"
    expected = None
    try:
        basis = (A - mu * sp.eye(n)).nullspace(iszerofunc=_is_zero, simplify=True)
    except (ValueError, TypeError, NotImplementedError):  # pragma: no cover - sympy internals
        basis = None
    if basis == []:
        detail += f"; {_plain(mu)} is not an eigenvalue of A, so no nonzero vector satisfies A v = {_plain(mu)} v"
    elif basis:
        vecs = [_small_integers(sp.ImmutableMatrix(b)) for b in basis]
        expected = vecs[0]
        if len(vecs) == 1:
            detail += f"; a right eigenvector of {_plain(mu)} is {_short(vecs[0])} (or any nonzero multiple)"
        else:
            detail += f"; the eigenvectors of {_plain(mu)} are the nonzero combinations of " + ", ".join(
                _short(b) for b in vecs
            )
    return CheckItem(
        name=name, step="eigenvectors", ok=False, detail=detail, residual=shown,
        method=verdict.method, claimed=v, expected=expected,
    )


def _small_integers(v: sp.ImmutableMatrix) -> sp.ImmutableMatrix:
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


def _check_independence(mu: sp.Expr, vectors: Sequence[sp.ImmutableMatrix]) -> CheckItem:
    M = sp.ImmutableMatrix.hstack(*vectors)
    rank = _rank(M)
    ok = rank == len(vectors)
    detail = (
        f"the {len(vectors)} claimed eigenvectors of {_plain(mu)} are linearly independent (rank {rank})"
        if ok
        else f"the {len(vectors)} claimed eigenvectors of {_plain(mu)} have rank {rank}: they are linearly dependent, "
        f"so they cannot serve as {len(vectors)} columns of P"
    )
    return CheckItem(
        name=f"eigenvectors for {_plain(mu)}: independent",
        step="eigenvectors",
        ok=ok,
        detail=detail,
        residual=None,
        method="exact",
        claimed=M,
    )


def _jordan_pattern(M: sp.MatrixBase) -> list[str]:
    """Why ``M`` is not diagonal or a Jordan matrix (upper bidiagonal, 1s only inside a block)."""
    n = M.rows
    problems: list[str] = []
    for i in range(n):
        for j in range(n):
            if i == j:
                continue
            e = M[i, j]
            if j == i + 1:
                if _is_zero(e):
                    continue
                if _is_zero(e - 1):
                    if not _is_zero(M[i, i] - M[j, j]):
                        problems.append(
                            f"entry ({i + 1},{j + 1}) is 1 but the diagonal entries {_plain(M[i, i])} and "
                            f"{_plain(M[j, j])} beside it differ"
                        )
                    continue
                problems.append(f"entry ({i + 1},{j + 1}) is {_short(e, 60)}; expected 0 or 1")
            elif not _is_zero(e):
                problems.append(f"entry ({i + 1},{j + 1}) is {_short(e, 60)}; expected 0")
    return problems


def _spectrum_problems(A: sp.ImmutableMatrix, D: sp.ImmutableMatrix, lam: sp.Symbol) -> list[str]:
    """Differences between the eigenvalue structure of A and that of the (triangular) D."""
    n = A.shape[0]
    p = _charpoly(A, lam)
    diag = [D[i, i] for i in range(n)]
    q = sp.expand(sp.Mul(*[lam - d for d in diag]))
    if not _decide_all(sp.Poly(sp.expand(p - q), lam).all_coeffs()).zero:
        right = _right_eigenvalues(p, lam, n)
        text = f"the diagonal of D, {_short(tuple(diag))}, is not the list of eigenvalues of A"
        if right is not None:
            text += f" ({_short(right)}, in any order)"
        return [text]
    problems: list[str] = []
    I = sp.eye(n)
    for mu, _count in _group_values(diag):
        if _count == 1:
            continue  # a simple eigenvalue has one eigenvector in A and in D alike
        NA = sp.Matrix(A) - mu * I
        ND = sp.Matrix(D) - mu * I
        PA, PD = sp.eye(n), sp.eye(n)
        for k in range(1, n + 1):
            PA, PD = (PA * NA).applyfunc(sp.expand), (PD * ND).applyfunc(sp.expand)
            ra, rd = _rank(PA), _rank(PD)
            if ra != rd:
                if k == 1:
                    problems.append(
                        f"A has {n - ra} independent eigenvector(s) for {_plain(mu)} but D implies {n - rd}"
                        + ("; A is not diagonalizable, so D must be its Jordan form" if rd < ra else "")
                    )
                else:
                    problems.append(f"the Jordan blocks of D for {_plain(mu)} do not match those of A")
                break
            if ra == n - _count:
                break
    return problems


def _column_eigenvalue(A: sp.ImmutableMatrix, p: sp.ImmutableMatrix) -> sp.Expr | None:
    """The eigenvalue whose eigenvector is the column ``p``, or None when p is not one."""
    Ap = (A * p).applyfunc(sp.expand)
    for k in range(p.rows):
        if not _is_zero(p[k]):
            mu = sp.cancel(Ap[k] / p[k])
            if _decide_all(list((Ap - mu * p).applyfunc(sp.expand))).zero:
                return mu
            return None
    return None


def _match_permutation(found: Sequence[sp.Expr], wanted: Sequence[sp.Expr]) -> tuple[int, ...] | None:
    """perm with found[perm[j]] == wanted[j], or None."""
    n = len(wanted)
    if len(found) != n or n > 7:
        return None
    for perm in itertools.permutations(range(n)):
        if all(_is_zero(found[perm[j]] - wanted[j]) for j in range(n)):
            return perm
    return None


def _check_P(
    A: sp.ImmutableMatrix, P: sp.ImmutableMatrix, D: sp.ImmutableMatrix | None, D_valid: bool
) -> CheckItem:
    n = A.shape[0]
    det = sp.expand(P.det(method="berkowitz"))
    dv = _decide(det)
    if dv.zero:
        return CheckItem(
            name="P",
            step="P",
            ok=False,
            detail=(
                f"P is singular: det P = 0 ({dv.describe()}), so its columns are not independent "
                "and P has no inverse"
            ),
            residual=sp.Integer(0),
            method=dv.method,
            claimed=P,
        )
    det_text = f"det P = {_short(_clean(det), 60)}"
    if D is not None and D_valid:
        R = (A * P - P * D).applyfunc(sp.expand)
        verdict = _decide_all(list(R))
        if verdict.zero:
            return CheckItem(
                name="P",
                step="P",
                ok=True,
                detail=f"A P = P D and {det_text} != 0, so P D P^-1 = A ({verdict.describe()})",
                residual=sp.ImmutableMatrix(sp.zeros(n, n)),
                method=verdict.method,
                claimed=P,
            )
        shown = _clean_matrix(R)
        detail = f"A P - P D = {_short(shown)} (should be the zero matrix), so P D P^-1 != A"
        expected = None
        diag = [D[i, i] for i in range(n)]
        cols = [_column_eigenvalue(A, P[:, j]) for j in range(n)]
        if all(c is not None for c in cols) and D.is_diagonal():
            perm = _match_permutation(cols, diag)  # type: ignore[arg-type]
            if perm is not None:
                expected = sp.ImmutableMatrix.hstack(*[P[:, perm[j]] for j in range(n)])
                detail = (
                    f"the columns of P are eigenvectors of A for {_short(tuple(cols))} in that order, but the "
                    f"diagonal of D is {_short(tuple(diag))}: P's column order does not match D's "
                    f"(A P - P D = {_short(shown)}); with the columns reordered, P = {_short(expected)}"
                )
        else:
            bad = [j + 1 for j, c in enumerate(cols) if c is None]
            if bad and D.is_diagonal():
                detail += "; column" + ("s " if len(bad) > 1 else " ") + ", ".join(map(str, bad)) + " of P " + (
                    "are not eigenvectors of A" if len(bad) > 1 else "is not an eigenvector of A"
                )
        return CheckItem(
            name="P", step="P", ok=False, detail=f"{detail} ({verdict.describe()})", residual=shown,
            method=verdict.method, claimed=P, expected=expected,
        )
    # No usable D: P must bring A to diagonal or Jordan form on its own.
    M = _clean_matrix(P.inv(method="ADJ") * A * P)
    problems = _jordan_pattern(M)
    if not problems:
        return CheckItem(
            name="P",
            step="P",
            ok=True,
            detail=f"{det_text} != 0 and P^-1 A P = {_short(M)} is "
            + ("diagonal" if M.is_diagonal() else "a Jordan matrix")
            + ", so the columns of P are (generalised) eigenvectors of A",
            residual=None,
            method="exact",
            claimed=P,
        )
    return CheckItem(
        name="P",
        step="P",
        ok=False,
        detail=f"P^-1 A P = {_short(M)} is not diagonal or a Jordan matrix: " + "; ".join(problems[:3]),
        residual=M,
        method="exact",
        claimed=P,
    )


def _check_D(A: sp.ImmutableMatrix, D: sp.ImmutableMatrix, lam: sp.Symbol) -> CheckItem:
    problems = _jordan_pattern(D)
    if problems:
        return CheckItem(
            name="D",
            step="D",
            ok=False,
            detail="D is not diagonal (or a Jordan matrix): " + "; ".join(problems[:3]),
            residual=D - sp.diag(*[D[i, i] for i in range(D.rows)]),
            method="exact",
            claimed=D,
        )
    problems = _spectrum_problems(A, D, lam)
    if problems:
        return CheckItem(
            name="D", step="D", ok=False, detail="; ".join(problems), residual=None, method="exact", claimed=D
        )
    kind = "diagonal" if D.is_diagonal() else "a Jordan matrix"
    return CheckItem(
        name="D",
        step="D",
        ok=True,
        detail=f"D is {kind} and its diagonal holds the eigenvalues of A with their multiplicities "
        "and eigenvector counts",
        residual=None,
        method="exact",
        claimed=D,
    )


def _check_P_inv(P: sp.ImmutableMatrix, P_inv: sp.ImmutableMatrix) -> CheckItem:
    n = P.shape[0]
    R = (P * P_inv - sp.eye(n)).applyfunc(sp.expand)
    L = (P_inv * P - sp.eye(n)).applyfunc(sp.expand)
    verdict = _decide_all(list(R) + list(L))
    if verdict.zero:
        return CheckItem(
            name="P_inv",
            step="P_inv",
            ok=True,
            detail=f"P P_inv = I and P_inv P = I ({verdict.describe()})",
            residual=sp.ImmutableMatrix(sp.zeros(n, n)),
            method=verdict.method,
            claimed=P_inv,
        )
    shown = _clean_matrix(R)
    detail = f"P P_inv - I = {_short(shown)} (should be the zero matrix)"
    expected = None
    if not _is_zero(sp.expand(P.det(method="berkowitz"))):
        expected = _clean_matrix(P.inv(method="ADJ"))
        wrong = [
            f"({i + 1},{j + 1})" for i in range(n) for j in range(n) if not _is_zero(expected[i, j] - P_inv[i, j])
        ]
        detail += f"; the right value is P^-1 = {_short(expected)} (entries {', '.join(wrong)} differ)"
    else:
        detail += "; P itself is singular, so it has no inverse"
    return CheckItem(
        name="P_inv", step="P_inv", ok=False, detail=f"{detail} ({verdict.describe()})", residual=shown,
        method=verdict.method, claimed=P_inv, expected=expected,
    )


@dataclass(frozen=True)
class _Problem:
    """The system the solution items are checked against."""

    A: sp.ImmutableMatrix
    f: sp.ImmutableMatrix
    t: sp.Symbol
    x0: sp.ImmutableMatrix | None
    t0: sp.Expr


class _RightSolution:
    """The pipeline's solutions, computed at most once per check and only to state a right value."""

    def __init__(self, problem: _Problem) -> None:
        self.problem = problem

    def get(self, *, ivp: bool) -> sp.ImmutableMatrix | None:
        found = _right_solutions(self.problem)
        return None if found is None else found.get("ivp" if ivp else "general")


@functools.lru_cache(maxsize=16)
def _right_solutions(problem: _Problem) -> Mapping[str, sp.ImmutableMatrix] | None:
    """derive.solve's general and IVP solutions, or None when it cannot give them."""
    from dataclasses import replace

    from .pipeline import build_system, solve_system

    try:
        system, _ = build_system(problem.A, problem.f, t=problem.t, x0=problem.x0, t0=problem.t0)
        out = {"general": solve_system(replace(system, x0=None), check=True).x}
        if problem.x0 is not None:
            out["ivp"] = solve_system(system, check=True).x
        return MappingProxyType(out)
    except TimeLimitError:
        raise
    except Exception:  # noqa: BLE001 - only a hint: any failure means "no right value to show"
        return None


def _solution_residual(prob: _Problem, x: sp.ImmutableMatrix) -> sp.ImmutableMatrix:
    return sp.ImmutableMatrix([sp.expand(sp.diff(x[i], prob.t) - (prob.A * x)[i] - prob.f[i]) for i in range(x.rows)])


def _ode_item(
    prob: _Problem, x: sp.ImmutableMatrix, constants: tuple[sp.Symbol, ...], *, step: str, right: _RightSolution
) -> CheckItem:
    n = prob.A.shape[0]
    name = f"{step}: x' = A x + f"
    r = _solution_residual(prob, x)
    verdict = _decide_all(list(r), prob.t)
    if verdict.zero:
        tail = " for all values of the constants" if constants else ""
        return CheckItem(
            name=name,
            step=step,
            ok=True,
            detail=f"x' - A x - f = 0{tail} ({verdict.describe()})",
            residual=sp.ImmutableMatrix(sp.zeros(n, 1)),
            method=verdict.method,
            claimed=x,
        )
    shown = _clean_matrix(r)
    hom = sp.ImmutableMatrix([sp.expand(sp.diff(x[i], prob.t) - (prob.A * x)[i]) for i in range(n)])
    zero_c = {c: 0 for c in constants}
    part_r = r.xreplace(zero_c).applyfunc(sp.expand)
    const_r = (r - part_r).applyfunc(sp.expand)
    if any(e != 0 for e in prob.f) and _decide_all(list(hom), prob.t).zero:
        why = "x satisfies x' = A x but not x' = A x + f: the particular solution is missing"
    elif constants and not _decide_all(list(const_r), prob.t).zero:
        why = (
            "the part with the constants does not satisfy x' = A x (check the exponents, e.g. the sign "
            "of the integrating factor, and the eigenvectors)"
        )
    elif constants:
        why = "the part without constants (the particular solution) does not satisfy x' = A x + f"
    else:
        why = (
            "x does not satisfy x' = A x + f (check the exponents, e.g. the sign of the integrating "
            "factor, and the particular solution)"
        )
    detail = f"x' - A x - f = {_short(shown)} (should be 0): {why} ({verdict.describe()})"
    expected = right.get(ivp=(step == "IVP solution"))
    if expected is not None:
        detail += f"; the right value is x = {_short(expected, 240)}"
    return CheckItem(
        name=name, step=step, ok=False, detail=detail, residual=shown, method=verdict.method,
        claimed=x, expected=expected,
    )


def _constants_item(prob: _Problem, x: sp.ImmutableMatrix, constants: tuple[sp.Symbol, ...]) -> CheckItem:
    n = prob.A.shape[0]
    name = "general solution: independent constants"
    names = ", ".join(c.name for c in constants) or "none"
    if len(constants) != n:
        detail = (
            f"x has {len(constants)} free constant{'s' if len(constants) != 1 else ''} ({names}); a general solution "
            f"of a system with {n} states has exactly {n} independent constants"
        )
        return CheckItem(name=name, step="general solution", ok=False, detail=detail, method="exact", claimed=x)
    Phi = x.jacobian(sp.Matrix(constants)).applyfunc(sp.expand)
    det = sp.expand(Phi.det(method="berkowitz"))
    verdict = _decide(det, prob.t)
    if not verdict.zero:
        return CheckItem(
            name=name,
            step="general solution",
            ok=True,
            detail=f"the fundamental matrix dx/dc for c = ({names}) has det = {_short(_clean(det), 100)}, "
            f"not identically zero ({verdict.describe()})",
            residual=det,
            method=verdict.method,
            claimed=x,
        )
    # Null vectors of dx/dc at t0 show which combination of constants is lost.
    detail = (
        f"det(dx/dc) = 0 for c = ({names}) ({verdict.describe()}): the constants are not independent, "
        f"so x cannot meet every initial condition"
    )
    try:
        null = sp.Matrix(Phi.xreplace({prob.t: prob.t0})).nullspace(iszerofunc=_is_zero, simplify=True)
    except (ValueError, TypeError, NotImplementedError):  # pragma: no cover - sympy internals
        null = []
    if null:
        w = _small_integers(sp.ImmutableMatrix(null[0]))
        detail += (
            f"; x does not change when ({names}) moves along the direction {_short(w)}, "
            "as when two constants enter only as one sum or as multiples of each other"
        )
    return CheckItem(
        name=name, step="general solution", ok=False, detail=detail, residual=det, method=verdict.method, claimed=x
    )


def _initial_item(prob: _Problem, x: sp.ImmutableMatrix, right: _RightSolution) -> CheckItem:
    assert prob.x0 is not None
    n = prob.A.shape[0]
    at = x.xreplace({prob.t: prob.t0})
    r = (at - prob.x0).applyfunc(sp.expand)
    verdict = _decide_all(list(r))
    name = "IVP solution: x(t0) = x0"
    if verdict.zero:
        return CheckItem(
            name=name,
            step="IVP solution",
            ok=True,
            detail=f"x({_plain(prob.t0)}) = {_short(prob.x0)} = x0 ({verdict.describe()})",
            residual=sp.ImmutableMatrix(sp.zeros(n, 1)),
            method=verdict.method,
            claimed=x,
        )
    shown = _clean_matrix(r)
    detail = (
        f"x({_plain(prob.t0)}) - x0 = {_short(shown)} (should be 0): x({_plain(prob.t0)}) = {_short(_clean_matrix(at))} "
        f"but x0 = {_short(prob.x0)}; check the constants found from the initial values ({verdict.describe()})"
    )
    expected = right.get(ivp=True)
    if expected is not None:
        detail += f"; the right value is x = {_short(expected, 240)}"
    return CheckItem(
        name=name, step="IVP solution", ok=False, detail=detail, residual=shown, method=verdict.method,
        claimed=x, expected=expected,
    )


# ---------------------------------------------------------------------------
# The public entry point


def _eigen_pairs(
    eigenvectors: Any,
    eigenvalues: tuple[sp.Expr, ...] | None,
    *,
    n: int,
    parse: Any,
) -> list[tuple[sp.Expr, sp.ImmutableMatrix]]:
    """Normalise the accepted eigenvector forms to (eigenvalue, vector) pairs."""

    def vec(value: Any, key: str) -> sp.ImmutableMatrix:
        return _matrix_of(value, n=n, key=key, cols=None, parse=parse)

    def is_vector(value: Any) -> bool:
        if isinstance(value, sp.MatrixBase):
            return True
        return isinstance(value, Sequence) and not isinstance(value, (str, bytes))

    pairs: list[tuple[sp.Expr, sp.ImmutableMatrix]] = []
    if isinstance(eigenvectors, Mapping):
        for k, (mu_raw, value) in enumerate(eigenvectors.items()):
            mu = parse(mu_raw, f"eigenvectors[{mu_raw!r}]") if isinstance(mu_raw, str) else parse(mu_raw, "eigenvectors")
            many = (
                isinstance(value, Sequence) and not isinstance(value, (str, bytes)) and value
                and all(is_vector(v) for v in value)
            ) or (isinstance(value, (list, tuple)) and value and all(isinstance(v, sp.MatrixBase) for v in value))
            if many:
                for j, v in enumerate(value):
                    pairs.append((mu, vec(v, f"eigenvectors[{mu_raw!r}][{j}]")))
            else:
                pairs.append((mu, vec(value, f"eigenvectors[{mu_raw!r}]")))
        return pairs
    if isinstance(eigenvectors, sp.MatrixBase) or isinstance(eigenvectors, (str, bytes)) or not isinstance(eigenvectors, Sequence):
        raise InputError(
            f"eigenvectors is {type(eigenvectors).__name__}; expected a list of (eigenvalue, vector) pairs, "
            "a list of vectors aligned with eigenvalues, or a mapping eigenvalue -> vector",
            key="eigenvectors",
        )
    items = list(eigenvectors)
    paired = [
        isinstance(it, (tuple, list)) and len(it) == 2 and not is_vector(it[0]) and is_vector(it[1]) for it in items
    ]
    if items and all(paired):
        for k, (mu_raw, v) in enumerate(items):
            pairs.append((parse(mu_raw, f"eigenvectors[{k}][0]"), vec(v, f"eigenvectors[{k}][1]")))
        return pairs
    if any(paired):
        k = paired.index(False)
        raise InputError(
            f"eigenvectors[{k}] is not an (eigenvalue, vector) pair like the others", key=f"eigenvectors[{k}]"
        )
    if eigenvalues is None:
        raise InputError(
            "eigenvectors are given as bare vectors, which needs eigenvalues aligned with them; "
            "give eigenvalues too, or write (eigenvalue, vector) pairs",
            key="eigenvectors",
        )
    if len(items) != len(eigenvalues):
        raise InputError(
            f"eigenvectors has {len(items)} vectors but eigenvalues has {len(eigenvalues)} values; "
            "bare vectors are paired with eigenvalues in order",
            key="eigenvectors",
        )
    return [(mu, vec(v, f"eigenvectors[{k}]")) for k, (mu, v) in enumerate(zip(eigenvalues, items))]


def _infer_t(t: Any, *objs: Any) -> sp.Symbol:
    if t is not None:
        if not isinstance(t, sp.Symbol):
            raise InputError(f"t must be a sympy Symbol, found {type(t).__name__}", key="t")
        return t
    for obj in objs:
        if isinstance(obj, (sp.Basic, sp.MatrixBase)):
            for s in obj.free_symbols:
                if isinstance(s, sp.Symbol) and s.name == "t":
                    return s
        elif isinstance(obj, Sequence) and not isinstance(obj, (str, bytes)):
            for e in obj:
                if isinstance(e, sp.Basic):
                    for s in e.free_symbols:
                        if isinstance(s, sp.Symbol) and s.name == "t":
                            return s
    return sp.Symbol("t", real=True)


def check(
    A,
    f=None,
    *,
    t=None,
    x=None,
    constants=None,
    x0=None,
    t0=0,
    eigenvalues=None,
    eigenvectors=None,
    P=None,
    D=None,
    P_inv=None,
) -> CheckReport:
    """Check each claimed step of a hand derivation of x' = A x + f(t) on its own.

    Claims may be sympy objects, numbers or expression strings; ``x`` may use
    any constant names (given in ``constants`` or inferred as the symbols of
    ``x`` other than ``t`` and those of the case).

    >>> rep = check([[3, 0], [0, -1]], P=[[0, 1], [1, 0]], D=[[3, 0], [0, -1]])
    >>> rep.ok, rep.first_failure.name
    (False, 'P')
    """
    notices: list[str] = []
    if isinstance(A, sp.MatrixBase):
        rows = A.tolist()
    elif isinstance(A, (str, bytes)) or not isinstance(A, Sequence):
        raise InputError(f"A must be a square matrix (a sympy Matrix or a list of rows), found {type(A).__name__}", key="A")
    else:
        rows = [list(r) if isinstance(r, Sequence) and not isinstance(r, (str, bytes)) else [r] for r in A]
    n = len(rows)
    if n == 0 or any(len(r) != n for r in rows):
        raise InputError(f"A must be square, found {n} rows of lengths {[len(r) for r in rows]}", key="A")

    t_sym = _infer_t(t, A, f, x)
    base = {t_sym.name: t_sym}
    # A and f may themselves be strings; they can use t and nothing undeclared.
    pre_syms = {**base}
    for obj in (A, f, x0):
        if isinstance(obj, sp.MatrixBase):
            pre_syms.update({s.name: s for s in obj.free_symbols if isinstance(s, sp.Symbol)})
        elif isinstance(obj, Sequence) and not isinstance(obj, (str, bytes)):
            for e in obj:
                for v in (e if isinstance(e, Sequence) and not isinstance(e, (str, bytes)) else [e]):
                    if isinstance(v, sp.Basic):
                        pre_syms.update({s.name: s for s in v.free_symbols if isinstance(s, sp.Symbol)})

    def parse_case(value: Any, key: str) -> sp.Expr:
        return parse_claim_value(value, symbols=pre_syms, key=key, notices=notices)

    Am = sp.ImmutableMatrix([[parse_case(v, f"A[{i}][{j}]") for j, v in enumerate(r)] for i, r in enumerate(rows)])
    if Am.has(t_sym):
        raise InputError(f"A depends on {t_sym}: the check needs constant coefficients", key="A")
    fm = (
        sp.ImmutableMatrix(sp.zeros(n, 1))
        if f is None
        else _matrix_of(f, n=n, key="f", cols=None, parse=parse_case)
    )
    x0m = None if x0 is None else _matrix_of(x0, n=n, key="x0", cols=None, parse=parse_case)
    t0e = parse_case(t0, "t0")

    const_syms: tuple[sp.Symbol, ...] = ()
    if constants is not None:
        if isinstance(constants, (str, bytes)) or not isinstance(constants, Sequence):
            raise InputError(f"constants is {type(constants).__name__}; expected a list of symbols or names", key="constants")
        made: list[sp.Symbol] = []
        for k, c in enumerate(constants):
            if isinstance(c, sp.Symbol):
                made.append(c)
            elif isinstance(c, str):
                from .parsing import name_problem

                problem = name_problem(c)
                if problem is not None:
                    raise InputError(f"{problem}; expected a constant name such as c1", key=f"constants[{k}]")
                made.append(sp.Symbol(c))
            else:
                raise InputError(f"constants[{k}] is {type(c).__name__}; expected a Symbol or a name", key=f"constants[{k}]")
        const_syms = tuple(made)
    case_names = claim_symbols(Am, fm, t_sym, x0m, t0e)
    for k, c in enumerate(const_syms):
        if c.name in case_names:
            raise InputError(
                f"the constant {c.name!r} has the name of a symbol of the case; expected a new name",
                key=f"constants[{k}]",
            )
    symbols = claim_symbols(Am, fm, t_sym, x0m, t0e, constants=const_syms)

    def parse(value: Any, key: str) -> sp.Expr:
        return parse_claim_value(value, symbols=symbols, key=key, notices=notices)

    # The eigenvalue variable shows in the details; a Dummy only if the case uses the name.
    lam = sp.Symbol("lambda")
    if lam in Am.free_symbols:
        lam = sp.Dummy("lambda")
    items: list[CheckItem] = []

    ev: tuple[sp.Expr, ...] | None = None
    if eigenvalues is not None:
        if isinstance(eigenvalues, (str, bytes)) or not isinstance(eigenvalues, (Sequence, sp.MatrixBase)):
            raise InputError(f"eigenvalues is {type(eigenvalues).__name__}; expected a list of values", key="eigenvalues")
        ev = tuple(parse(v, f"eigenvalues[{k}]") for k, v in enumerate(eigenvalues))
        items.append(_check_eigenvalues(Am, ev, lam))

    if eigenvectors is not None:
        pairs = _eigen_pairs(eigenvectors, ev, n=n, parse=parse)
        groups = _group_values([mu for mu, _ in pairs])
        seen: dict[int, int] = {}
        for mu, v in pairs:
            g = next(k for k, (m, _) in enumerate(groups) if _is_zero(m - mu))
            seen[g] = seen.get(g, 0) + 1
            items.append(_check_eigenvector(Am, mu, v, _eigen_name(groups[g][0], seen[g], groups[g][1])))
        for g, (mu, count) in enumerate(groups):
            if count > 1:
                vs = [v for m, v in pairs if _is_zero(m - mu)]
                items.append(_check_independence(mu, vs))

    Pm = None if P is None else _matrix_of(P, n=n, key="P", cols=n, parse=parse)
    Dm = None if D is None else _matrix_of(D, n=n, key="D", cols=n, parse=parse)
    Pim = None if P_inv is None else _matrix_of(P_inv, n=n, key="P_inv", cols=n, parse=parse)
    if Pim is not None and Pm is None:
        raise InputError("P_inv is claimed without P; P P_inv = I can only be checked with P", key="P_inv")
    d_item = _check_D(Am, Dm, lam) if Dm is not None else None
    if Pm is not None:
        items.append(_check_P(Am, Pm, Dm, d_item is not None and d_item.ok))
    if d_item is not None:
        items.append(d_item)
    if Pim is not None and Pm is not None:
        items.append(_check_P_inv(Pm, Pim))

    const_used = const_syms
    if x is not None:
        new_names: dict[str, sp.Symbol] = {}
        if constants is None:
            def parse_x(value: Any, key: str) -> sp.Expr:
                return parse_claim_value(value, symbols=symbols, key=key, new_names=new_names, notices=notices)
        else:
            parse_x = parse
        xm = _matrix_of(x, n=n, key="x", cols=None, parse=parse_x)
        if constants is None:
            case_syms = set(Am.free_symbols) | set(fm.free_symbols) | {t_sym}
            # The symbols of x0 and t0 are parameters of the case too, not constants.
            case_syms |= set(x0m.free_symbols) if x0m is not None else set()
            case_syms |= set(t0e.free_symbols)
            const_used = tuple(sorted((s for s in xm.free_symbols - case_syms if isinstance(s, sp.Symbol)), key=sp.default_sort_key))
            if const_used:
                notices.append("x: taken as the claimant's constants: " + ", ".join(c.name for c in const_used))
        prob = _Problem(A=Am, f=fm, t=t_sym, x0=x0m, t0=t0e)
        right = _RightSolution(prob)
        if const_used or x0m is None:
            items.append(_ode_item(prob, xm, const_used, step="general solution", right=right))
            items.append(_constants_item(prob, xm, const_used))
            if x0m is not None:
                notices.append("x has free constants, so it is checked as a general solution; x(t0) = x0 is not checked")
        else:
            items.append(_ode_item(prob, xm, (), step="IVP solution", right=right))
            items.append(_initial_item(prob, xm, right))

    if not items:
        raise InputError(
            "nothing to check: the claim holds none of eigenvalues, eigenvectors, P, D, P_inv, x",
            key="claim",
        )
    order = {s: k for k, s in enumerate(STEP_ORDER)}
    ordered = tuple(sorted(items, key=lambda it: order[it.step]))  # stable within a step
    return CheckReport(
        items=ordered,
        A=Am,
        f=fm,
        t=t_sym,
        x0=x0m,
        t0=t0e,
        constants=tuple(const_used),
        notices=tuple(dict.fromkeys(notices)),
    )
