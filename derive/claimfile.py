"""TOML claim files: a hand derivation to be checked against a case.

A claim file holds any subset of the claimed steps, as expression strings
(or numbers) in the claimant's own notation, all at the top level::

    eigenvalues  = ["3", "-1"]
    eigenvectors = [["3", ["1", "1"]], ["-1", ["1", "-1"]]]   # (eigenvalue, vector) pairs
    # or bare vectors aligned with eigenvalues: [["1", "1"], ["1", "-1"]]
    # or a table: eigenvectors = { "3" = ["1", "1"], "-1" = ["1", "-1"] }
    P     = [["1", "1"], ["1", "-1"]]
    D     = [["3", "0"], ["0", "-1"]]
    P_inv = [["1/2", "1/2"], ["1/2", "-1/2"]]
    x     = ["c1 exp(3t) + c2 exp(-t)", "c1 exp(3t) - c2 exp(-t)"]
    constants = ["c1", "c2"]    # optional

The names of the case (t, the parameters) may be used everywhere; ``i`` and
``j`` stand for the imaginary unit unless the case declares them.  With
``constants`` given, those names are declared for ``x``; without it, any
name in ``x`` that the case does not declare is taken as a constant.  States
of the case may not appear: a solution is written in t and constants only.
Strings are read by :func:`derive.parsing.parse_expression` only.
"""

from __future__ import annotations

import hashlib
import os
import tomllib
from collections.abc import Mapping
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import sympy as sp

from .check import IMAGINARY_NAMES, claim_symbols, parse_claim_value
from .errors import CaseFileError, LimitError
from .model import Case
from .parsing import DEFAULT_LIMITS, name_problem, nearest
from .valuetext import show, type_name

__all__ = ["CLAIM_KEYS", "Claim", "read_claim", "load_claim", "loads_claim"]

#: The keys a claim file may hold, in derivation order.
CLAIM_KEYS: tuple[str, ...] = ("eigenvalues", "eigenvectors", "P", "D", "P_inv", "x", "constants")


@dataclass(frozen=True)
class Claim:
    """A read claim: keyword arguments for :func:`derive.check.check`, and its record.

    ``kwargs`` includes the case's A, f, t, x0 and t0, so ``check(**claim.kwargs)``
    checks the claim against its case.
    """

    kwargs: Mapping[str, Any]
    source: str | None
    source_hash: str
    notices: tuple[str, ...] = ()


@dataclass(frozen=True)
class _Reader:
    file: str | None
    n: int
    symbols: Mapping[str, sp.Symbol]
    forbidden: Mapping[str, str]
    notices: list[str]

    def error(self, key: str, message: str, *, hint: str | None = None) -> CaseFileError:
        return CaseFileError(message, file=self.file, key=key, hint=hint)

    def scalar(self, value: object, key: str, *, new_names: dict[str, sp.Symbol] | None = None) -> sp.Expr:
        if isinstance(value, bool) or not isinstance(value, (str, int, float)):
            raise self.error(key, f"{key} is {type_name(value)} ({show(value)}); expected a number or an expression string")
        return parse_claim_value(
            value,
            symbols=self.symbols,
            key=key,
            file=self.file,
            new_names=new_names,
            forbidden=self.forbidden,
            notices=self.notices,
        )

    def vector(self, value: object, key: str, *, new_names: dict[str, sp.Symbol] | None = None) -> sp.ImmutableMatrix:
        if not isinstance(value, list):
            raise self.error(key, f"{key} is {type_name(value)} ({show(value)}); expected a list of {self.n} entries")
        if len(value) != self.n:
            raise self.error(key, f"the case has {self.n} states but {key} has {len(value)} entries")
        return sp.ImmutableMatrix([[self.scalar(v, f"{key}[{i}]", new_names=new_names)] for i, v in enumerate(value)])

    def matrix(self, value: object, key: str) -> sp.ImmutableMatrix:
        n = self.n
        if not isinstance(value, list):
            raise self.error(key, f"{key} is {type_name(value)} ({show(value)}); expected a list of {n} rows")
        if len(value) != n:
            raise self.error(key, f"the case has {n} states, so {key} must be {n}x{n}, but it has {len(value)} rows")
        rows = []
        for i, row in enumerate(value):
            rk = f"{key}[{i}]"
            if not isinstance(row, list):
                raise self.error(rk, f"{rk} is {type_name(row)} ({show(row)}); expected a row of {n} entries")
            if len(row) != n:
                raise self.error(rk, f"{key} must be {n}x{n}, but {rk} has {len(row)} entries")
            rows.append([self.scalar(v, f"{rk}[{j}]") for j, v in enumerate(row)])
        return sp.ImmutableMatrix(rows)

    def values(self, value: object, key: str) -> tuple[sp.Expr, ...]:
        if not isinstance(value, list):
            raise self.error(key, f"{key} is {type_name(value)} ({show(value)}); expected a list of values")
        if not value:
            raise self.error(key, f"{key} is empty; expected the {self.n} eigenvalues, counted with multiplicity")
        return tuple(self.scalar(v, f"{key}[{i}]") for i, v in enumerate(value))

    def eigenvectors(self, value: object, key: str) -> Any:
        if isinstance(value, dict):
            # Kept as pairs, not a mapping: two keys may spell one value ("3", "6/2").
            out: list[tuple[sp.Expr, sp.ImmutableMatrix]] = []
            for raw, vec in value.items():
                k = f'{key}."{raw}"'
                mu = self.scalar(raw, k)
                if isinstance(vec, list) and vec and all(isinstance(v, list) for v in vec):
                    out.extend((mu, self.vector(v, f"{k}[{j}]")) for j, v in enumerate(vec))
                else:
                    out.append((mu, self.vector(vec, k)))
            return out
        if not isinstance(value, list) or not value:
            raise self.error(
                key,
                f"{key} is {type_name(value)} ({show(value)}); expected a list of [eigenvalue, vector] pairs, "
                "a list of vectors aligned with eigenvalues, or a table eigenvalue = vector",
            )
        pairs = [isinstance(v, list) and len(v) == 2 and not isinstance(v[0], list) and isinstance(v[1], list) for v in value]
        if all(pairs):
            return [
                (self.scalar(v[0], f"{key}[{i}][0]"), self.vector(v[1], f"{key}[{i}][1]")) for i, v in enumerate(value)
            ]
        if any(pairs):
            i = pairs.index(False)
            raise self.error(f"{key}[{i}]", f"{key}[{i}] is not an [eigenvalue, vector] pair like the other entries")
        return [self.vector(v, f"{key}[{i}]") for i, v in enumerate(value)]


