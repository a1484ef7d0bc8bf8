"""The Laplace route, an independent check of the solution: G(s) and the response by partial fractions.

Nothing here uses the eigenvectors, P or P^-1 of the main route.  The
transform of x' = A x + B u from the initial instant t0 is

    X(s) = (sI - A)^-1 (x(t0) + F(s)),     G(s) = C (sI - A)^-1 B + D,

with (sI - A)^-1 = adj(sI - A) / det(sI - A) in exact arithmetic.  For a
forcing that is a sum of c (t - t0)^k e^{gamma (t - t0)} (polynomials,
exponentials, sines, cosines: read by ``derive.expoly``) F(s) is rational,
each c k! / (s - gamma)^(k+1), and X(s) is inverted by the residue formula at
each pole (the eigenvalues, whose product must give det(sI - A) exactly, and
the forcing's exponents).  No general inverse transform is called.

The input matrix B: the forcing is written f(t) = B u(t) with one input when
every entry of f is a constant times one common function of t (a constant
f is then B with u = 1), and with B = I, u = f, otherwise.  With no outputs
declared, C = I and D = 0, so G(s) maps the inputs to the states.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, fields
from typing import Any, Sequence

import sympy as sp

from .errors import InputError
from .expoly import NotExpPoly, to_expoly
from .limits import LimitExpired, inner_limit
from .settings import DEFAULT_SETTINGS, Settings
from .steps import Deferred, LaplaceCheckStep
from .verify.zero import decide

__all__ = [
    "FrequencyResponse",
    "frequency_response",
    "input_matrix",
    "laplace_check",
    "deferred_laplace_check",
    "laplace_response",
    "transfer_function",
    "MAX_CHECK_STATES",
]

#: the check runs on systems of at most this many states (the adjugate and the residues grow fast)
MAX_CHECK_STATES = 4


class NotChecked(Exception):
    """The Laplace route does not apply here; the message says why (one clause for the sheet)."""


def transfer_function(
    A: sp.MatrixBase, B: sp.MatrixBase, C: sp.MatrixBase | None = None, D: sp.MatrixBase | None = None, *, s: sp.Symbol
) -> sp.ImmutableMatrix:
    """G(s) = C (sI - A)^-1 B + D, each entry a cancelled rational function of s.

    >>> s = sp.Symbol("s")
    >>> transfer_function(sp.Matrix([[0, 1], [-2, -3]]), sp.Matrix([0, 1]), sp.Matrix([[1, 0]]), s=s)
    Matrix([[1/((s + 1)*(s + 2))]])
    """
    n = A.rows
    shifted = s * sp.eye(n) - A
    adj, det = shifted.adjugate(), sp.expand(shifted.det(method="berkowitz"))
    C = sp.eye(n) if C is None else C
    G = (C * adj * B) / det
    if D is not None:
        G = G + D
    return sp.ImmutableMatrix(G.applyfunc(lambda e: sp.factor(sp.cancel(e))))


def input_matrix(f: sp.MatrixBase, t: sp.Symbol) -> tuple[sp.ImmutableMatrix, tuple[sp.Expr, ...], str]:
    """(B, u, how) with f = B u: one input when f is a constant vector times one function of t, else B = I.

    >>> t = sp.Symbol("t")
    >>> input_matrix(sp.Matrix([0, 4*sp.sin(t)]), t)[:2]
    (Matrix([
    [0],
    [4]]), (sin(t),))
    """
    n = f.rows
    entries = [sp.expand(e) for e in f]
    lead = next((e for e in entries if e != 0), None)
    if lead is None:
        return sp.ImmutableMatrix(sp.eye(n)), (), "the system is unforced: G(s) is then the resolvent (sI - A)^-1"
    _, h = lead.as_independent(t, as_Add=False)
    column = [sp.cancel(e / h) for e in entries]
    if all(t not in c.free_symbols for c in column):
        if h == 1:
            return sp.ImmutableMatrix(column), (sp.Integer(1),), "the forcing is constant: one input u = 1 with B = f"
        return sp.ImmutableMatrix(column), (h,), "the forcing is one function of time times a constant vector B"
    return sp.ImmutableMatrix(sp.eye(n)), tuple(f), "each state equation has its own input, B = I"


def _poles(eigenvalues: Sequence[sp.Expr], forcing: Sequence[Any], s: sp.Symbol, det: sp.Expr) -> list[list[Any]]:
    """[pole, order] of X(s): the eigenvalues (checked against det(sI - A)) and the forcing's exponents."""
    if decide(sp.expand(sp.Mul(*[s - e for e in eigenvalues]) - det)).zero is not True:
        raise NotChecked("the eigenvalues do not give det(sI - A) exactly")
    out: list[list[Any]] = []
    for p in [*eigenvalues, *forcing]:
        for entry in out:
            if sp.expand(entry[0] - p) == 0:
                entry[1] += 1
                break
        else:
            out.append([p, 1])
    return out


