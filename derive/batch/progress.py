"""The progress line of a batch on a terminal."""

from __future__ import annotations

from typing import TextIO

from .records import CaseResult

__all__ = ["Progress"]


class Progress:
    """One ``\\r`` line on a terminal: done, failed, remaining. Silent when not ``enabled``.

    >>> import io
    >>> bar = Progress(2, enabled=True, stream=io.StringIO())
    >>> bar.update(CaseResult("a", "ok")); bar.stream.getvalue().strip()
    'eigensheet batch: 1/2 done, 0 failed, 1 remaining'
    """

    def __init__(self, total: int, *, enabled: bool, stream: TextIO) -> None:
        self.total, self.enabled, self.stream = total, enabled, stream
        self.done = self.failed = 0

    def update(self, result: CaseResult) -> None:
        self.done += 1
        self.failed += not result.ok
        if self.enabled:
            self.stream.write(
                f"\reigensheet batch: {self.done}/{self.total} done, {self.failed} failed, "
                f"{self.total - self.done} remaining "
            )
            self.stream.flush()

    def close(self) -> None:
        if self.enabled and self.done:
            self.stream.write("\n")
            self.stream.flush()
