"""The case file's ``[reading]`` table and each parameter's ``tolerance``: what the reading adds on request.

``[reading] sensitivities = true`` asks the sheet for the exact sensitivity
dx/dp of the closed form for every parameter.  ``tolerance`` on a parameter
(``[parameters.k] value = 2, tolerance = "5%"``) gives the spread of its
value; the sheet then draws the response's band over the tolerance box.
Two forms are accepted: a percentage of the value as text (``"5%"``,
``"0.5 %"``, above 0 and below 100), or a positive number in the
parameter's own unit (``tolerance = 0.1``).  Read here, after the rest of
the case, so the case-file reader only hands the tables over.
"""

from __future__ import annotations

import math
import re
from collections.abc import Mapping
from dataclasses import replace
from typing import Any

import sympy as sp

from .errors import CaseFileError
from .model import Case, Parameter, Tolerance
from .options import SolveOptions
from .tablecheck import checked_table
from .valuetext import show, type_name

__all__ = ["READING_KEYS", "read_reading", "parse_tolerance"]

READING_KEYS: tuple[str, ...] = ("sensitivities",)

_PERCENT = re.compile(r"\s*(\d+(?:\.\d*)?|\.\d+)\s*%\s*")
_EXPECTED = 'a percentage of the value such as "5%", or a positive number in the parameter\'s unit such as 0.1'


def parse_tolerance(raw: object, *, value: sp.Expr | None, positive: bool = False,
                    file: str | None = None, key: str = "tolerance") -> Tolerance:
    """A tolerance as written (``"5%"`` or a positive number) checked against the parameter's ``value``.

    ``positive`` says the parameter is assumed positive: its lower corner must
    then stay above zero.

    >>> parse_tolerance("5%", value=sp.Integer(2))
    Tolerance(amount=1/20, relative=True)
    >>> parse_tolerance(0.1, value=sp.Integer(2))
    Tolerance(amount=1/10, relative=False)
    """
    def refuse(why: str) -> CaseFileError:
        return CaseFileError(f"{key} is {type_name(raw)} ({show(raw)}){why}; expected {_EXPECTED}", file=file, key=key)

    if value is None:
        raise CaseFileError(f"{key} needs the parameter's value: a tolerance is a spread about it; give value = ... beside it",
                            file=file, key=key)
    if isinstance(raw, str):
        found = _PERCENT.fullmatch(raw)
        if found is None:
            raise refuse("")
        # the digits become an exact fraction; nothing of the text is evaluated
        share = sp.Rational(found.group(1)) / 100
        if not 0 < share < 1:
            raise refuse(": a percentage must lie above 0 and below 100")
        return Tolerance(share, relative=True)
    if isinstance(raw, bool) or not isinstance(raw, (int, float)) or not math.isfinite(raw) or raw <= 0:
        raise refuse("")
    amount = sp.Rational(raw) if isinstance(raw, int) else sp.nsimplify(raw, rational=True)
    if positive and (value - amount).is_positive is not True:
        raise refuse(f": the lower corner {value} - {amount} would break the parameter's assumption 'positive'")
    return Tolerance(amount, relative=False)


def _reading_table(raw: object, file: str | None) -> bool:
    raw = checked_table(raw, READING_KEYS, name="reading", example="[reading] sensitivities = true", file=file)
    value = raw.get("sensitivities", False)
    if not isinstance(value, bool):
        raise CaseFileError(f"reading.sensitivities is {type_name(value)} ({show(value)}); expected true or false",
                            file=file, key="reading.sensitivities")
    return value


def _with_tolerance(p: Parameter, spec: object, file: str | None) -> Parameter:
    if not isinstance(spec, Mapping) or "tolerance" not in spec:
        return p
    tol = parse_tolerance(spec["tolerance"], value=p.value, positive=bool(p.symbol.is_positive),
                          file=file, key=f"parameters.{p.name}.tolerance")
    return replace(p, tolerance=tol)


def read_reading(case: Case, data: Mapping[str, Any], *, file: str | None = None) -> Case:
    """``case`` with ``[reading]`` in its options and each parameter's ``tolerance`` on its ``Parameter``.

    >>> from derive.casefile import loads_case
    >>> case = loads_case('[system]\\nmatrix = [["-1/tau"]]\\n[parameters.tau]\\nvalue = 2\\ntolerance = "5%"\\n'
    ...                   '[reading]\\nsensitivities = true')
    >>> str(case.system.params[0].tolerance), case.options.sensitivities
    ('± 5 %', True)
    """
    table = data.get("parameters")
    if isinstance(table, Mapping) and any(isinstance(s, Mapping) and "tolerance" in s for s in table.values()):
        params = tuple(_with_tolerance(p, table.get(p.name), file) for p in case.system.params)
        case = replace(case, system=replace(case.system, params=params))
    if "reading" in data and _reading_table(data["reading"], file):
        case = replace(case, options=replace(case.options or SolveOptions(), sensitivities=True))
    return case
