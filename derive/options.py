"""Records of how a case asks to be solved, and of its outputs: ``SolveOptions``, ``OutputSpec``, ``Outputs``.

Plain frozen records (sympy only), so that ``derive.model`` can name them
without importing the modules that read and compute them
(:mod:`derive.casesections`, :mod:`derive.outputs`).
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, replace
from typing import TypeAlias

import sympy as sp

__all__ = ["SolveOptions", "OutputSpec", "Outputs"]

Matrix: TypeAlias = sp.ImmutableMatrix


@dataclass(frozen=True)
class OutputSpec:
    """What was asked for: output names, C (p x n), D (p x m) and the outputs as written.

    ``inputs`` pairs each declared input with its formula in t; empty means u
    is the forcing vector f, and D then has n columns.
    """

    names: tuple[str, ...]
    C: Matrix
    D: Matrix
    written: tuple[str, ...]
    inputs: tuple[tuple[sp.Symbol, sp.Expr], ...] = ()
    #: the outputs as written, parsed (None for a row of the matrix form); relations and values go in
    exprs: tuple[sp.Expr | None, ...] = ()
    #: the same as written, kept with the parameters as symbols, for the sheet
    asked: tuple[sp.Expr | None, ...] = ()

    def xreplace(self, rep: Mapping[sp.Basic, sp.Expr]) -> OutputSpec:
        """The spec with ``rep`` put into C, D and the input formulas (relations, values, sweeps)."""
        if not rep:
            return self
        return replace(
            self,
            C=Matrix(self.C.xreplace(dict(rep))),
            D=Matrix(self.D.xreplace(dict(rep))),
            inputs=tuple((s, f.xreplace(dict(rep))) for s, f in self.inputs),
            exprs=tuple(None if e is None else e.xreplace(dict(rep)) for e in self.exprs),
        )


@dataclass(frozen=True)
class Outputs:
    """The outputs of a solution: y(t) = C x(t) + D u(t), exact.

    ``u_names`` are the input names (empty when u is f); ``method`` says how
    y - (C x + D u) = 0 and the agreement with the outputs as written were
    settled; ``verified`` is the verdict.

    >>> import derive
    >>> sol = derive.solve([[-1, 0], [0, -2]], x0=[1, 1], outputs={"s": "x_1 + x_2"})
    >>> sol.outputs["s"]
    exp(-t) + exp(-2*t)
    """

    names: tuple[str, ...]
    symbols: tuple[sp.Symbol, ...]
    C: Matrix
    D: Matrix
    u_names: tuple[sp.Symbol, ...]
    u: Matrix
    y: Matrix
    written: tuple[str, ...]
    verified: bool
    method: str

    def __getitem__(self, name: str) -> sp.Expr:
        return self.y[self.names.index(name)]


@dataclass(frozen=True)
class SolveOptions:
    """How a case asks to be solved: values into the algebra or not, its outputs, its declared inputs.

    ``inputs`` pairs each declared input symbol with its formula in t, so that
    outputs given later (``solve_case(case, outputs=...)``) may use them.
    """

    substitute: bool = False
    outputs: OutputSpec | None = None
    inputs: tuple[tuple[sp.Symbol, sp.Expr], ...] = ()
    #: ``[reading] sensitivities = true``: the sheet shows dx/dp for each parameter (derive.readingfile)
    sensitivities: bool = False

    def xreplace(self, rep: Mapping[sp.Basic, sp.Expr]) -> SolveOptions:
        """The options with ``rep`` put into the outputs and the input formulas (a sweep's values)."""
        return replace(
            self,
            outputs=None if self.outputs is None else self.outputs.xreplace(rep),
            inputs=tuple((s, f.xreplace(dict(rep))) for s, f in self.inputs),
        )
