"""The shape check every small case-file table shares: a table, and only its known keys.

``[plot]`` and ``[reading]`` read their values themselves; the words for a
table that is not one, or a key that is unknown (with the nearest known
key), are written here once.
"""

from __future__ import annotations

from typing import Any

from .errors import CaseFileError
from .names import nearest
from .valuetext import show, type_name

__all__ = ["checked_table"]


def checked_table(raw: Any, keys: tuple[str, ...], *, name: str, example: str, file: str | None = None) -> dict[str, Any]:
    """``raw`` when it is a table of ``keys`` only; a ``CaseFileError`` naming the table or the key otherwise.

    >>> checked_table({"span": 3}, ("span",), name="plot", example="[plot] span = 30")
    {'span': 3}
    """
    if not isinstance(raw, dict):
        raise CaseFileError(f"{name} is {type_name(raw)} ({show(raw)}); expected a table such as {example}", file=file, key=name)
    for k in raw:
        if k not in keys:
            guess = nearest(k, keys)
            raise CaseFileError(
                f"unknown key {k!r} in [{name}]; expected one of: {', '.join(keys)}",
                file=file, key=f"{name}.{k}", hint=f"did you mean {guess!r}?" if guess else None,
            )
    return raw
