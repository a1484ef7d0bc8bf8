"""Tokens of an expression, and the readings that are refused before parsing.

An expression can be well-formed and still not mean what the user wrote:
``u(t)`` with a parameter ``u`` reads as the product ``u*t`` (a ramp instead
of a constant input), ``e^-2t`` as ``e^(-2)*t``, ``x/2T`` as ``(x/2)*T``.
Each reading that a practising engineer could take either way is refused
here with the two readings spelled out, so the user writes the one meant.
The checks look at tokens only; nothing is evaluated.  They return a
:class:`Problem`; :mod:`derive.parsing` turns it into an error with the file
and key.
"""

from __future__ import annotations

import keyword
import re
from collections.abc import Collection, Mapping, Sequence
from dataclasses import dataclass
from types import MappingProxyType

from .functions import CONSTANTS, FUNCTIONS

__all__ = [
    "TOKEN",
    "Token",
    "Problem",
    "tokenize",
    "character_problem",
    "call_problem",
    "product_problem",
    "drop_input_calls",
]

TOKEN = re.compile(
    r"""
    (?P<space>[ \t\r\n]+)
  | (?P<number>(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?)
  | (?P<name>[A-Za-z_][A-Za-z0-9_]*)
  | (?P<string>'[^'\n]*'|"[^"\n]*")
  | (?P<op>\*\*|\^|[-+*/(),])
  | (?P<other>.)
    """,
    re.VERBOSE | re.DOTALL,
)

_FORBIDDEN_CHAR = re.compile(r"[^ -~\t\r\n]")
_IDENTIFIER = re.compile(r"[A-Za-z][A-Za-z0-9_]*\Z")

# Characters a word processor or a keyboard layout puts in place of ASCII.
_LOOKALIKES: Mapping[str, str] = MappingProxyType(
    {
        "\u2212": "write '-' (the ASCII minus)",
        "\u2013": "write '-' (the ASCII minus)",
        "\u2014": "write '-' (the ASCII minus)",
        "\u00d7": "write '*' for a product",
        "\u00b7": "write '*' for a product",
        "\u22c5": "write '*' for a product",
        "\u00f7": "write '/' for a division",
        "\u00b2": "write ^2 for a square",
        "\u00b3": "write ^3 for a cube",
        "\u03c0": "write pi",
        "\u03bb": "use an ASCII name such as lam",
        "\u03c9": "use an ASCII name such as w",
        "\u03c4": "use an ASCII name such as tau",
        "\u03b6": "use an ASCII name such as zeta",
        "\u00b5": "use an ASCII name such as mu",
        "\u03bc": "use an ASCII name such as mu",
        "\u2032": "write ' (the ASCII apostrophe) for a derivative",
        "\u2019": "write ' (the ASCII apostrophe) for a derivative",
        "\u221a": "write sqrt(x)",
        "\u00a0": "replace it by an ordinary space",
    }
)


@dataclass(frozen=True)
class Token:
    """One token: kind (number, name, string, op, other), its text and 0-based column."""

    kind: str
    text: str
    column: int


@dataclass(frozen=True)
class Problem:
    """Why an expression is refused before parsing: message, 1-based column, what to write."""

    message: str
    column: int
    hint: str | None = None


def tokenize(text: str) -> tuple[Token, ...]:
    """The tokens of ``text`` without the spaces.

    >>> [t.text for t in tokenize("2t^2 + k")]
    ['2', 't', '^', '2', '+', 'k']
    """
    out: list[Token] = []
    for m in TOKEN.finditer(text):
        kind = m.lastgroup or "other"
        if kind != "space":
            out.append(Token(kind, m.group(), m.start()))
    return tuple(out)


def character_problem(text: str) -> Problem | None:
    """The first character outside printable ASCII, with what to write instead.

    Non-ASCII is refused outright: Python folds some Unicode letters into
    ASCII names (NFKC), so a name could look different from what the walker
    checks, and ast columns would count bytes, not characters.
    """
    bad = _FORBIDDEN_CHAR.search(text)
    if bad is None:
        return None
    value = bad.group()
    return Problem(
        f"character {value!r} (U+{ord(value):04X}) at column {bad.start() + 1} is not allowed; "
        "expressions use ASCII letters, digits, + - * / ^ ( ) , and spaces",
        bad.start() + 1,
        _LOOKALIKES.get(value),
    )


def _closing(tokens: Sequence[Token], i: int) -> int | None:
    """Index of the ``)`` matching the ``(`` at ``tokens[i]``."""
    depth = 0
    for j in range(i, len(tokens)):
        depth += (tokens[j].text == "(") - (tokens[j].text == ")")
        if depth == 0:
            return j
    return None


