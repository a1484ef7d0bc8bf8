"""Writing any document's outputs to disk, safely, and compiling the PDF: the one writer.

Every output is rendered in memory first, so a rendering error writes
nothing; each file is then written to a temporary name in the output folder
and moved over the final name with ``os.replace``, so an interrupted run never
leaves half a file and an existing output is only ever replaced by a complete
new one.  The PDF is built by ``latexmk`` in a private build folder inside the
output folder, with shell escape off and a time limit, and only the finished
PDF is moved out of it.
"""

from __future__ import annotations

import os
import re
import shutil
import signal
import subprocess
import tempfile
from pathlib import Path
from typing import Any, Sequence

from .errors import InputError, OutputError

__all__ = ["write_outputs", "latex_available", "compile_pdf", "check_stem"]

_STEM = re.compile(r"[A-Za-z0-9][A-Za-z0-9._-]{0,119}")
# Lines in the log like "./sheet.tex:42: Undefined control sequence."
_TEX_ERROR = re.compile(r"^[^\s:]+:\d+: .*")


def check_stem(stem: str) -> str:
    """Return ``stem`` if it is a plain file name, else raise ``InputError``.

    >>> check_stem("calc-001")
    'calc-001'
    """
    if not isinstance(stem, str) or not _STEM.fullmatch(stem) or ".." in stem:
        raise InputError(
            f"output name {stem!r} is not a plain file name; expected letters, digits, "
            "'.', '_' or '-', starting with a letter or digit, with no '..' or path separators",
            key="stem",
        )
    return stem


def latex_available() -> bool:
    """True when ``latexmk`` is on the PATH.

    >>> isinstance(latex_available(), bool)
    True
    """
    return shutil.which("latexmk") is not None


def _atomic_write(path: Path, data: bytes) -> None:
    """Write ``data`` to ``path`` through a temporary file in the same folder."""
    fd, tmp = tempfile.mkstemp(dir=path.parent, prefix=f".{path.name}.", suffix=".part")
    try:
        # mkstemp makes the file private; give it the mode an ordinary open would.
        os.chmod(tmp, 0o666 & ~_umask())
        with os.fdopen(fd, "wb") as fh:
            fh.write(data)
            fh.flush()
            os.fsync(fh.fileno())
        os.replace(tmp, path)
    except BaseException:
        try:
            os.unlink(tmp)
        except FileNotFoundError:
            pass
        raise


def atomic_write_bytes(path: str | os.PathLike[str], data: bytes) -> Path:
    """Write bytes atomically (a PDF that came back from a cluster worker, say)."""
    path = Path(path)
    _atomic_write(path, data)
    return path


def atomic_write_text(path: str | os.PathLike[str], text: str) -> Path:
    """Write text (UTF-8) atomically: a reader sees the old file or the whole new one.

    >>> import tempfile, pathlib
    >>> p = pathlib.Path(tempfile.mkdtemp()) / "a.txt"
    >>> atomic_write_text(p, "x").read_text()
    'x'
    """
    path = Path(path)
    _atomic_write(path, text.encode("utf-8"))
    return path


def _umask() -> int:
    mask = os.umask(0o022)
    os.umask(mask)
    return mask


def _log_errors(log: str, *, limit: int = 6) -> list[str]:
    """The first ``file:line: error`` lines of a TeX log, each with TeX's context line."""
    lines = log.splitlines()
    out: list[str] = []
    for k, line in enumerate(lines):
        if _TEX_ERROR.match(line):
            out.append(line.strip())
            for follow in lines[k + 1 : k + 4]:
                if follow.startswith("l."):
                    out.append("  " + follow.strip())
                    break
            if len(out) >= limit:
                break
    return out


def _kill_group(proc: subprocess.Popen[bytes]) -> None:
    """Stop latexmk and the TeX run it started (they share our new session)."""
    try:
        os.killpg(proc.pid, signal.SIGKILL)
    except ProcessLookupError:
        pass
    proc.wait()