def _decode(text: str, file: str | None) -> Mapping[str, Any]:
    try:
        return tomllib.loads(text)
    except tomllib.TOMLDecodeError as err:
        raise CaseFileError(
            f"the claim file is not valid TOML: {err}",
            file=file,
            hint='expressions need quotes, e.g. x = ["c1 exp(-t)", "c2 exp(-2t)"]',
        ) from None
    except RecursionError:
        raise LimitError("the TOML is nested too deeply to read", file=file) from None


def _build(data: Mapping[str, Any], *, case: Case, file: str | None, digest: str) -> Claim:
    system = case.system
    for k in data:
        if k not in CLAIM_KEYS:
            guess = nearest(k, CLAIM_KEYS)
            raise CaseFileError(
                f"unknown key {k!r} in the claim file; expected one of: {', '.join(CLAIM_KEYS)}",
                file=file,
                key=k,
                hint=f"did you mean {guess!r}?" if guess else None,
            )
    declared = claim_symbols(system.A, system.f, system.t, system.x0, system.t0)
    for p in system.params:
        declared.setdefault(p.name, p.symbol)
    forbidden = {
        s.name: f"{s.name!r} is a state of the case; claims are written in {system.t.name}, the parameters and constants only"
        for s in system.states
        if s.name not in declared
    }
    constants: tuple[sp.Symbol, ...] | None = None
    if "constants" in data:
        raw = data["constants"]
        if not isinstance(raw, list) or not all(isinstance(c, str) for c in raw):
            raise CaseFileError(
                f"constants is {type_name(raw)} ({show(raw)}); expected a list of names such as [\"c1\", \"c2\"]",
                file=file,
                key="constants",
            )
        made: list[sp.Symbol] = []
        for i, name in enumerate(raw):
            key = f"constants[{i}]"
            problem = name_problem(name)
            if problem is not None:
                raise CaseFileError(f"the constant name {problem}", file=file, key=key)
            if name in declared or name in forbidden:
                raise CaseFileError(
                    f"the constant {name!r} has the name of a symbol of the case; expected a new name", file=file, key=key
                )
            if name in IMAGINARY_NAMES:
                raise CaseFileError(
                    f"the constant {name!r} would hide the imaginary unit {name}; expected another name", file=file, key=key
                )
            if any(c.name == name for c in made):
                raise CaseFileError(f"the constant {name!r} is listed twice", file=file, key=key)
            made.append(sp.Symbol(name))
        constants = tuple(made)
        if "x" not in data:
            raise CaseFileError("constants are listed but there is no x to use them", file=file, key="constants")

    notices: list[str] = []
    reader = _Reader(file=file, n=system.n, symbols=declared, forbidden=forbidden, notices=notices)
    kwargs: dict[str, Any] = {"A": system.A, "f": system.f, "t": system.t, "x0": system.x0, "t0": system.t0}
    if "eigenvalues" in data:
        kwargs["eigenvalues"] = reader.values(data["eigenvalues"], "eigenvalues")
    if "eigenvectors" in data:
        kwargs["eigenvectors"] = reader.eigenvectors(data["eigenvectors"], "eigenvectors")
        if isinstance(kwargs["eigenvectors"], list) and kwargs["eigenvectors"] and not isinstance(
            kwargs["eigenvectors"][0], tuple
        ):
            if "eigenvalues" not in kwargs:
                raise CaseFileError(
                    "eigenvectors are bare vectors, which needs eigenvalues aligned with them; "
                    "add eigenvalues or write [eigenvalue, vector] pairs",
                    file=file,
                    key="eigenvectors",
                )
            if len(kwargs["eigenvectors"]) != len(kwargs["eigenvalues"]):
                raise CaseFileError(
                    f"eigenvectors has {len(kwargs['eigenvectors'])} vectors but eigenvalues has "
                    f"{len(kwargs['eigenvalues'])} values; bare vectors are paired with eigenvalues in order",
                    file=file,
                    key="eigenvectors",
                )
    for key in ("P", "D", "P_inv"):
        if key in data:
            kwargs[key] = reader.matrix(data[key], key)
    if "P_inv" in kwargs and "P" not in kwargs:
        raise CaseFileError("P_inv is claimed without P; P P_inv = I can only be checked with P", file=file, key="P_inv")
    if "x" in data:
        if constants is not None:
            xr = _Reader(
                file=file, n=system.n, symbols={**declared, **{c.name: c for c in constants}},
                forbidden=forbidden, notices=notices,
            )
            kwargs["x"] = xr.vector(data["x"], "x")
            kwargs["constants"] = constants
        else:
            found: dict[str, sp.Symbol] = {}
            kwargs["x"] = reader.vector(data["x"], "x", new_names=found)
            used = kwargs["x"].free_symbols
            kwargs["constants"] = tuple(s for s in found.values() if s in used)
            if kwargs["constants"]:
                notices.append(
                    "x: names the case does not declare are taken as the claimant's constants: "
                    + ", ".join(c.name for c in kwargs["constants"])
                )
    if len(kwargs) == 5:
        raise CaseFileError(
            f"the claim file holds no claim; expected at least one of: {', '.join(CLAIM_KEYS[:-1])}", file=file
        )
    return Claim(kwargs=kwargs, source=file, source_hash=digest, notices=tuple(notices))


