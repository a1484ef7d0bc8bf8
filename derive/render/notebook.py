"""How a ``Solution`` and a ``CheckReport`` show themselves in a Jupyter notebook: Markdown with mathematics.

Jupyter calls ``_repr_markdown_`` and renders the ``$...$`` in it, so a
solution appears as its result written as mathematics (not as the repr of
its sympy matrices).  A solution shows its result, eigenvalues, conditions
and verification, the short form of its sheet; a check report shows the
whole report, which is short.  ``derive/__init__.py`` attaches these to the
records (``model`` and ``check`` cannot import the renderers without an
import cycle).
"""

from __future__ import annotations

from typing import Any

import sympy as sp

from ..documents.blocks import Block, Eq, Heading, Items, Math, P
from ..documents.check_report import CheckReportDocument
from ..documents.sheet import FAILED, sheet_lambda
from ..documents.sheet_steps import StepContext
from ..model import Solution
from ..render.escape import spoken
from .markdown import MarkdownRenderer, blocks_to_markdown
from .printing import MathFormatter, MathStyle, collect_roots

__all__ = ["solution_markdown", "check_report_markdown"]


def solution_markdown(solution: Solution) -> str:
    """The solution as Markdown with mathematics: x(t), eigenvalues, conditions and verification.

    >>> import derive
    >>> print(solution_markdown(derive.solve([[-1]], x0=[2])).splitlines()[4])
    {x_{1}}(t) &= 2 e^{- t}
    """
    style = MathStyle()
    roots = collect_roots(solution.eigenvalues, solution.steps, solution.x, digits=style.digits)
    fmt = MathFormatter.for_roots(roots, style=style)
    ctx = StepContext(solution=solution, fmt=fmt, lam=sheet_lambda(solution))
    ver = solution.verification
    blocks: list[Block] = [Heading(3, "Solution of x' = A x + f(t)" + (" with x(t0) = x0" if solution.system.is_ivp else ""))]
    if not ver.ok:
        blocks.append(P(FAILED))
    blocks.append(Eq(ctx.state_rows(solution.x)))
    blocks += ctx.legend([solution.x])
    blocks.append(P("Eigenvalues: ", Math(sp.Tuple(*solution.eigenvalues)), "."))
    if solution.constants:
        blocks.append(P("Arbitrary constants: ", Math(sp.Tuple(*solution.constants)), "."))
    if solution.conditions:
        blocks.append(P("Holds under these conditions:"))
        blocks.append(Items(tuple((Math(c.expr), f" {c.relation}: {spoken(c.reason)}") for c in solution.conditions)))
    numeric = ver.numeric
    checks = [
        "residual x' - A x - f " + ("reduces to zero" if ver.residual_zero else "is NOT zero"),
        "initial values " + ("met" if ver.initial_ok else "not given" if ver.initial_ok is None else "NOT met"),
        "numeric integration " + ("not run" if numeric is None else "agrees" if numeric.ok else "DISAGREES"),
    ]
    blocks.append(P("Verified: " + "; ".join(checks) + "." if ver.ok else "Verification: " + "; ".join(checks) + "."))
    return blocks_to_markdown(blocks, fmt)


def check_report_markdown(report: Any) -> str:
    """A check report as Markdown with mathematics (the whole report, without its title block)."""
    return MarkdownRenderer().render(CheckReportDocument(report), fragment=True)
