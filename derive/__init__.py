"""eigensheet (Python package `derive`): exact closed-form solutions of x' = A x + f(t), every step shown.

>>> import derive
>>> sol = derive.solve([[0, 1], [-2, -3]], x0=[1, 0])
>>> sol.x.T
Matrix([[2*exp(-t) - exp(-2*t), -2*exp(-t) + 2*exp(-2*t)]])

The public API is what ``__all__`` lists; everything else is internal.
"""

from __future__ import annotations

from importlib import metadata as _metadata


def _distribution_version() -> str:
    """The version of the installed distribution that provides this package.

    pyproject.toml is the one place the version is written; the distribution's
    name is looked up rather than assumed, so a rename of the distribution does
    not leave a stale number here.  A source tree that was never installed has
    no metadata and says so instead of guessing.
    """
    names = list(dict.fromkeys(_metadata.packages_distributions().get(__name__, ())))
    for name in (*names, "eigensheet", "derive"):
        try:
            return _metadata.version(name)
        except _metadata.PackageNotFoundError:
            continue
    return "0+unknown"


__version__ = _distribution_version()

from .errors import (  # noqa: E402
    CaseFileError,
    DeriveError,
    ExpressionError,
    InputError,
    LimitError,
    OutputError,
    TimeLimitError,
    UnsupportedError,
    VerificationError,
)
from .model import Case, Parameter, SheetMeta, Solution, System, Verification  # noqa: E402
from .pipeline import solve, solve_case, solve_system  # noqa: E402
from .casefile import load_case, loads_case  # noqa: E402
from .render import render  # noqa: E402
from .check import CheckItem, CheckReport, check  # noqa: E402
from .batch import BatchReport, CaseResult, batch  # noqa: E402

__all__ = [
    "__version__",
    "solve",
    "solve_case",
    "solve_system",
    "load_case",
    "loads_case",
    "render",
    "check",
    "batch",
    "BatchReport",
    "CaseResult",
    "CheckReport",
    "CheckItem",
    "Solution",
    "System",
    "Case",
    "Parameter",
    "SheetMeta",
    "Verification",
    "DeriveError",
    "InputError",
    "ExpressionError",
    "CaseFileError",
    "LimitError",
    "UnsupportedError",
    "VerificationError",
    "TimeLimitError",
    "OutputError",
]
