"""TOML text of a case file, read with the position of any syntax error."""

from __future__ import annotations

import re
import tomllib
from collections.abc import Mapping
from typing import Any

from .errors import CaseFileError, LimitError

__all__ = ["decode_toml"]

_TOML_POSITION = re.compile(r"\s*\(at line (\d+), column (\d+)\)\s*$")


def decode_toml(text: str, *, file: str | None = None) -> Mapping[str, Any]:
    """TOML text -> its tables; a syntax error becomes a CaseFileError with line and column.

    >>> decode_toml("[system]\\nmatrix = [[-1]]")
    {'system': {'matrix': [[-1]]}}
    """
    try:
        return tomllib.loads(text)
    except tomllib.TOMLDecodeError as err:
        message = str(err)
        line = column = None
        m = _TOML_POSITION.search(message)
        if m is not None:
            line, column = int(m.group(1)), int(m.group(2))
            message = message[: m.start()]
        elif message.endswith("(at end of document)"):
            line = text.count("\n") + 1
            message = message[: -len("(at end of document)")].rstrip() + " at the end of the file"
        raise CaseFileError(
            f"the file is not valid TOML: {message}",
            file=file,
            line=line,
            column=column,
            # The usual cause of "Invalid value" is an expression left unquoted.
            hint='expressions need quotes, e.g. matrix = [["-k", 1], [0, -2]]'
            if message.startswith("Invalid value")
            else None,
        ) from None
    except RecursionError:
        raise LimitError(
            "the TOML is nested too deeply to read (arrays or tables inside each other)", file=file
        ) from None
