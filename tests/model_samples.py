"""Samples of the model-form step kinds (reduction, modal route, Laplace check) for tests/test_render.py.

Built by hand for a mass m = 1 on a spring k = 2 (omega^2 = 2) and for
y'' + 3 y' + 2 y = e^{-t}: small exact objects, so every renderer shows them.
"""

from __future__ import annotations

import sympy as sp

from derive.modal import Modes
from derive.reduction import derivative_symbol
from derive.steps import LaplaceCheckStep, ModalStep, ReductionStep, Step

t, s = sp.Symbol("t", real=True), sp.Symbol("s")
y, yd = derivative_symbol("y", 0), derivative_symbol("y", 1)
q1, q1d = derivative_symbol("q1", 0), derivative_symbol("q1", 1)
M = sp.ImmutableMatrix


def model_step_samples() -> dict[str, Step]:
    """One sample of each model-form step kind, keyed by kind."""
    return {
        "reduction": ReductionStep(
            t=t, equations=("y'' + 3*y' + 2*y = exp(-t)",), definitions=((y, y, 0), (yd, y, 1)),
            rows=((y, yd), (yd, -2 * y - 3 * yd + sp.exp(-t))), A=M([[0, 1], [-2, -3]]), f=M([0, sp.exp(-t)]),
        ),
        "modal": ModalStep(
            t=t, coordinates=(q1,), eta=(sp.Symbol("eta_1", real=True),), M=M([[1]]), C=M([[0]]), K=M([[2]]),
            F=M([sp.sin(t)]), rayleigh=(sp.Integer(0), sp.Integer(0)),
            modes=Modes((sp.Integer(2),), (sp.sqrt(2),), M([[1]]), (sp.Integer(0), sp.Integer(0)), (sp.Integer(0),)),
            frequency_equation=2 - sp.Symbol("omega", positive=True) ** 2,
        ),
        "laplace_check": LaplaceCheckStep(
            t=t, s=s, ran=True, reason="the forcing is one function of time times a constant vector B",
            B=M([0, 1]), inputs=(sp.exp(-t),), G=M([1 / ((s + 1) * (s + 2)), s / ((s + 1) * (s + 2))]),
            x=M([t * sp.exp(-t), (1 - t) * sp.exp(-t)]), agrees=True, method="exact",
        ),
    }


#: The heading each renderer must show for each model-form kind.
MODEL_HEADINGS = {
    "reduction": "Reduction to first order",
    "modal": "Modes of the second-order model",
    "laplace_check": "Independent check through the Laplace transform",
}
