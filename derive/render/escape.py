"""User text made safe for each output format: one escaper per format.

Mathematics never passes through here (``derive.render.printing`` prints it);
only user and program text does: titles, names, notes, file names, details.
LaTeX text is escaped by ``tex_escape``, Markdown text by ``md_escape``, and
plain text is only squashed (``squash``: whitespace runs become one space).
"""

from __future__ import annotations

import re

__all__ = ["tex_escape", "tex_paragraphs", "md_escape", "squash", "spoken", "GREEK_LETTERS"]


# ---------------------------------------------------------------------------
# User text


_TEX_SPECIALS = {
    "&": r"\&",
    "%": r"\%",
    "$": r"\$",
    "#": r"\#",
    "_": r"\_",
    "{": r"\{",
    "}": r"\}",
    "~": r"\textasciitilde{}",
    "^": r"\textasciicircum{}",
    "\\": r"\textbackslash{}",
}

# pdflatex's utf8 input covers Latin-1 text; Greek letters are common in
# engineers' descriptions ("damping ratio ζ") and would stop the run, so they
# are set in math mode.  Anything else outside Latin-1 is shown by code point
# rather than failing the whole sheet.
_GREEK = {
    "α": "alpha", "β": "beta", "γ": "gamma", "δ": "delta", "ε": "epsilon",
    "ζ": "zeta", "η": "eta", "θ": "theta", "ι": "iota", "κ": "kappa",
    "λ": "lambda", "μ": "mu", "ν": "nu", "ξ": "xi", "π": "pi", "ρ": "rho",
    "σ": "sigma", "τ": "tau", "υ": "upsilon", "φ": "phi", "χ": "chi",
    "ψ": "psi", "ω": "omega", "Γ": "Gamma", "Δ": "Delta", "Θ": "Theta",
    "Λ": "Lambda", "Ξ": "Xi", "Π": "Pi", "Σ": "Sigma", "Φ": "Phi",
    "Ψ": "Psi", "Ω": "Omega",
}
#: Greek letter names, printed as the letters in plain text (lambda as λ).
GREEK_LETTERS: dict[str, str] = {
    "alpha": "α", "beta": "β", "gamma": "γ", "delta": "δ", "epsilon": "ε", "zeta": "ζ",
    "eta": "η", "theta": "θ", "iota": "ι", "kappa": "κ", "lambda": "λ", "mu": "μ",
    "nu": "ν", "xi": "ξ", "pi": "π", "rho": "ρ", "sigma": "σ", "tau": "τ",
    "upsilon": "υ", "phi": "φ", "chi": "χ", "psi": "ψ", "omega": "ω",
    "Gamma": "Γ", "Delta": "Δ", "Theta": "Θ", "Lambda": "Λ", "Xi": "Ξ", "Pi": "Π",
    "Sigma": "Σ", "Phi": "Φ", "Psi": "Ψ", "Omega": "Ω",
}

_TEXT_SYMBOLS = {
    "–": "--", "—": "---", "‘": "`", "’": "'", "“": "``", "”": "''",
    "…": r"\dots{}", "≤": r"\ensuremath{\leq}", "≥": r"\ensuremath{\geq}",
    "≠": r"\ensuremath{\neq}", "≈": r"\ensuremath{\approx}",
    "−": "-", "·": r"\ensuremath{\cdot}", "√": r"\ensuremath{\surd}",
}


_CARET_POWER = re.compile(r"\\textasciicircum\{\}(-?[0-9]+)")


def tex_escape(text: object) -> str:
    """Escape user text for LaTeX: the ten specials, control characters, non-Latin-1.

    Whitespace runs (including newlines) collapse to one space, so the result
    is safe in a table cell or a header as well as in running text.

    >>> tex_escape(r"50% of $x_1 \\input{a}")
    '50\\\\% of \\\\$x\\\\_1 \\\\textbackslash{}input\\\\{a\\\\}'
    """
    out: list[str] = []
    for ch in " ".join(str(text).split()):
        if ch in _TEX_SPECIALS:
            out.append(_TEX_SPECIALS[ch])
        elif ch in _GREEK:
            out.append(r"\ensuremath{\%s}" % _GREEK[ch])
        elif ch in _TEXT_SYMBOLS:
            out.append(_TEXT_SYMBOLS[ch])
        elif ord(ch) < 32 or ord(ch) == 127:
            continue
        elif ord(ch) > 255:
            out.append("[U+%04X]" % ord(ch))
        else:
            out.append(ch)
    # a power in running text (c^2) is set as a superscript, as it is read
    return _CARET_POWER.sub(r"\\ensuremath{^{\1}}", "".join(out))


def tex_paragraphs(text: object) -> str:
    """Escape user text keeping its blank-line paragraph breaks (as ``\\par``).

    >>> tex_paragraphs("one\\n\\ntwo & three")
    'one\\\\par two \\\\& three'
    """
    parts = [p for p in re.split(r"\n\s*\n", str(text)) if p.strip()]
    return "\\par ".join(tex_escape(p) for p in parts)


def squash(text: str) -> str:
    """Collapse whitespace runs to one space, keeping a leading or trailing one.

    >>> squash("  two\\n words ")
    ' two words '
    """
    inner = " ".join(text.split())
    if not inner:
        return " " if text else ""
    return (" " if text[0].isspace() else "") + inner + (" " if text[-1].isspace() else "")


# Enough to stop emphasis, links, HTML, tables, headings and math; "." and
# "-" matter only at the start of a line, which user text never is here.
_MD_SPECIALS = re.compile(r"([\\`*_{}\[\]#|<>$~^])")


def md_escape(text: object) -> str:
    """Escape user text for Markdown (every punctuation mark with a meaning).

    Whitespace runs (newlines too) collapse to one space, so the result is
    safe in a table cell as well as in running text.

    >>> md_escape("x_1 <b>*")
    'x\\\\_1 \\\\<b\\\\>\\\\*'
    """
    return _MD_SPECIALS.sub(r"\\\1", squash(str(text)))


# ---------------------------------------------------------------------------
# Program text that quotes expressions


_GREEK_WORD = re.compile(
    r"(?<![A-Za-z\\])(alpha|beta|gamma|delta|epsilon|zeta|eta|theta|kappa|lambda|mu|nu|xi|pi|rho|sigma|tau|phi|chi|psi|omega)(?![A-Za-z])"
)


def spoken(text: object) -> str:
    """Text from the solving code that quotes expressions in program notation, as mathematics.

    The one display rule for such text (notices, reasons of conditions, the rule
    behind an eigenvalue's form): a power ``**`` is written ``^``, the ``*``
    between factors becomes a space, and a Greek name is written as its letter.
    It is for program-made text only; user text is shown as written.

    >>> spoken("solved on the relation k = c**2/(4*m)")
    'solved on the relation k = c^2/(4 m)'
    >>> spoken("differs from the eigenvalue -lambda + 2")
    'differs from the eigenvalue -λ + 2'
    """
    text = re.sub(r"\s*\*\s*", " ", str(text).replace("**", "^"))
    return _GREEK_WORD.sub(lambda m: GREEK_LETTERS[m.group(1)], text)