def _response_terms(
    A: sp.MatrixBase, f: sp.MatrixBase, x_start: sp.MatrixBase, eigenvalues: Sequence[sp.Expr], *,
    t: sp.Symbol, t0: sp.Expr, s: sp.Symbol, tau: sp.Symbol,
) -> list[dict[tuple[int, sp.Expr], sp.Expr]]:
    """Per state, {(k, pole): c} with x(t0 + tau) = sum c tau^k e^{pole tau}, from the residues of X(s) e^{s tau}."""
    n = A.rows
    terms: list[list[tuple[sp.Expr, int, sp.Expr]]] = []
    for e in f:
        try:
            p = to_expoly(e.xreplace({t: tau + t0}), tau)
        except NotExpPoly:
            raise NotChecked("the forcing is not a sum of powers, exponentials and sinusoids of t, "
                             "so its transform is not a rational function of s") from None
        terms.append([(c, k, g) for (k, g), c in p.as_dict().items()])
    # Q(s): the forcing's poles with their highest orders, so that F(s) Q(s) is a polynomial
    order: dict[sp.Expr, int] = {}
    for row in terms:
        for _, k, g in row:
            order[g] = max(order.get(g, 0), k + 1)
    Q = sp.Mul(*[(s - g) ** m for g, m in order.items()])
    FQ = sp.Matrix([sum((c * math.factorial(k) * (s - g) ** (order[g] - k - 1)
                         * sp.Mul(*[(s - h) ** m for h, m in order.items() if h != g]) for c, k, g in row), sp.Integer(0))
                    for row in terms])
    shifted = s * sp.eye(n) - A
    adj, det = shifted.adjugate(), sp.expand(shifted.det(method="berkowitz"))
    numerator = adj * (sp.Matrix(x_start) * Q + FQ)
    forcing_poles = [g for g, m in order.items() for _ in range(m)]
    poles = _poles(eigenvalues, forcing_poles, s, det)
    out: list[dict[tuple[int, sp.Expr], sp.Expr]] = [{} for _ in range(n)]
    for k, (p, m) in enumerate(poles):
        others = sp.Mul(*[(s - q) ** mq for j, (q, mq) in enumerate(poles) if j != k])
        for i in range(n):
            # d^(m-1)/ds^(m-1) [h(s) e^{s tau}] = sum_j C(m-1, j) h^(m-1-j)(s) tau^j e^{s tau}
            h = numerator[i] / others
            for j in range(m):
                value = sp.diff(h, s, m - 1 - j).xreplace({s: p}) if m - 1 - j else h.xreplace({s: p})
                if value.has(sp.zoo, sp.nan):
                    raise NotChecked("two poles of X(s) could not be told apart exactly")
                c = sp.binomial(m - 1, j) * value / math.factorial(m - 1)
                if c != 0:
                    out[i][(j, p)] = out[i].get((j, p), sp.Integer(0)) + c
    return out


def laplace_response(
    A: sp.MatrixBase, f: sp.MatrixBase, x_start: sp.MatrixBase, eigenvalues: Sequence[sp.Expr], *,
    t: sp.Symbol, t0: sp.Expr = sp.Integer(0), s: sp.Symbol,
) -> sp.ImmutableMatrix:
    """x(t) from X(s) = (sI - A)^-1 (x(t0) + F(s)), inverted by residues at the poles.

    ``eigenvalues`` are those of A with repetition; a forcing that is not a
    sum of powers, exponentials and sinusoids raises ``NotChecked``.

    >>> t, s = sp.symbols("t s")
    >>> laplace_response(sp.Matrix([[-1]]), sp.Matrix([1]), sp.Matrix([0]), [-1], t=t, s=s)
    Matrix([[1 - exp(-t)]])
    """
    tau = sp.Dummy("tau", real=True)
    rows = _response_terms(A, f, x_start, eigenvalues, t=t, t0=t0, s=s, tau=tau)
    return sp.ImmutableMatrix([sp.Add(*[sp.factor(c) * (t - t0) ** k * sp.exp(p * (t - t0)) for (k, p), c in row.items()])
                               for row in rows])


