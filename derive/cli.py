"""The command line.  The one place where errors become exit codes.

Exit codes: 0 solved and verified; 1 verification failed; 2 bad input;
3 time limit; 4 an output could not be written (e.g. TeX failed);
5 internal error (a bug: please report it with the case file).
"""

from __future__ import annotations

import os
import sys
from importlib import resources
from pathlib import Path
from typing import Callable, Sequence

import click

from . import __version__
from .documents.base import PROGRAM_NAME
from .errors import (
    EXIT_OK,
    EXIT_VERIFICATION,
    DeriveError,
    InputError,
    VerificationError,
)
from .limits import DEFAULT_TIMEOUT, time_limit

EXIT_INTERNAL = 5

EXIT_CODES_HELP = (
    "Exit codes: 0 solved and verified; 1 verification failed (the sheet is written and "
    "marked as failed); 2 bad input; 3 time limit reached; 4 an output could not be "
    "written (TeX failed); 5 internal error."
)

FORMATS = ("latex", "markdown", "text", "json")


def _fail(err: DeriveError) -> int:
    click.echo(f"{PROGRAM_NAME}: error: {err}", err=True)
    return err.exit_code


def _guard(fn: Callable[[], int]) -> int:
    """Run a command body; turn every error into a message and an exit code."""
    try:
        return fn()
    except DeriveError as err:
        return _fail(err)
    except KeyboardInterrupt:
        click.echo(f"{PROGRAM_NAME}: interrupted; outputs already written are complete", err=True)
        return 130
    except RecursionError:
        return _fail(InputError("the input is nested too deeply to process"))
    except Exception as exc:  # a bug, not the user's fault: say so, no traceback
        click.echo(
            f"{PROGRAM_NAME}: internal error: {type(exc).__name__}: {exc}\n"
            f"  this is a bug in {PROGRAM_NAME}; please report it together with the case file",
            err=True,
        )
        return EXIT_INTERNAL


def _say(line: str) -> None:
    """A line on standard output; a reader that has gone (``| head``) does not stop the files being written."""
    try:
        click.echo(line)
    except BrokenPipeError:
        # later lines (and the flush at exit) go nowhere instead of failing
        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, sys.stdout.fileno())


def _summary(sol, exact_in: str | None = None) -> None:
    from .render.console import summary_lines
    from .render.escape import spoken

    for line in summary_lines(sol, exact_in=exact_in):
        _say(line)
    for note in sol.notices:
        click.echo(f"note: {spoken(note)}", err=True)


def _planned_file(out_dir: Path, stem: str, formats: Sequence[str]) -> str | None:
    """The file of this run that will hold the full exact form (named before it is written)."""
    from .render import RENDERERS
    from .render.console import preferred_file

    return preferred_file([str(out_dir / f"{stem}{RENDERERS[f].suffix}") for f in formats if f in RENDERERS])


def _solve_and_write(
    case,
    out_dir: Path,
    formats: Sequence[str],
    pdf: bool | None,
    timeout: float,
    stem: str | None,
    relations: Sequence[str] = (),
    substitute: bool | None = None,
) -> int:
    from .output import write_outputs
    from .pipeline import solve_case

    code = EXIT_OK
    with time_limit(timeout, what=f"case {case.name!r}"):
        try:
            sol = solve_case(case, assume=list(relations) or None, substitute=substitute)
        except VerificationError as err:
            if err.solution is None:
                raise
            sol = err.solution
            click.echo(f"{PROGRAM_NAME}: error: {err}", err=True)
            code = EXIT_VERIFICATION
    _summary(sol, _planned_file(out_dir, stem or case.name, formats))
    paths = write_outputs(sol, out_dir, stem=stem or case.name, formats=tuple(formats), pdf=pdf)
    for p in paths:
        _say(f"wrote {p}")
    return code


# click reports usage errors itself with exit code 2, which is our code for bad input.
@click.group(epilog=EXIT_CODES_HELP, context_settings={"help_option_names": ["-h", "--help"]})
@click.version_option(__version__, prog_name=PROGRAM_NAME)
def cli() -> None:
    """Exact closed-form solutions of x' = A x + f(t), every step shown and verified,
    written as a calculation sheet (LaTeX and PDF)."""


