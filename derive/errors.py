"""One error tree for the whole program.

Library code raises these; only the command line turns them into exit codes
(see ``derive.cli``).  A message is written for the person who has to fix the
input: it names the offending thing and, where there is a mismatch, both sides
of it.  The location (file, TOML key, line, column) travels with the error so
the CLI can print ``case.toml: system.matrix[1][2]: ...``.
"""

from __future__ import annotations

from typing import Any

__all__ = [
    "EXIT_OK",
    "EXIT_VERIFICATION",
    "EXIT_INPUT",
    "EXIT_TIME",
    "EXIT_OUTPUT",
    "DeriveError",
    "InputError",
    "ExpressionError",
    "CaseFileError",
    "LimitError",
    "UnsupportedError",
    "VerificationError",
    "TimeLimitError",
    "OutputError",
]

#: Solved and verified.
EXIT_OK = 0
#: A result was produced but did not pass verification.
EXIT_VERIFICATION = 1
#: The input is malformed, hostile or outside what the solver accepts.
EXIT_INPUT = 2
#: The time limit for one case ran out.
EXIT_TIME = 3
#: The result is right but an output could not be written (TeX failed, disk).
EXIT_OUTPUT = 4


class DeriveError(Exception):
    """Base of every error ``derive`` raises on purpose.

    ``message`` says what is wrong and what was expected; ``file``, ``key``,
    ``line`` and ``column`` say where; ``hint`` says what to change.
    """

    exit_code: int = EXIT_INPUT

    def __init__(
        self,
        message: str,
        *,
        file: str | None = None,
        key: str | None = None,
        line: int | None = None,
        column: int | None = None,
        hint: str | None = None,
    ) -> None:
        super().__init__(message)
        self.message = message
        self.file = file
        self.key = key
        self.line = line
        self.column = column
        self.hint = hint

    @property
    def location(self) -> str:
        """``file:line:column: key`` with the parts that are known."""
        parts: list[str] = []
        if self.file:
            where = str(self.file)
            if self.line is not None:
                where += f":{self.line}"
                if self.column is not None:
                    where += f":{self.column}"
            parts.append(where)
        if self.key:
            parts.append(self.key)
        return ": ".join(parts)

    def with_location(self, *, file: str | None = None, key: str | None = None) -> "DeriveError":
        """Fill in a location the raiser did not know (the caller's file or key)."""
        if file and not self.file:
            self.file = file
        if key and not self.key:
            self.key = key
        return self

    def __str__(self) -> str:
        text = self.message
        loc = self.location
        if loc:
            text = f"{loc}: {text}"
        if self.hint:
            text = f"{text}\n  hint: {self.hint}"
        return text


class InputError(DeriveError):
    """The input cannot be used as given."""

    exit_code = EXIT_INPUT


class ExpressionError(InputError):
    """An expression string is not in the accepted grammar."""


class CaseFileError(InputError):
    """A case file is not valid TOML or does not have the expected keys."""


class LimitError(InputError):
    """An input exceeds a size limit (length, nesting, exponent, dimension)."""


class UnsupportedError(InputError):
    """The system is valid but outside what this version can solve exactly."""


class VerificationError(DeriveError):
    """A derived result failed its own verification.

    ``solution`` is the unverified result (a ``derive.model.Solution``), for
    a sheet that shows where the check failed; None when no result was built.
    """

    exit_code = EXIT_VERIFICATION

    def __init__(self, message: str, *, solution: Any = None, **where: Any) -> None:
        super().__init__(message, **where)
        self.solution = solution


class TimeLimitError(DeriveError):
    """The time limit for one case ran out."""

    exit_code = EXIT_TIME


class OutputError(DeriveError):
    """An output file could not be produced (TeX failure, file system)."""

    exit_code = EXIT_OUTPUT
