"""The legend of the real and imaginary parts sigma_k, omega_k of indexed complex pairs.

``printing.collect_roots`` names them (``derive.realroots`` makes them); this
says, once under the result, which eigenvalue sigma_k + i omega_k is and gives
each part's integer polynomial and decimal.  Text and formulas come as a list
of pieces, a formula as (LaTeX, plain): the step blocks turn it into inline
parts, the LaTeX sheet into one sentence.
"""

from __future__ import annotations

from typing import Sequence

import sympy as sp

from .printing import MathFormatter, RootName

__all__ = ["part_legend", "part_legend_latex", "polynomial_pieces", "TERMS_PER_PIECE"]


def part_legend(roots: Sequence[RootName], fmt: MathFormatter, *, lead: str = "") -> list[str | tuple[str, str]]:
    """The legend of the parts sigma_k, omega_k among ``roots``: text and (LaTeX, plain) formulas.

    Says which eigenvalue sigma_k + i omega_k is, and the polynomial over Q
    and the decimal of each part; ``lead`` goes first (empty list when there
    is nothing to say).
    """
    sigmas = {r.of: r for r in roots if r.letter == "sigma"}
    omegas = {r.of: r for r in roots if r.letter == "omega"}
    named = {r.root: r for r in fmt.roots}
    z = sp.Symbol("z")
    out: list[str | tuple[str, str]] = []
    why: list[str | tuple[str, str]]
    for upper, sg in sigmas.items():
        om = omegas.get(upper)
        if om is None or upper is None:
            continue
        i_tex, i_pl = fmt.m(sp.I), fmt.plain(sp.I)
        s_tex, s_pl, o_tex, o_pl = fmt.m(sg.root), fmt.plain(sg.root), fmt.m(om.root), fmt.plain(om.root)
        out.append(" " if out else "")
        lower = sp.conjugate(upper)
        if upper in named and lower in named:
            u_tex, u_pl, l_tex, l_pl = fmt.m(upper), fmt.plain(upper), fmt.m(lower), fmt.plain(lower)
            out += [
                "The complex pair ",
                (f"{u_tex}, {l_tex} = {s_tex} \\pm {i_tex} {o_tex}", f"{u_pl}, {l_pl} = {s_pl} +- {i_pl} {o_pl}"),
                " is written in real form with the real algebraic numbers ",
            ]
            why = [
                " (integer polynomials found by resultants of the characteristic polynomial: ",
                (f"2 {s_tex} = {u_tex} + {l_tex}", f"2 {s_pl} = {u_pl} + {l_pl}"),
                " is a sum of two of its roots, ",
                (f"2 {i_tex} {o_tex} = {u_tex} - {l_tex}", f"2 {i_pl} {o_pl} = {u_pl} - {l_pl}"),
                " a difference)",
            ]
        else:
            out += ["A complex pair of eigenvalues is written in real form with the real algebraic numbers "]
            why = [" (integer polynomials found by resultants of the characteristic polynomial)"]
        for k, r in enumerate((sg, om)):
            out += [
                " and " if k else "",
                (rf"{fmt.m(r.root)} \approx {r.decimal}", f"{fmt.plain(r.root)} ~ {r.decimal}"),
                ", a root of ",
                *polynomial_pieces(r.root.poly.as_expr(z), z, fmt),
            ]
        out += why
        out.append(".")
    return [p for p in ([lead] if out else []) + out if p != ""]


#: terms of a legend's polynomial set in one inline formula; a line breaks between two formulas
TERMS_PER_PIECE = 2


def polynomial_pieces(poly: sp.Expr, z: sp.Symbol, fmt: MathFormatter) -> list[str | tuple[str, str]]:
    """``poly = 0`` as inline formulas of a few terms each, separated by spaces.

    A resultant's polynomial (degree 30, coefficients of 17 digits) set as
    one inline formula runs past the margin: TeX finds too few breaks in it.
    Between two formulas the line may break at the space.

    >>> z = sp.Symbol("z")
    >>> polynomial_pieces(z**2 - 2, z, MathFormatter.for_roots(()))
    [('z^{2} - 2 = 0', 'z^2 - 2 = 0')]
    """
    terms = sp.Poly(poly, z).terms()
    if len(terms) <= TERMS_PER_PIECE:
        return [(f"{fmt.m(poly)} = 0", f"{fmt.plain(poly)} = 0")]
    out: list[str | tuple[str, str]] = []
    for start in range(0, len(terms), TERMS_PER_PIECE):
        chunk = sp.Add(*(c * z**m for (m,), c in terms[start:start + TERMS_PER_PIECE]))
        negative = terms[start][1] < 0
        # "{}" makes a leading sign binary, spaced as inside the whole polynomial; the chunk prints its own minus
        lead, plain_lead = ("", "") if start == 0 else ("{} ", "") if negative else ("{} + ", "+ ")
        end = " = 0" if start + TERMS_PER_PIECE >= len(terms) else ""
        out += [" " if start else "", (lead + fmt.m(chunk) + end, plain_lead + fmt.plain(chunk) + end)]
    return [p for p in out if p != ""]


def part_legend_latex(roots: Sequence[RootName], fmt: MathFormatter) -> str:
    """``part_legend`` as one LaTeX sentence, ending its paragraph.

    Lines of long integers have little glue to stretch: the paragraph is set
    sloppily (wider spaces rather than a line past the margin).
    """
    text = "".join(p if isinstance(p, str) else f"${p[0]}$" for p in part_legend(roots, fmt))
    return "{\\sloppy " + text + "\\par}" if text else ""