def call_problem(
    tokens: Sequence[Token],
    text: str,
    symbols: Collection[str],
    *,
    states: Collection[str] = (),
    time: str | None = None,
) -> Problem | None:
    """A call that is not one: ``u(t)``, ``x1(t)``, ``h(t - 1)``, ``sin t``, ``sin^2(t)``, ``|t|``.

    A declared name written against ``(`` is refused: read as a product,
    ``u(t)`` with a parameter ``u`` silently becomes the ramp ``u*t``.  With
    a space between, ``k (t + 1)`` is a product, as typeset mathematics
    writes one (and as people write it in claimed solutions); function
    notation is written without the space.

    >>> call_problem(tokenize("(u(t) - v)/2"), "(u(t) - v)/2", {"u", "v", "t"}, time="t").hint.split(";")[0]
    'write u for a constant input, or write a time-varying input as a formula in t (e.g. u*step(t - 1) or u*sin(t)), or declare it as an input function in [inputs] instead of [parameters] (u = "step(t)")'
    """
    for i, tok in enumerate(tokens):
        nxt = tokens[i + 1] if i + 1 < len(tokens) else None
        percent = tok.text == "%" and (nxt is None or (nxt.kind == "op" and nxt.text != "("))
        if tok.kind == "other" and (tok.text in "|!" or percent):
            what = {"|": "write abs(x) for |x|", "%": "write 5/100 for 5 percent", "!": "factorials are not available"}
            column = tok.column + 1
            return Problem(f"{tok.text!r} at column {column} is not an operator here", column, what[tok.text])
        if tok.kind != "name" or keyword.iskeyword(tok.text):
            continue
        if tok.text in FUNCTIONS and tok.text not in symbols and nxt is not None and nxt.text != "(":
            return _bare_function(tokens, i, text)
        adjacent = nxt is not None and nxt.column == tok.column + len(tok.text)
        if adjacent and nxt is not None and nxt.text == "(" and tok.text not in FUNCTIONS:
            if tok.text in symbols or tok.text in CONSTANTS:
                return _value_call(tokens, i, text, declared=tok.text in symbols, states=states, time=time)
    return None


def _bare_function(tokens: Sequence[Token], i: int, text: str) -> Problem:
    name, nxt = tokens[i].text, tokens[i + 1]
    column = tokens[i].column + 1
    if nxt.text in ("^", "**"):
        power = tokens[i + 2].text if i + 2 < len(tokens) else "2"
        if power == "(":
            j = _closing(tokens, i + 2)
            power = text[tokens[i + 2].column : tokens[j].column + 1] if j is not None else "(...)"
        if name == "exp":
            return Problem(
                f"exp{nxt.text}{power} at column {column}: exp is a function, not the constant e",
                column,
                f"write exp({power.strip('()')}) or e^{power}",
            )
        return Problem(
            f"{name}{nxt.text}{power}(...) at column {column}: a power of a function is written after its argument",
            column,
            f"write {name}(x)^{power}, e.g. {name}(t)^{power}",
        )
    return Problem(
        f"the function {name} at column {column} needs its argument in parentheses",
        column,
        f"write {name}({nxt.text})" + (" (and a product with *)" if nxt.kind not in ("name", "number") else ""),
    )


def _value_call(
    tokens: Sequence[Token],
    i: int,
    text: str,
    *,
    declared: bool,
    states: Collection[str],
    time: str | None,
) -> Problem:
    name = tokens[i].text
    j = _closing(tokens, i + 1)
    end = tokens[j].column + 1 if j is not None else len(text)
    written = text[tokens[i].column : end]
    inner = text[tokens[i + 1].column + 1 : end - 1 if j is not None else end].strip()
    factor = inner if _IDENTIFIER.match(inner) or TOKEN.fullmatch(inner) else f"({inner})"
    product = f"write {name}*{factor} for a product"
    column = tokens[i].column + 1
    if name in states:
        if inner.replace(" ", "") == time:
            message = f"{written!r} writes the state {name} as a call; a state is written by its name alone"
            hint = f"write the state as {name} (it stands for {name}({time}))"
        else:
            message = (
                f"{written!r} is the state {name} at another time ({inner}): a delay, which makes this a "
                f"delay differential equation, not a linear ODE x' = A x + f({time or 't'}); it cannot be solved here"
            )
            hint = f"write {name} for the state at the current time, or {name}*{factor} if a product is meant"
    elif name == time:
        message = f"{written!r}: {name} is the independent variable, not a function"
        hint = product
    elif not declared:
        message = f"{written!r}: {name} is the constant {name}, not a function, and a product is not assumed"
        hint = product + (f", or exp({inner}) for the exponential" if name == "e" else "")
    elif time is not None and any(t.text == time for t in tokenize(inner)):
        message = (
            f"{written!r} reads as a function of {time}, but {name} is a parameter (a constant); "
            f"a product {name}*{factor} is not assumed"
        )
        hint = (
            f"write {name} for a constant input, or write a time-varying input as a formula in {time} "
            f"(e.g. {name}*step({time} - 1) or {name}*sin({time})), or declare it as an input function "
            f"in [inputs] instead of [parameters] ({name} = \"step({time})\"); {product}"
        )
    else:
        message = f"{written!r}: {name} is a declared name, not a function, and a product is not assumed"
        hint = product
    return Problem(f"{message} (column {column})", column, hint)