def _agreement(
    found: dict[tuple[int, sp.Expr], sp.Expr], x: sp.Expr, t: sp.Symbol, t0: sp.Expr, tau: sp.Symbol, settings: Settings
) -> list[Any]:
    """Zero verdicts for the difference, one per term t^k e^{gamma t}: each coefficient is free of t, so the
    zero engine settles it in milliseconds where the whole expression in t can take minutes.  Exponents
    written differently by the two routes are matched by the engine too."""
    try:
        mine = to_expoly(x.xreplace({t: tau + t0}), tau).as_dict()
    except NotExpPoly:
        whole = sp.Add(*[c * (t - t0) ** k * sp.exp(p * (t - t0)) for (k, p), c in found.items()]) - x
        return [decide(whole, t=t, policy=settings.zero)]
    groups: list[list[Any]] = []  # [k, exponent, coefficient difference]
    for sign, items in ((1, found.items()), (-1, mine.items())):
        for (k, g), c in items:
            for group in groups:
                if group[0] == k and (sp.expand(group[1] - g) == 0 or decide(group[1] - g, policy=settings.zero).zero):
                    group[2] += sign * c
                    break
            else:
                groups.append([k, g, sign * c])
    return [_coefficient_zero(c, settings) for _, _, c in groups]


def _coefficient_zero(c: sp.Expr, settings: Settings) -> Any:
    """The engine's verdict on one coefficient, after the cheap exact test: over one denominator, the
    numerator expands to zero (cancel on a sum of rational functions with i can run for minutes)."""
    numerator, _ = sp.fraction(sp.together(c))
    if sp.expand(numerator) == 0:
        return decide(sp.Integer(0), policy=settings.zero)
    return decide(c, policy=settings.zero)


def laplace_check(
    system: Any, x: sp.MatrixBase, eigenvalues: Sequence[sp.Expr], *, closed_form: bool = True,
    settings: Settings = DEFAULT_SETTINGS,
) -> LaplaceCheckStep:
    """The sheet's Laplace step: G(s), and x(t) found again and compared with ``x``; or why it was not run.

    ``closed_form`` is False when the solution came interval by interval or
    through convolution integrals: the forcing then has no rational transform
    here, and the check is not attempted (reading such a forcing can be slow).
    """
    t = system.t
    s = _laplace_variable(system)
    if system.n > MAX_CHECK_STATES:
        return LaplaceCheckStep(t=t, s=s, ran=False, reason=f"it is made for systems of at most {MAX_CHECK_STATES} states")
    if not closed_form:
        return LaplaceCheckStep(t=t, s=s, ran=False, reason="the input is not a sum of powers, exponentials and "
                                "sinusoids (the solution is found interval by interval or by convolution)")
    if any(e.has(sp.CRootOf) for e in eigenvalues):
        return LaplaceCheckStep(t=t, s=s, ran=False, reason="the eigenvalues are indexed roots, whose residues are costly")
    B, u, how = input_matrix(system.f, t)
    x_start = system.x0 if system.x0 is not None else sp.ImmutableMatrix(x.xreplace({t: system.t0}))
    try:
        with inner_limit(settings.laplace_seconds) as armed:
            if not armed:
                raise NotChecked("no timer can bound it here (not the main thread)")
            G = transfer_function(system.A, B, s=s)
            tau = sp.Dummy("tau", real=True)
            rows = _response_terms(system.A, system.f, x_start, eigenvalues, t=t, t0=system.t0, s=s, tau=tau)
            verdicts = [v for row, e in zip(rows, x) for v in _agreement(row, e, t, system.t0, tau, settings)]
            found = sp.ImmutableMatrix([
                sp.Add(*[c * (t - system.t0) ** k * sp.exp(p * (t - system.t0)) for (k, p), c in row.items()]) for row in rows
            ])
    except NotChecked as why:
        return LaplaceCheckStep(t=t, s=s, ran=False, reason=str(why))
    except LimitExpired:
        return LaplaceCheckStep(t=t, s=s, ran=False, reason=f"it did not finish within {settings.laplace_seconds:g} s")
    except (ArithmeticError, ValueError, TypeError, NotImplementedError, sp.PolynomialError) as err:
        # a second opinion that sympy cannot finish must not take the verified solution down with it
        return LaplaceCheckStep(t=t, s=s, ran=False, reason=f"sympy could not complete the transform route ({type(err).__name__})")
    agrees = all(v.zero for v in verdicts)
    method = "exact" if all(v.kind == "exact" for v in verdicts) else next(v.short for v in verdicts if v.kind != "exact")
    return LaplaceCheckStep(t=t, s=s, ran=True, reason=how, B=B, inputs=u, G=G, x=found, agrees=agrees, method=method)