def loads_claim(text: str, *, case: Case, source: str | None = None) -> Claim:
    """Read a claim from TOML text, against ``case``.

    >>> from derive.casefile import loads_case
    >>> case = loads_case('[system]\\nmatrix = [[3, 0], [0, -1]]')
    >>> loads_claim('eigenvalues = ["-1", "3"]', case=case).kwargs["eigenvalues"]
    (-1, 3)
    """
    if not isinstance(text, str):
        raise CaseFileError(f"found {type(text).__name__}; expected the TOML text as a string", file=source)
    if len(text.encode("utf-8", "surrogatepass")) > DEFAULT_LIMITS.max_file_bytes:
        raise LimitError(f"the claim text is larger than the limit of {DEFAULT_LIMITS.max_file_bytes} bytes", file=source)
    digest = hashlib.sha256(text.encode("utf-8", "surrogatepass")).hexdigest()
    return _build(_decode(text, source), case=case, file=source, digest=digest)


def read_claim(path: str | os.PathLike[str], *, case: Case) -> Claim:
    """Read a claim file against ``case``, with its hash and notices for the record.

    >>> claim = read_claim("tanks_ok.claim.toml", case=load_case("tanks.toml"))  # doctest: +SKIP
    >>> check(**claim.kwargs).ok, len(claim.source_hash)                          # doctest: +SKIP
    (True, 64)
    """
    p = Path(path)
    where = str(path)
    try:
        size = p.stat().st_size
        if size > DEFAULT_LIMITS.max_file_bytes:
            raise LimitError(f"the file has {size} bytes, more than the limit of {DEFAULT_LIMITS.max_file_bytes}", file=where)
        raw = p.read_bytes()
    except OSError as err:
        raise CaseFileError(f"cannot read the claim file: {err.strerror or err}", file=where) from None
    try:
        text = raw.decode("utf-8")
    except UnicodeDecodeError as err:
        raise CaseFileError(
            f"the file is not UTF-8 text (byte {err.start} cannot be decoded)",
            file=where,
            line=raw[: err.start].count(b"\n") + 1,
        ) from None
    return _build(_decode(text, where), case=case, file=where, digest=hashlib.sha256(raw).hexdigest())


def load_claim(path: str | os.PathLike[str], *, case: Case) -> dict[str, Any]:
    """Keyword arguments for ``check()`` from a claim file (the case's A, f, t, x0, t0 included).

    >>> kwargs = load_claim("claim.toml", case=case)  # doctest: +SKIP
    >>> check(**kwargs).ok                             # doctest: +SKIP
    True
    """
    return dict(read_claim(path, case=case).kwargs)