def _operand_start(tokens: Sequence[Token], i: int) -> int:
    """Index of the first token of the operand that ends at ``tokens[i]``."""
    if tokens[i].text != ")":
        return i
    depth = 0
    for j in range(i, -1, -1):
        depth += (tokens[j].text == ")") - (tokens[j].text == "(")
        if depth == 0:
            return j - 1 if j > 0 and tokens[j - 1].kind == "name" else j
    return 0


def product_problem(tokens: Sequence[Token], i: int, text: str) -> Problem | None:
    """An implied product between ``tokens[i - 1]`` and ``tokens[i]`` that reads two ways.

    After a division (``x/2T``: x/(2T) or (x/2)T?) and right after an
    exponent (``e^-2t``: e^(-2t) or e^(-2) t?) the written order gives one
    answer and the eye another.  ``t^2 sin(t)``, with a space after an
    unsigned exponent, stays a product.
    """
    left_tok, right_tok = tokens[i - 1], tokens[i]
    glued = left_tok.column + len(left_tok.text) == right_tok.column
    if glued and left_tok.kind == "number" and any(ch in left_tok.text for ch in "eE"):
        mantissa, _, power = left_tok.text.replace("E", "e").partition("e")
        return Problem(
            f"'{left_tok.text}{right_tok.text}' at column {left_tok.column + 1} reads two ways: the number "
            f"{left_tok.text} = {mantissa}*10^{power} times {right_tok.text}, "
            f"or {mantissa}*e^({power}{right_tok.text})?",
            left_tok.column + 1,
            f"write {mantissa}*e^({power}*{right_tok.text}) for the exponential, or "
            f"{left_tok.text}*{right_tok.text} for the power of ten",
        )
    after = tokens[i + 1 : i + 3]
    if (
        glued
        and left_tok.kind == "number"
        and right_tok.text == "e"
        and len(after) == 2
        and after[0].text in "+-"
        and right_tok.column + 1 == after[0].column
        and after[0].column + 1 == after[1].column
    ):
        # 5e-t: the number 5e minus t, or 5 e^(-t) with the power forgotten?
        sign, rest = after[0].text, after[1].text
        return Problem(
            f"'{left_tok.text}e{sign}{rest}' at column {left_tok.column + 1} reads two ways: "
            f"{left_tok.text}*e {sign} {rest}, or {left_tok.text}*e^({sign}{rest})?",
            left_tok.column + 1,
            f"write {left_tok.text}*e^({sign}{rest}) (brackets around the whole exponent) for the exponential, "
            f"or {left_tok.text}*e {sign} {rest} with spaces for the difference",
        )
    start = _operand_start(tokens, i - 1)
    before = tokens[start - 1].text if start > 0 else ""
    left = text[tokens[start].column : tokens[i - 1].column + len(tokens[i - 1].text)]
    right = tokens[i].text if tokens[i].text != "(" else "(...)"
    column = tokens[i].column + 1
    if before == "/":
        head = tokens[start - 2].text if start > 1 and tokens[start - 2].kind in ("name", "number") else "..."
        return Problem(
            f"'/{left} {right}' at column {column} reads two ways: is {right} in the denominator or not?",
            column,
            f"write {head}/({left}*{right}) if both are in the denominator, or ({head}/{left})*{right} if not",
        )
    signed = before in ("-", "+") and start > 1 and tokens[start - 2].text in ("^", "**")
    adjacent = tokens[i - 1].column + len(tokens[i - 1].text) == tokens[i].column
    if signed or (before in ("^", "**") and adjacent and tokens[i - 1].text != ")"):
        sign = before if signed else ""
        return Problem(
            f"'^{sign}{left}{right}' at column {column} reads two ways: is {right} part of the exponent or not?",
            column,
            f"write ^({sign}{left}*{right}) if it is part of the exponent, or put *{right} after the power if not",
        )
    return None


def drop_input_calls(
    tokens: Sequence[Token], text: str, inputs: Collection[str], *, time: str
) -> tuple[tuple[Token, ...], Problem | None]:
    """``u(t)`` for a declared input ``u`` -> the token ``u``; another argument is a :class:`Problem`.

    >>> toks, problem = drop_input_calls(tokenize("2*u(t)"), "2*u(t)", {"u"}, time="t")
    >>> [tok.text for tok in toks], problem
    (['2', '*', 'u'], None)
    """
    out: list[Token] = []
    i = 0
    while i < len(tokens):
        tok = tokens[i]
        nxt = tokens[i + 1] if i + 1 < len(tokens) else None
        if tok.kind == "name" and tok.text in inputs and nxt is not None and nxt.text == "(":
            end = _closing(tokens, i + 1)
            if end is None or [x.text for x in tokens[i + 2 : end]] != [time]:
                column = tok.column + 1
                written = text[tok.column : tokens[end].column + 1] if end is not None else text[tok.column :]
                return tuple(out), Problem(
                    f"{written} at column {column}: the input {tok.text} is read at the current time only",
                    column,
                    f"write {tok.text} or {tok.text}({time}); for a delayed input write its formula in {time} "
                    f"in [inputs] as a new input",
                )
            out.append(tok)
            i = end + 1
            continue
        out.append(tok)
        i += 1
    return tuple(out), None
