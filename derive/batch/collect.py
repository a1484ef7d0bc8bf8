"""Case collection: paths, folders, sweeps, Case objects and (name, arguments) pairs.

Everything a batch is given becomes an :class:`Entry`, in order: either a
case to run or the record of one that could not be loaded.  A case file
with a ``[sweep]`` table gives one entry per combination
(:func:`derive.casefile.load_cases` expands it with :mod:`derive.sweep`).
A load failure is recorded for that file and never stops the others; a path
that does not exist at all is the caller's mistake and raises.
"""

from __future__ import annotations

import os
import re
from collections.abc import Iterable, Mapping
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from ..errors import DeriveError, InputError
from ..model import Case
from .records import CaseResult, Status

__all__ = ["Entry", "collect_cases", "SOLVE_KEYS"]

#: The :func:`derive.solve` arguments a (name, arguments) pair may carry.
SOLVE_KEYS = ("A", "f", "t", "x0", "t0", "params")
_BAD_NAME = re.compile(r"[^A-Za-z0-9_.-]")
_SCRIPT = "(script)"


@dataclass(frozen=True)
class Entry:
    """One case to run, or the record of one that could not be loaded."""

    name: str
    source: str
    case: Case | None = None
    failure: CaseResult | None = None


def _failure(name: str, source: str, err: BaseException) -> Entry:
    safe = _BAD_NAME.sub("_", name).lstrip(".") or "case"
    message = str(err) if isinstance(err, DeriveError) else f"{type(err).__name__}: {err}"
    return Entry(safe, source, failure=CaseResult(name=safe, status=Status.BAD_INPUT, source=source, message=message))


def _from_file(path: Path) -> list[Entry]:
    from ..casefile import load_cases

    try:
        return [Entry(c.name, str(path), case=c) for c in load_cases(path)]
    except RecursionError:
        return [_failure(path.stem, str(path), InputError("the input is nested too deeply to process", file=str(path)))]
    except DeriveError as err:
        return [_failure(path.stem, str(path), err)]


def _from_kwargs(name: object, kwargs: object) -> Entry:
    from ..pipeline import build_system

    if not isinstance(name, str):
        return _failure(str(name), _SCRIPT, InputError(
            f"a case given as (name, arguments) needs a string name, found {type(name).__name__}", key="name"
        ))
    if not isinstance(kwargs, Mapping):
        return _failure(name, _SCRIPT, InputError(
            f"case {name!r}: expected a mapping of solve() arguments, found {type(kwargs).__name__}", key=name
        ))
    unknown = [k for k in kwargs if k not in SOLVE_KEYS]
    if unknown:
        return _failure(name, _SCRIPT, InputError(
            f"case {name!r}: unknown argument(s) {', '.join(map(repr, unknown))}; expected any of {', '.join(SOLVE_KEYS)}",
            key=f"{name}.{unknown[0]}",
        ))
    if "A" not in kwargs:
        return _failure(name, _SCRIPT, InputError(f"case {name!r}: no matrix A; expected an 'A' entry", key=f"{name}.A"))
    try:
        system, notices = build_system(**dict(kwargs))
    except DeriveError as err:
        return _failure(name, _SCRIPT, err.with_location(key=name))
    return Entry(name, _SCRIPT, case=Case(name=name, system=system, source=_SCRIPT, notices=notices))


def _expand(item: Any) -> list[Entry]:
    if isinstance(item, Case):
        return [Entry(item.name, item.source or _SCRIPT, case=item)]
    if isinstance(item, tuple) and len(item) == 2 and not isinstance(item[0], os.PathLike):
        return [_from_kwargs(*item)]
    if isinstance(item, (str, os.PathLike)):
        path = Path(item)
        if path.is_dir():
            return [e for f in sorted(p for p in path.rglob("*.toml") if p.is_file()) for e in _from_file(f)]
        if path.exists():
            return _from_file(path)
        raise InputError(f"{path}: no such file or folder; expected a case file (*.toml) or a folder of them", file=str(path))
    raise InputError(
        f"cannot use {type(item).__name__} as a case; expected a path, a Case or a (name, solve-arguments) pair",
        key="cases",
    )


def collect_cases(items: Iterable[Any]) -> tuple[Entry, ...]:
    """Expand paths (files, folders searched recursively for ``*.toml``), Case objects
    and ``(name, solve-arguments)`` pairs into entries, in order; failures become records.

    >>> [e.name for e in collect_cases([("decay", {"A": [[-1]]})])]
    ['decay']
    """
    from ..output import check_stem

    seen: dict[str, str] = {}
    out: list[Entry] = []
    for e in (entry for item in items for entry in _expand(item)):
        if e.case is not None:
            try:
                check_stem(e.name)
            except InputError as err:
                e = _failure(e.name, e.source, InputError(f"case name {e.name!r}: {err.message}", file=e.source))
            else:
                if e.name in seen:
                    e = _failure(e.name, e.source, InputError(
                        f"duplicate case name {e.name!r}: also from {seen[e.name]}; expected unique names "
                        "(their outputs would overwrite each other)",
                        file=e.source,
                    ))
                else:
                    seen[e.name] = e.source
        out.append(e)
    return tuple(out)