def compile_pdf(tex_path: Path, *, timeout: float = 120.0) -> Path:
    """Compile ``tex_path`` with latexmk into ``<same folder>/<stem>.pdf``; return its path.

    The build runs in a temporary folder beside the source with shell escape
    off; on failure ``OutputError`` carries the first errors of the log.

    >>> compile_pdf(Path("out/sheet.tex"))  # doctest: +SKIP
    PosixPath('out/sheet.pdf')
    """
    tex_path = Path(tex_path)
    if not tex_path.is_file():
        raise OutputError(f"{tex_path}: no such LaTeX file to compile", file=str(tex_path))
    exe = shutil.which("latexmk")
    if exe is None:
        raise OutputError(
            "latexmk is not on the PATH, so no PDF can be made; install TeX Live "
            "(latexmk, texlive-latex-extra, lmodern) or write the .tex only",
            file=str(tex_path),
        )
    out_dir = tex_path.parent
    stem = tex_path.stem
    build = Path(tempfile.mkdtemp(dir=out_dir, prefix=f".{stem}.build-"))
    try:
        shutil.copyfile(tex_path, build / tex_path.name)
        env = dict(os.environ)
        # Paranoid file access for TeX itself: no writing outside the build
        # folder and no reading of dot files or parent folders by name.
        env["openout_any"] = "p"
        env["openin_any"] = "p"
        cmd = [
            exe,
            "-norc",
            "-pdf",
            "-interaction=nonstopmode",
            "-halt-on-error",
            "-no-shell-escape",
            "-file-line-error",
            tex_path.name,
        ]
        proc = subprocess.Popen(
            cmd,
            cwd=build,
            env=env,
            stdin=subprocess.DEVNULL,
            stdout=subprocess.PIPE,
            stderr=subprocess.STDOUT,
            start_new_session=True,
        )
        try:
            output, _ = proc.communicate(timeout=timeout)
        except subprocess.TimeoutExpired:
            _kill_group(proc)
            raise OutputError(
                f"{tex_path}: latexmk did not finish within {timeout:g} s; expected a PDF",
                file=str(tex_path),
                hint="raise tex_timeout, or check the .tex for a runaway construct",
            ) from None
        pdf = build / f"{stem}.pdf"
        if proc.returncode != 0 or not pdf.is_file():
            log_path = build / f"{stem}.log"
            log = log_path.read_text(encoding="utf-8", errors="replace") if log_path.is_file() else ""
            errors = _log_errors(log)
            if not errors:
                tail = output.decode("utf-8", errors="replace").strip().splitlines()[-8:]
                errors = tail or ["(no log was written)"]
            raise OutputError(
                f"{tex_path}: LaTeX failed (latexmk exit {proc.returncode}); expected a PDF. First errors:\n  "
                + "\n  ".join(errors),
                file=str(tex_path),
            )
        target = out_dir / f"{stem}.pdf"
        os.replace(pdf, target)
        return target
    finally:
        shutil.rmtree(build, ignore_errors=True)


def write_outputs(
    document: Any,
    out_dir: str | os.PathLike[str],
    *,
    stem: str,
    formats: Sequence[str] = ("latex",),
    pdf: bool | None = None,
    tex_timeout: float = 120.0,
) -> tuple[Path, ...]:
    """Write a document (a ``Solution`` stands for its sheet) in each format, atomically,
    and compile the PDF when pdf is True, or when pdf is None and latexmk is on the PATH.

    Writes <stem>.tex (and <stem>-body.tex, the fragment for a host report,
    when the document type has one) and <stem>.<suffix> for the other formats;
    a renderer with ``render_files`` (Markdown) also gives files of its own,
    written beside it (its figures as ``<stem>-<figure>.svg``).
    Everything is rendered before the disk is touched, so a failing renderer
    writes nothing.  Returns the paths written, in order.

    >>> write_outputs(sol, "out", stem="calc-001", formats=("latex", "json"))  # doctest: +SKIP
    (PosixPath('out/calc-001.tex'), PosixPath('out/calc-001-body.tex'), PosixPath('out/calc-001.json'), ...)
    """
    from .render import RENDERERS
    from .render.base import as_document

    check_stem(stem)
    doc = as_document(document)
    formats = tuple(dict.fromkeys(formats))
    unknown = [f for f in formats if f not in RENDERERS]
    if unknown:
        raise InputError(
            f"unknown output format(s) {', '.join(map(repr, unknown))}; expected one of {', '.join(RENDERERS)}",
            key="formats",
        )
    want_pdf = latex_available() if pdf is None else bool(pdf)
    if want_pdf and "latex" not in formats:
        formats = ("latex", *formats)
    folder = Path(out_dir)
    if folder.exists() and not folder.is_dir():
        raise OutputError(f"{folder}: exists and is not a folder; expected an output folder", file=str(folder))

    # Render everything before touching the disk: a failing renderer writes nothing.
    pending: list[tuple[Path, str | bytes]] = []
    for fmt in formats:
        renderer = RENDERERS[fmt]
        with_files = getattr(renderer, "render_files", None)
        if with_files is not None:
            # a format that keeps its figures in files of their own (Markdown's SVGs), written beside it
            text, files = with_files(doc, stem=stem)
            pending.append((folder / f"{stem}{renderer.suffix}", text))
            pending += [(folder / name, data) for name, data in files]
            continue
        pending.append((folder / f"{stem}{renderer.suffix}", renderer.render(doc)))
        if fmt == "latex" and doc.body_file:
            pending.append((folder / f"{stem}-body{renderer.suffix}", renderer.render(doc, fragment=True)))

    try:
        folder.mkdir(parents=True, exist_ok=True)
        written: list[Path] = []
        for path, text in pending:
            _atomic_write(path, text.encode("utf-8") if isinstance(text, str) else text)
            written.append(path)
    except OSError as exc:
        raise OutputError(f"{folder}: could not write the outputs ({exc.strerror or exc}); expected a writable folder", file=str(folder)) from exc
    if want_pdf:
        written.append(compile_pdf(folder / f"{stem}.tex", timeout=tex_timeout))
    return tuple(written)