_format_option = click.option(
    "--format",
    "formats",
    multiple=True,
    type=click.Choice(FORMATS),
    default=("latex",),
    show_default=True,
    help="Output format; repeat for several. LaTeX writes a standalone sheet and a body-only fragment.",
)
_pdf_option = click.option(
    "--pdf/--no-pdf",
    default=None,
    help="Compile the sheet to PDF (default: when latexmk is on the PATH).",
)
_timeout_option = click.option(
    "--timeout",
    type=click.FloatRange(min=0),
    default=DEFAULT_TIMEOUT,
    show_default=True,
    help="Seconds allowed for solving one case (0: no limit).",
)
_substitute_option = click.option(
    "--substitute/--symbolic",
    "substitute",
    default=None,
    help="Put the parameter values into the algebra before the decomposition (a numeric derivation), or keep "
    "the parameters as symbols (values only in the checks); default: the case file's [solve] values, else symbolic.",
)


def _folder_option(default: str = "out", help: str = "Output folder."):
    return click.option(
        "-o",
        "--out",
        "out_dir",
        type=click.Path(file_okay=False, path_type=Path),
        default=Path(default),
        show_default=True,
        help=help,
    )


_out_option = _folder_option()


@cli.command(epilog=EXIT_CODES_HELP)
@click.argument("case_file", type=click.Path(dir_okay=False, path_type=Path))
@_out_option
@_format_option
@_pdf_option
@_timeout_option
@click.option(
    "--case",
    "relations",
    multiple=True,
    metavar="RELATION",
    help="Solve on a parameter relation, e.g. --case 'c^2 = 4*k*m' (a degenerate case "
    "the sheet lists), or in a regime, e.g. --case 'c^2 < 4*k*m' (complex pair: sines "
    "and cosines); the output name gets a '-case-' suffix naming the relation, so each case keeps its own sheet. Repeatable.",
)
@_substitute_option
def solve(
    case_file: Path,
    out_dir: Path,
    formats: tuple[str, ...],
    pdf: bool | None,
    timeout: float,
    relations: tuple[str, ...],
    substitute: bool | None,
) -> None:
    """Solve CASE_FILE (TOML) and write its calculation sheet into the output folder."""

    def body() -> int:
        from .casefile import load_case

        from .sweep import relation_name

        case = load_case(case_file)
        stem = relation_name(case.name, relations) if relations else None
        try:
            return _solve_and_write(case, out_dir, formats, pdf, timeout, stem, relations, substitute)
        except InputError as err:
            # a --case relation or regime, or a refusal of the solver, names the case file too
            if err.key and err.key.startswith("assume"):
                err.key = "--case" + err.key[len("assume"):]
            raise err.with_location(file=str(case_file))

    sys.exit(_guard(body))


@cli.command(epilog=EXIT_CODES_HELP)
@_out_option
@_format_option
@_pdf_option
@_timeout_option
def demo(out_dir: Path, formats: tuple[str, ...], pdf: bool | None, timeout: float) -> None:
    """Solve the built-in demo (a two-zone building warming up) and write its sheet."""

    def body() -> int:
        from .casefile import loads_case

        text = resources.files("derive.data").joinpath("demo.toml").read_text(encoding="utf-8")
        case = loads_case(text, name="demo", source="the built-in demo case")
        return _solve_and_write(case, out_dir, formats, pdf, timeout, "demo")

    sys.exit(_guard(body))


@cli.command(epilog=EXIT_CODES_HELP)
@click.argument("name")
@_folder_option(".", "Folder to write NAME.toml into.")
@click.option("--force", is_flag=True, help="Replace an existing file of that name.")
def new(name: str, out_dir: Path, force: bool) -> None:
    """Write NAME.toml: a commented case-file template to fill in.

    NAME is a plain file name (no folders); use -o for the folder."""

    def body() -> int:
        from .output import atomic_write_text, check_stem

        stem = check_stem(name[:-5] if name.endswith(".toml") else name)
        target = out_dir / f"{stem}.toml"
        if target.exists() and not force:
            raise InputError("the file exists already; pass --force to replace it", file=str(target))
        out_dir.mkdir(parents=True, exist_ok=True)
        text = resources.files("derive.data").joinpath("template.toml").read_text(encoding="utf-8")
        atomic_write_text(target, text)
        click.echo(f"wrote {target}: edit it, then run: {PROGRAM_NAME} solve {target}")
        return EXIT_OK

    sys.exit(_guard(body))


# -- more commands below --


