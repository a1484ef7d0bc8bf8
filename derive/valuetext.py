"""How a raw value read from a TOML file is named in an error message.

Shared by the readers of case and claim files so that both say "key is an
integer (3); expected a string" in the same words.
"""

from __future__ import annotations

import datetime as _dt

__all__ = ["type_name", "show"]

_NAMES = {
    str: "a string",
    int: "an integer",
    float: "a number",
    bool: "a boolean",
    list: "a list",
    dict: "a table",
    _dt.date: "a date",
    _dt.datetime: "a date-time",
    _dt.time: "a time",
}


def type_name(value: object) -> str:
    """The kind of a TOML value in words.

    >>> type_name(3), type_name([1]), type_name(None)
    ('an integer', 'a list', 'NoneType')
    """
    return _NAMES.get(type(value), type(value).__name__)


def show(value: object) -> str:
    """The value as written, cut to 60 characters.

    >>> show("x" * 70)[-5:]
    'xx...'
    """
    text = repr(value)
    return text if len(text) <= 60 else text[:57] + "..."
