"""A cluster task's child interpreter: ``python -m derive.batch.child NAME``.

Reads one pickled :class:`~derive.batch.task.CaseTask` on stdin, runs it, and
writes one pickled outcome on stdout, then exits; the parent reads stdout to
the end.  Anything a library prints goes to stderr, never into the outcome.
"""

from __future__ import annotations

import os
import sys

from .task import run_payload

__all__ = ["main"]


def main(argv: list[str] | None = None) -> None:
    """Run the task on stdin for the case named in ``argv``; its outcome goes to stdout."""
    name = (sys.argv[1:] if argv is None else argv)[0]
    out = os.fdopen(os.dup(1), "wb")
    os.dup2(2, 1)
    payload = sys.stdin.buffer.read()
    with out:
        out.write(run_payload(payload, name))


if __name__ == "__main__":
    main()
