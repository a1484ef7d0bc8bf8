"""One frozen record of every tuning knob, passed in rather than patched.

Library functions take ``settings: Settings = DEFAULT_SETTINGS`` as a
keyword-only argument; a variant is made with ``dataclasses.replace``::

    >>> from dataclasses import replace
    >>> quick = replace(DEFAULT_SETTINGS, integrate_seconds=1.0)
    >>> quick.integrate_seconds, DEFAULT_SETTINGS.integrate_seconds
    (1.0, 5.0)

Nothing here is read from a module global at call time, so tests vary a knob
by passing a record, never by monkeypatching a module.
"""

from __future__ import annotations

from dataclasses import dataclass

__all__ = ["Settings", "ZeroPolicy", "DEFAULT_SETTINGS", "DEFAULT_ZERO_POLICY"]


@dataclass(frozen=True)
class ZeroPolicy:
    """How "is this expression identically zero?" is decided, everywhere.

    Structural and ring tests come first (they are exact); when they cannot
    settle an expression, ``simplify_ops`` bounds the size of an expression
    handed to sympy's simplifier, and the last word is a numeric identity test
    at ``digits`` significant digits at ``points`` pseudo-random points drawn
    with ``seed``: |e| <= ``relative_tol`` times the size of its terms counts
    as zero there.
    """

    digits: int = 50
    points: int = 5
    seed: int = 60221
    simplify_ops: int = 300
    relative_tol: float = 1e-30
    #: seconds sympy's simplifier may take on one expression; past it the numeric identity test decides
    simplify_seconds: float = 2.0


DEFAULT_ZERO_POLICY = ZeroPolicy()


@dataclass(frozen=True)
class Settings:
    """Limits, tolerances and budgets of one solve (or one batch)."""

    #: the zero-decision policy shared by verification and claim checks
    zero: ZeroPolicy = DEFAULT_ZERO_POLICY
    #: numeric cross-check: integrator tolerances, accepted relative gap, grid size
    numeric_rtol: float = 1e-11
    numeric_atol: float = 1e-13
    numeric_gap_limit: float = 1e-6
    numeric_points: int = 60
    #: cubics and quartics whose radical form needs more operations become indexed roots
    radical_ops_limit: int = 16
    #: switched inputs: more intervals than this is a pulse train better given as a periodic model
    max_intervals: int = 64
    #: convolution inputs: seconds for one integral, and for all integrals of one solve
    integrate_seconds: float = 5.0
    integrate_budget: float = 20.0
    #: the default time limit of one case, in seconds
    timeout: float = 120.0
    #: batches: seconds past a case's own limit (and its writing allowance) before the
    #: pool stops its worker, seconds for rendering and writing one case's outputs, and
    #: seconds more for TeX when PDFs are built
    batch_grace: float = 5.0
    batch_write_seconds: float = 60.0
    batch_tex_seconds: float = 120.0
    #: numeric check: digits of the repeat at high precision when double precision is limited by round-off
    numeric_hp_digits: int = 30
    #: batches: seconds for the engineering reading of one case (stability, time constant, final values, peaks)
    batch_reading_seconds: float = 10.0
    #: seconds for the independent check through the Laplace transform (derive.laplace)
    laplace_seconds: float = 5.0


DEFAULT_SETTINGS = Settings()
