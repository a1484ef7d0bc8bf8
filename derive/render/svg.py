"""Figures as SVG files for the Markdown output, drawn with matplotlib (the optional extra ``plots``).

Markdown has no drawing of its own, so each ``Figure`` block becomes an SVG
file written beside the ``.md`` file and referenced from it.  The drawing
follows the LaTeX one (``latex_blocks.figure_latex``): curves as lines,
tolerance bands as light shaded regions, check points and eigenvalues as circles, a curve and its points in one
colour, switch lines dashed, impulse lines dotted, the imaginary axis solid.
The SVG carries no date and fixed element ids, so the same figure gives the
same bytes.
"""

from __future__ import annotations

import io

from ..documents.blocks import Figure

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


def figure_svg(figure: Figure) -> bytes | None:
    """The figure as SVG bytes, or None without matplotlib.

    >>> from derive.documents.blocks import N, Series
    >>> svg = figure_svg(Figure("decay", N("t"), N("x"), (Series("x", ((0.0, 1.0), (1.0, 0.5))),)))
    >>> svg is None or svg.startswith(b"<?xml")
    True
    """
    if not plots_available():
        return None
    import matplotlib
    from matplotlib.figure import Figure as Canvas

    with matplotlib.rc_context({"svg.hashsalt": "eigensheet", "svg.fonttype": "path", "font.size": 9}):
        fig = Canvas(figsize=(6.4, max(1.8, 8.0 * figure.height)))
        ax = fig.add_subplot()
        keys: dict[str, int] = {}
        for series in figure.series:
            colour = f"C{keys.setdefault(series.key or series.label, len(keys)) % 10}"
            xs = [x for x, _ in series.points]
            ys = [y for _, y in series.points]
            label = series.label or None
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
        ax.set_xlabel(figure.xlabel.plain)
        ax.set_ylabel(figure.ylabel.plain)
        ax.grid(True, linewidth=0.4, alpha=0.6)
        if any(s.label for s in figure.series):
            ax.legend(loc="center left", bbox_to_anchor=(1.01, 0.5), frameon=False)
        fig.tight_layout()
        out = io.BytesIO()
        fig.savefig(out, format="svg", metadata={"Date": None})
    return out.getvalue()