@cli.command(
    "batch",
    epilog="Exit codes: 0 every case solved and verified; 1 a case failed, timed out or crashed "
    "(see summary.csv); 2 bad input (no cases, bad option); 130 interrupted (the summary lists "
    "the finished cases); 5 internal error.",
)
@click.argument("paths", nargs=-1, required=True, type=click.Path(exists=True, path_type=Path))
@_out_option
@click.option(
    "-j", "--jobs", type=click.IntRange(min=1), default=None, help="Cases run at once (default: the number of CPUs)."
)
@_timeout_option
@_format_option
@_pdf_option
@click.option("--force", is_flag=True, help="Run every case again, even when an unchanged result is on disk.")
@click.option(
    "--scheduler",
    metavar="ADDRESS",
    default=None,
    help="Run on the Dask cluster at ADDRESS (needs the 'cluster' extra), e.g. tcp://127.0.0.1:8786.",
)
@_substitute_option
def batch_command(
    paths: tuple[Path, ...],
    out_dir: Path,
    jobs: int | None,
    timeout: float,
    formats: tuple[str, ...],
    pdf: bool | None,
    force: bool,
    scheduler: str | None,
    substitute: bool | None,
) -> None:
    """Solve every case in PATHS (case files, or folders searched for *.toml), each in its own
    worker with its own time limit; write the sheets, summary.csv, summary.json and an index."""

    def body() -> int:
        from .batch import batch

        report = batch(
            paths,
            jobs=jobs,
            timeout=timeout,
            out_dir=out_dir,
            formats=formats,
            pdf=pdf,
            force=force,
            scheduler=scheduler,
            progress=None,
            keep_solutions=False,
            substitute=substitute,
        )
        for r in report.results:
            if not r.ok:
                first = r.message.splitlines()[0] if r.message else ""
                click.echo(f"{r.status}: {r.name}: {first}", err=True)
        if report.index_error:
            click.echo(f"{PROGRAM_NAME}: error: the index could not be written: {report.index_error}", err=True)
        counts = ", ".join(f"{n} {s}" for s, n in report.counts.items() if n)
        reused = f" ({report.cached_count} reused)" if report.cached_count else ""
        click.echo(f"{len(report.results)} cases: {counts}{reused}; summary in {out_dir / 'summary.csv'}")
        return report.exit_code

    sys.exit(_guard(body))


@cli.command(
    "check",
    epilog="Exit codes: 0 every claimed item passes; 1 an item fails (the report names the first "
    "wrong step); 2 bad input; 3 time limit reached; 4 the report could not be written; 5 internal error.",
)
@click.argument("case_file", type=click.Path(dir_okay=False, path_type=Path))
@click.option(
    "--claim",
    "claim_file",
    required=True,
    type=click.Path(dir_okay=False, path_type=Path),
    help="TOML file with the claimed steps: eigenvalues, eigenvectors, P, D, P_inv, x, constants.",
)
@_out_option
@click.option(
    "--format",
    "formats",
    multiple=True,
    type=click.Choice(FORMATS),
    default=("latex",),
    show_default=True,
    help="Report file format; repeat for several. The table is printed in any case.",
)
@_pdf_option
@_timeout_option
def check_command(
    case_file: Path, claim_file: Path, out_dir: Path, formats: tuple[str, ...], pdf: bool | None, timeout: float
) -> None:
    """Check a hand derivation (CLAIM) of CASE_FILE item by item and write a check report."""

    def body() -> int:
        from dataclasses import replace

        from .casefile import load_case
        from .check import check
        from .documents.check_report import render_check, write_check_outputs
        from .claimfile import read_claim

        case = load_case(case_file)
        claim = read_claim(claim_file, case=case)
        with time_limit(timeout, what=f"the check of {claim_file}"):
            report = check(**claim.kwargs)
        report = replace(report, notices=tuple(dict.fromkeys(case.notices + claim.notices + report.notices)))
        click.echo(render_check(report, "text", meta=case.meta, brief=True), nl=False)
        sources = ((str(case_file), case.source_hash), (str(claim_file), claim.source_hash))
        paths = write_check_outputs(
            report, out_dir, stem=f"{case.name}-check", formats=formats, pdf=pdf, meta=case.meta, sources=sources
        )
        for p in paths:
            click.echo(f"wrote {p}")
        return report.exit_code

    sys.exit(_guard(body))


def main(argv: Sequence[str] | None = None) -> int:
    """Entry point of the ``eigensheet`` command."""
    try:
        cli.main(args=list(argv) if argv is not None else None, prog_name=PROGRAM_NAME, standalone_mode=True)
    except SystemExit as exc:
        return int(exc.code or 0)
    return EXIT_OK


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
