"""eigensheet (Python package `derive`): exact closed-form solutions of x' = A x + f(t), every step shown.

>>> import derive
>>> sol = derive.solve([[0, 1], [-2, -3]], x0=[1, 0])
>>> sol.x.T
Matrix([[2*exp(-t) - exp(-2*t), -2*exp(-t) + 2*exp(-2*t)]])

The public API is what ``__all__`` lists; everything else is internal.
"""

from __future__ import annotations

import functools
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
from .model import Case, Parameter, SheetMeta, Solution, System, Tolerance, Verification  # noqa: E402
from .pipeline import solve, solve_case, solve_system  # noqa: E402
from .casefile import load_case, loads_case  # noqa: E402
from .render import render  # noqa: E402
from .check import CheckItem, CheckReport, check  # noqa: E402
from .batch import BatchReport, CaseResult, batch  # noqa: E402
from .reading import Response, response  # noqa: E402
from .second_order import solve_second_order  # noqa: E402


def _attach_reading() -> None:
    """Give ``Solution`` its engineering reading as ``Solution.response``.

    The reading is computed on first access and kept (a solve that is never
    read does not pay for it).  It is attached here, where the package puts its
    parts together, because the reading re-solves through the pipeline where a
    closed form is singular at the given values: a ``model -> reading`` import
    would close an import cycle.
    """
    prop = functools.cached_property(response)
    prop.__set_name__(Solution, "response")
    prop.__doc__ = "The engineering reading (derive.reading.response) at the declared parameter values."
    setattr(Solution, "response", prop)


_attach_reading()


def _attach_notebook_display() -> None:
    """Show ``Solution`` and ``CheckReport`` as rendered mathematics in Jupyter (``_repr_markdown_``).

    Attached here for the reason the reading is: the renderers import the
    records, so the records cannot import the renderers.
    """
    from .render.notebook import check_report_markdown, solution_markdown

    setattr(Solution, "_repr_markdown_", solution_markdown)
    setattr(CheckReport, "_repr_markdown_", check_report_markdown)


_attach_notebook_display()

__all__ = [
    "__version__",
    "solve",
    "solve_case",
    "solve_system",
    "solve_second_order",
    "load_case",
    "loads_case",
    "render",
    "response",
    "Response",
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
    "Tolerance",
]
