"""The case file's ``[solve]`` and ``[outputs]`` tables, read into ``Case.options``.

``[solve] values = "substitute"`` puts the declared parameter values into
the algebra before the decomposition (a numeric derivation); ``"symbolic"``,
the default, keeps the parameters as symbols and uses their values in the
checks.  ``[outputs]`` declares outputs y = C x + D u (:mod:`derive.outputs`).
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import replace
from typing import Any

from .errors import CaseFileError
from .model import Case
from .names import nearest
from .options import SolveOptions
from .outputs import read_outputs
from .parsing import DEFAULT_LIMITS, Limits
from .readingfile import read_reading
from .valuetext import show, type_name

__all__ = ["SolveOptions", "SOLVE_KEYS", "VALUES_CHOICES", "read_sections"]

SOLVE_KEYS: tuple[str, ...] = ("values",)
VALUES_CHOICES: tuple[str, ...] = ("symbolic", "substitute")


def _solve_table(raw: object, file: str | None) -> bool:
    if not isinstance(raw, dict):
        raise CaseFileError(f"solve is {type_name(raw)} ({show(raw)}); expected a table such as [solve] values = \"substitute\"",
                            file=file, key="solve")
    for k in raw:
        if k not in SOLVE_KEYS:
            guess = nearest(k, SOLVE_KEYS)
            raise CaseFileError(f"unknown key {k!r} in [solve]; expected one of: {', '.join(SOLVE_KEYS)}",
                                file=file, key=f"solve.{k}", hint=f"did you mean {guess!r}?" if guess else None)
    value = raw.get("values", "symbolic")
    if value not in VALUES_CHOICES:
        raise CaseFileError(
            f"solve.values is {show(value)}; expected \"symbolic\" (parameters stay symbols; values only in the checks) "
            "or \"substitute\" (the values are put into the algebra)",
            file=file, key="solve.values",
        )
    return value == "substitute"


def read_sections(
    case: Case, data: Mapping[str, Any], *, inputs: Sequence[Any] = (), file: str | None = None,
    limits: Limits = DEFAULT_LIMITS,
) -> Case:
    """``case`` with its ``[solve]`` and ``[outputs]`` read into ``case.options`` (unchanged when neither is given).

    ``inputs`` are the declared inputs (:class:`derive.inputs.Input`).

    >>> from derive.casefile import loads_case
    >>> case = loads_case('[system]\\nmatrix = [[-1]]\\n[solve]\\nvalues = "substitute"')
    >>> case.options.substitute
    True
    """
    pairs = tuple((i.symbol, i.formula) for i in inputs)
    if "solve" not in data and "outputs" not in data and not pairs:
        return read_reading(case, data, file=file)
    substitute = _solve_table(data["solve"], file) if "solve" in data else False
    spec = None
    if "outputs" in data:
        s = case.system
        spec = read_outputs(
            data["outputs"], states=s.states, params={p.name: p.symbol for p in s.params}, inputs=pairs, t=s.t,
            file=file, limits=limits,
        )
    return read_reading(replace(case, options=SolveOptions(substitute=substitute, outputs=spec, inputs=pairs)), data, file=file)
