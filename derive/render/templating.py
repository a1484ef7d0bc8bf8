"""The jinja2 environment for LaTeX templates (``templates/``, shipped as package data).

Templates use ``\\BLOCK{...}``, ``\\VAR{...}`` and ``\\#{...}`` so they read
as LaTeX and never collide with braces; there is no line-statement prefix
because ``%%`` starts ordinary LaTeX comments.  Autoescape is off and
undefined names fail loudly; user text reaches the page only through the
``tex`` filter (``derive.render.escape.tex_escape``).
"""

from __future__ import annotations

import functools
import importlib.resources

import jinja2

from ..errors import OutputError
from .escape import spoken, tex_escape, tex_paragraphs

__all__ = ["template_environment", "load_template", "has_template", "get_template", "FRAGMENT_PACKAGES"]

#: Packages the body of a sheet needs from a host document.
FRAGMENT_PACKAGES: tuple[str, ...] = ("amsmath", "amssymb", "mathtools", "booktabs", "array", "refcount")


@functools.lru_cache(maxsize=1)
def _template_root():
    """Where the templates are: the installed package data, or in a source
    checkout that is imported directly (its top-level templates/ folder)."""
    try:
        return importlib.resources.files("derive.templates")
    except ModuleNotFoundError:
        import pathlib

        source = pathlib.Path(__file__).resolve().parents[2] / "templates"
        if source.is_dir():
            return source
        raise


def load_template(name: str) -> str | None:
    """Template source from the installed ``derive.templates`` package, or None."""
    parts = name.split("/")
    if any(p in ("", ".", "..") or "\\" in p for p in parts):
        return None
    node = _template_root()
    for part in parts:
        node = node.joinpath(part)
    if not node.is_file():
        return None
    return node.read_text(encoding="utf-8")


@functools.lru_cache(maxsize=1)
def template_environment() -> jinja2.Environment:
    """The jinja2 environment for LaTeX templates (cached; templates are package data).

    >>> template_environment().variable_start_string
    '\\\\VAR{'
    """
    env = jinja2.Environment(
        loader=jinja2.FunctionLoader(load_template),
        block_start_string=r"\BLOCK{",
        block_end_string="}",
        variable_start_string=r"\VAR{",
        variable_end_string="}",
        comment_start_string=r"\#{",
        comment_end_string="}",
        line_statement_prefix=None,
        line_comment_prefix=None,
        autoescape=False,
        undefined=jinja2.StrictUndefined,
        trim_blocks=True,
        lstrip_blocks=True,
        keep_trailing_newline=True,
    )
    env.filters["tex"] = tex_escape
    env.filters["texpar"] = tex_paragraphs
    # program text that quotes expressions (notices, reasons): the one display rule, then escaped
    env.filters["said"] = lambda text: tex_escape(spoken(text))
    return env




def has_template(name: str) -> bool:
    """True when the installed templates hold ``name`` (``steps/scalar.tex.j2``, say)."""
    return load_template(name) is not None


def get_template(name: str) -> jinja2.Template:
    """A template by name; ``OutputError`` when it is missing from the installed package."""
    try:
        return template_environment().get_template(name)
    except jinja2.TemplateNotFound as exc:
        raise OutputError(f"LaTeX template {exc.name} is missing from the installed package") from exc
