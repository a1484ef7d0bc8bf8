"""Figures as SVG files for the Markdown output, drawn with matplotlib (the optional extra ``plots``).

Markdown has no drawing of its own, so each ``Figure`` block becomes an SVG
file written beside the ``.md`` file and referenced from it.  The drawing
follows the LaTeX one (``latex_blocks.figure_latex``): curves as lines,
tolerance bands as light shaded regions, check points and eigenvalues as circles, a curve and its points in one
colour, switch lines dashed, impulse lines dotted, the imaginary axis solid.
The SVG carries no date and fixed element ids, so the same figure gives the
same bytes.  A curve that carries its symbol is named in the legend in
matplotlib's mathtext, from the LaTeX of the sheet's own printer (``T_1``,
``q_1'``), and so are the axis labels; LaTeX that mathtext cannot set (a
siunitx unit) falls back to the plain spelling.
"""

from __future__ import annotations

import io
from typing import Any

from ..documents.blocks import Figure, Series
from .printing import MathFormatter

__all__ = ["plots_available", "figure_svg"]

_LINES = {"switch": ("gray", "--", 0.8), "impulse": ("gray", ":", 1.2), "axis": ("0.4", "-", 0.8)}


def plots_available() -> bool:
    """True when matplotlib can be imported (the optional extra ``plots``).

    >>> isinstance(plots_available(), bool)
    True
    """
    try:
        import matplotlib  # noqa: F401
    except ImportError:
        return False
    return True


def _mathtext(latex: str, plain: str, parser: Any) -> str:
    """``latex`` as mathtext when mathtext can set it, else ``plain`` as text."""
    tex = f"${latex}$"
    # mathtext sets \text{...} verbatim, so a siunitx unit inside would show as its macro names
    readable = "\\text" not in latex
    if readable:
        try:
            parser.parse(tex)
        except ValueError:  # a macro mathtext lacks
            readable = False
    # plain text is never mathtext: a "$" in it must not switch to mathematics
    return tex if readable else plain.replace("$", r"\$")


def _legend(series: Series, fmt: MathFormatter, parser: Any) -> str | None:
    """A curve's legend entry: its symbol as mathtext, else its label (None: no entry)."""
    if not series.label:
        return None
    if series.symbol is not None:
        return _mathtext(fmt.m(series.symbol), series.label, parser)
    return series.label.replace("$", r"\$")


def figure_svg(figure: Figure, *, fmt: MathFormatter | None = None) -> bytes | None:
    """The figure as SVG bytes, or None without matplotlib.

    ``fmt`` prints the curves' symbols for the legend (a plain formatter when not given).

    >>> from derive.documents.blocks import N, Series
    >>> svg = figure_svg(Figure("decay", N("t"), N("x"), (Series("x", ((0.0, 1.0), (1.0, 0.5))),)))
    >>> svg is None or svg.startswith(b"<?xml")
    True
    """
    if not plots_available():
        return None
    import matplotlib
    from matplotlib.figure import Figure as Canvas
    from matplotlib.mathtext import MathTextParser

    fmt = fmt or MathFormatter.for_roots(())
    parser = MathTextParser("path")

    with matplotlib.rc_context({"svg.hashsalt": "eigensheet", "svg.fonttype": "path", "font.size": 9}):
        fig = Canvas(figsize=(6.4, max(1.8, 8.0 * figure.height)))
        ax = fig.add_subplot()
        keys: dict[str, int] = {}
        for series in figure.series:
            colour = f"C{keys.setdefault(series.key or series.label, len(keys)) % 10}"
            xs = [x for x, _ in series.points]
            ys = [y for _, y in series.points]
            label = _legend(series, fmt, parser)
            if series.style == "band":
                ax.fill(xs, ys, color=colour, alpha=0.18, linewidth=0, label=label)
            elif series.style == "marks":
                ax.plot(xs, ys, linestyle="none", marker="o", markersize=4, markerfacecolor="none", color=colour, label=label)
            else:
                ax.plot(xs, ys, color=colour, linewidth=1.4, label=label)
        for line in figure.lines:
            colour, style, width = _LINES.get(line.style, ("gray", "-", 0.8))
            ax.axvline(line.at, color=colour, linestyle=style, linewidth=width)
        if figure.xmode == "log":
            ax.set_xscale("log")
        ax.set_xlabel(_mathtext(figure.xlabel.latex, figure.xlabel.plain, parser))
        ax.set_ylabel(_mathtext(figure.ylabel.latex, figure.ylabel.plain, parser))
        ax.grid(True, linewidth=0.4, alpha=0.6)
        if any(s.label for s in figure.series):
            ax.legend(loc="center left", bbox_to_anchor=(1.01, 0.5), frameon=False)
        fig.tight_layout()
        out = io.BytesIO()
        fig.savefig(out, format="svg", metadata={"Date": None})
    return out.getvalue()
