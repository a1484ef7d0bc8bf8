"""Short decimals of exact numbers, for the approximations printed beside exact values."""

from __future__ import annotations

import math

import sympy as sp

__all__ = ["format_decimal"]


def _float_text(value: float, digits: int, *, latex: bool) -> str:
    if value == 0:
        return "0"
    text = f"{value:.{digits}g}"
    if "e" in text:
        mant, exp = text.split("e")
        if latex:
            return r"%s \times 10^{%d}" % (mant, int(exp))
        return f"{mant}e{int(exp)}"
    return text


def format_decimal(
    value: sp.Expr, *, digits: int = 5, unit: str = "i", latex: bool = False
) -> str:
    """A short decimal of an exact number, complex as ``a + b i``; "" if not numeric.

    >>> format_decimal(sp.sqrt(2))
    '1.4142'
    >>> format_decimal(1 - 2*sp.I, unit="j")
    '1 - 2 j'
    """
    expr = sp.sympify(value, strict=True)
    if not expr.is_number:
        return ""
    roots = expr.atoms(sp.CRootOf)
    if roots:  # evalf refines a CRootOf slowly; use the cached decimals
        from ..exact import root_value

        expr = expr.xreplace({r: root_value(r) for r in roots})
    num = sp.N(expr, digits + 5)
    re_, im_ = (float(part) for part in num.as_real_imag())
    # Keep the display from showing round-off of an exact zero part.
    scale = max(abs(re_), abs(im_))
    if scale and abs(re_) < 10 ** (-digits - 3) * scale:
        re_ = 0.0
    if scale and abs(im_) < 10 ** (-digits - 3) * scale:
        im_ = 0.0
    if math.isnan(re_) or math.isnan(im_):
        return ""
    if im_ == 0:
        return _float_text(re_, digits, latex=latex)
    imag = _float_text(abs(im_), digits, latex=latex)
    imag = unit if imag == "1" else f"{imag} {unit}"
    if re_ == 0:
        return f"-{imag}" if im_ < 0 else imag
    sign = "-" if im_ < 0 else "+"
    return f"{_float_text(re_, digits, latex=latex)} {sign} {imag}"