class _Once:
    """One Laplace check, made on the first read of any of its step's fields and kept."""

    def __init__(self, *args: Any, **kwargs: Any) -> None:
        self.args, self.kwargs = args, kwargs
        self.step: LaplaceCheckStep | None = None

    def field(self, name: str) -> Any:
        if self.step is None:
            self.step = laplace_check(*self.args, **self.kwargs)
        return getattr(self.step, name)


def _field(once: _Once, name: str) -> Any:
    return once.field(name)


def deferred_laplace_check(
    system: Any, x: sp.MatrixBase, eigenvalues: Sequence[sp.Expr], *, closed_form: bool = True,
    settings: Settings = DEFAULT_SETTINGS,
) -> LaplaceCheckStep:
    """The step of :func:`laplace_check`, made when the step is first read (by a sheet, a test, pickling).

    The check is a second opinion beside the verification, which decides
    ``Solution.ok`` on its own; a solve that is never shown need not pay for
    it (it cost about as much as the solve itself on small cases).
    """
    once = _Once(system, x, tuple(eigenvalues), closed_form=closed_form, settings=settings)
    lazy: dict[str, Any] = {f.name: Deferred(_field, once, f.name) for f in fields(LaplaceCheckStep) if f.name not in ("t", "s")}
    return LaplaceCheckStep(t=system.t, s=_laplace_variable(system), **lazy)


def _laplace_variable(system: Any) -> sp.Symbol:
    used = {x.name for x in system.A.free_symbols | system.f.free_symbols} | {x.name for x in system.states}
    used |= {p.name for p in system.params} | {system.t.name}
    return next(sp.Symbol(n) for n in ("s", "p", "s_L") if n not in used)


@dataclass(frozen=True)
class FrequencyResponse:
    """Samples of G(i omega) for one input and one output: magnitude and phase (degrees, unwrapped)."""

    omega: tuple[float, ...]
    magnitude: tuple[float, ...]
    phase_degrees: tuple[float, ...]


def frequency_response(
    G: sp.Expr, s: sp.Symbol, *, values: dict[sp.Symbol, sp.Expr] | None = None,
    omega_min: float = 1e-2, omega_max: float = 1e2, points: int = 200,
) -> FrequencyResponse:
    """|G(i omega)| and arg G(i omega) on a logarithmic grid, for a figure (floats: drawing only).

    >>> s = sp.Symbol("s")
    >>> r = frequency_response(1 / (s + 1), s, omega_min=1, omega_max=1, points=1)
    >>> round(r.magnitude[0], 6), round(r.phase_degrees[0], 6)
    (0.707107, -45.0)
    """
    import numpy as np

    expr = sp.sympify(G, strict=True).xreplace(dict(values or {}))  # sympy objects only, never text
    free = expr.free_symbols - {s}
    if free:
        names = ", ".join(sorted(x.name for x in free))
        raise InputError(f"G(s) holds {names} without values; give them in values=", key="values")
    fn = sp.lambdify(s, expr, "numpy")
    w = np.logspace(np.log10(omega_min), np.log10(omega_max), points)
    g = np.asarray(fn(1j * w), dtype=complex) * np.ones_like(w)
    phase = np.degrees(np.unwrap(np.angle(g)))
    return FrequencyResponse(tuple(map(float, w)), tuple(map(float, np.abs(g))), tuple(map(float, phase)))
