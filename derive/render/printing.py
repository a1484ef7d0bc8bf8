"""Mathematics as engineers read it: the formatter every renderer prints through.

The notation itself (the unit step, atan2, primed states, indexed roots, the
imaginary unit) is decided by the printers of ``derive.render.printers``;
this module names the indexed roots of one solution and decides how long
expressions and big matrices are broken so that a display never runs past
the margin: sums are split at their top-level terms and a matrix too wide
for one line is shown column by column or element by element.  Widths are
estimated from the LaTeX source (``visible_width``); the estimate errs on
the wide side because an overfull line is worse than an early break.
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field
from typing import Any, Iterable, Sequence

import sympy as sp

from .decimals import format_decimal
from .escape import GREEK_LETTERS, tex_escape, tex_paragraphs
from ..realroots import pair_numbering
from ..rootring import atoms_of, contains
from .measure import visible_width
from .printers import PlainPrinter, SheetLatexPrinter, condition_text, greek_text, interval_conditions, plain_text, shifted_argument
from .terms import Terms, signed

__all__ = [
    "plain_text",
    "MathStyle",
    "RootName",
    "collect_roots",
    "SheetLatexPrinter",
    "PlainPrinter",
    "MathFormatter",
    "visible_width",
    "root_legend_rows",
    "format_decimal",
    "tex_escape",
    "tex_paragraphs",
    "domain_tex",
    "greek_text",
    "GREEK_LETTERS",
    "Terms",
    "signed",
    "ALIGN_LINES",
]

#: the most lines one ``align*`` holds; a longer display is set as several, cut between rows
ALIGN_LINES = 40


# ---------------------------------------------------------------------------
# Settings and root names


@dataclass(frozen=True)
class MathStyle:
    """How mathematics is printed and broken.  Widths are in glyphs (~5 pt each).

    ``imaginary_unit`` is ``"i"`` or ``"j"``; ``exp_threshold`` is the exponent
    width above which ``\\exp(...)`` replaces ``e^{...}``; ``line_width`` is
    the width of one display line; ``terms_per_line`` caps the terms of a
    broken sum on one line; a matrix is shown whole only with at most
    ``max_matrix_cols`` columns, entries no wider than ``matrix_entry_width``
    and rows no wider than ``line_width``.
    """

    imaginary_unit: str = "i"
    exp_threshold: int = 10
    line_width: int = 64
    terms_per_line: int = 4
    max_matrix_cols: int = 4
    matrix_entry_width: int = 22
    digits: int = 5
    symbol_names: tuple[tuple[sp.Symbol, str], ...] = ()

    def __post_init__(self) -> None:
        if self.imaginary_unit not in ("i", "j"):
            from ..errors import InputError

            raise InputError(
                f"imaginary_unit is {self.imaginary_unit!r}; expected 'i' or 'j'",
                key="imaginary_unit",
            )


@dataclass(frozen=True)
class RootName:
    """An indexed root: the ``CRootOf`` object, its number and its decimal.

    An eigenvalue is ``lambda_<number>``.  The real and imaginary parts of a
    complex pair of indexed eigenvalues (``derive.realroots``) are
    ``sigma_<number>`` and ``omega_<number>`` (``letter``), numbered by pair,
    with ``of`` the eigenvalue sigma + i omega.
    """

    root: sp.Expr
    number: int  # lambda_<number>
    decimal: str
    letter: str = "lambda"
    of: sp.Expr | None = None

    def polynomial(self, lam: sp.Symbol) -> sp.Expr:
        """The root's defining polynomial written in ``lam``."""
        return self.root.poly.as_expr(lam)


def _walk(obj: Any) -> Iterable[sp.Basic]:
    """Every sympy object inside a nest of dataclasses, tuples and matrices."""
    if isinstance(obj, sp.MatrixBase):
        yield from obj
    elif isinstance(obj, sp.Basic):
        yield obj
    elif isinstance(obj, (tuple, list)):
        for item in obj:
            yield from _walk(item)
    elif hasattr(obj, "__dataclass_fields__"):
        for name in obj.__dataclass_fields__:
            yield from _walk(getattr(obj, name))


def collect_roots(
    eigenvalues: Sequence[sp.Expr], *others: Any, digits: int = 5
) -> tuple[RootName, ...]:
    """Name every ``CRootOf`` found: by position in ``eigenvalues``, else after them.

    >>> x = sp.Symbol("x"); r = sp.CRootOf(x**3 - 3*x + 1, 0)
    >>> collect_roots((sp.Integer(2), r))[0].number
    2
    """
    names: dict[sp.Expr, int] = {}
    for k, ev in enumerate(eigenvalues, start=1):
        if isinstance(ev, sp.CRootOf) and ev not in names:
            names[ev] = k
    # sigma_k, omega_k of the k-th complex pair (derive.realroots), the others after the eigenvalues
    # sympy's atoms would open every root, rebuilding its polynomial each time (seconds on a 6-state sheet)
    seen = [r for obj in (eigenvalues, *others) for node in _walk(obj) for r in atoms_of(node, sp.CRootOf)]
    parts = pair_numbering(names, seen)
    found: list[sp.Expr] = []
    for r in seen:
        if r not in parts and r not in names and r not in found:
            found.append(r)
    # Roots that are not eigenvalues are numbered after them in a stable order.
    found.sort(key=lambda r: (sp.default_sort_key(r.poly.as_expr()), r.index))
    nxt = max([len(eigenvalues), *names.values()], default=0)
    for r in found:
        nxt += 1
        names[r] = nxt
    named = tuple(
        RootName(root=r, number=k, decimal=format_decimal(r, digits=digits))
        for r, k in sorted(names.items(), key=lambda item: item[1])
    )
    return named + tuple(
        RootName(root=r, number=k, decimal=format_decimal(r, digits=digits), letter=letter, of=upper)
        for r, (k, letter, upper) in parts.items()
    )



# ---------------------------------------------------------------------------
# The formatter templates and renderers call


def _as_expr(obj: Any) -> Any:
    if isinstance(obj, (sp.Basic, sp.MatrixBase)):
        return obj
    if isinstance(obj, bool):
        return obj
    if isinstance(obj, int):
        return sp.Integer(obj)
    if isinstance(obj, str):
        # Never parse user text: a string here is already LaTeX from the caller.
        return obj
    return obj


@dataclass(frozen=True)
class MathFormatter:
    """Prints expressions and matrices for one rendering of one solution.

    It is built once per render with the roots of that solution, so the same
    ``CRootOf`` has the same name everywhere in the sheet.

    >>> fmt = MathFormatter.for_roots(())
    >>> fmt.m(sp.Rational(1, 2))
    '\\\\frac{1}{2}'
    """

    style: MathStyle
    roots: tuple[RootName, ...]
    latex_printer: SheetLatexPrinter
    plain_printer: PlainPrinter
    #: LaTeX already printed, by expression: a sheet prints the same entries again (a long sum
    #: whole, then broken at its terms; the same vector in the derivation and the appendix)
    printed: dict[sp.Basic, str] = field(default_factory=dict, compare=False, repr=False)

    @classmethod
    def for_roots(
        cls, roots: Sequence[RootName], *, style: MathStyle | None = None
    ) -> "MathFormatter":
        """A formatter that names ``roots``; ``style`` defaults to ``MathStyle()``."""
        style = style or MathStyle()
        names = {r.root: r.number for r in roots}
        letters = {r.root: r.letter for r in roots if r.letter != "lambda"}
        symbol_names = dict(style.symbol_names)
        latex_printer = SheetLatexPrinter(
            {
                "imaginary_unit": style.imaginary_unit,
                "mat_str": "bmatrix",
                "mat_delim": "",
                "root_names": names,
                "root_letters": letters,
                "exp_threshold": style.exp_threshold,
                "symbol_names": symbol_names,
            }
        )
        plain_printer = PlainPrinter({"root_names": names, "root_letters": letters, "imaginary_unit": style.imaginary_unit})
        return cls(style=style, roots=tuple(roots), latex_printer=latex_printer, plain_printer=plain_printer)

    # -- single objects ---------------------------------------------------

    def m(self, obj: Any) -> str:
        """LaTeX of an expression or matrix (inline)."""
        obj = _as_expr(obj)
        if isinstance(obj, str):
            return obj
        if not isinstance(obj, sp.Basic):
            return self.latex_printer.doprint(obj)
        tex = self.printed.get(obj)
        if tex is None:
            tex = self.latex_printer.doprint(obj)
            # Floats of one value but different precision compare equal and print differently
            if not contains(obj, sp.Float):
                self.printed[obj] = tex
        return tex

    def plain(self, obj: Any) -> str:
        """One-line plain text of an expression (matrices as nested lists)."""
        obj = _as_expr(obj)
        if isinstance(obj, str):
            return obj
        if isinstance(obj, sp.MatrixBase):
            return "[" + "; ".join(
                ", ".join(self.plain_printer.doprint(obj[i, j]) for j in range(obj.cols))
                for i in range(obj.rows)
            ) + "]"
        return self.plain_printer.doprint(obj)

    def decimal(self, obj: Any, *, latex: bool = True) -> str:
        """Decimal of a number in the style's digits ("" when not numeric)."""
        return format_decimal(obj, digits=self.style.digits, unit=self.style.imaginary_unit, latex=latex)

    def root_value(self, obj: Any) -> str:
        """An eigenvalue as LaTeX; an indexed root with its decimal (``\\lambda_3 \\approx -1.5``)."""
        tex = self.m(obj)
        if isinstance(obj, sp.Basic) and obj.has(sp.CRootOf):
            dec = self.decimal(obj)
            if dec:
                tex += r" \approx " + dec
        return tex

    def root_value_plain(self, obj: Any) -> str:
        """Plain text of an eigenvalue; an indexed root with its decimal."""
        text = self.plain(obj)
        if isinstance(obj, sp.Basic) and obj.has(sp.CRootOf):
            dec = self.decimal(obj, latex=False)
            if dec:
                text += " ~ " + dec
        return text

    # -- breaking long sums ----------------------------------------------

    def _signed_terms(self, expr: sp.Expr, *, budget: int | None = None) -> list[tuple[str, str]]:
        """Top-level terms of a sum as (sign, LaTeX), in the printer's order.

        With a ``budget``, a term wider than it that is a product holding a
        sum, c (a + b + ...) e^{...}, is opened into pieces of its own: the
        bracket's terms become separate pieces, the first carrying the
        coefficient and an opening bracket, the last the closing bracket and
        the remaining factors, so the packer can break inside the term.
        """
        p = self.latex_printer
        terms = list(expr.args) if isinstance(expr, Terms) else p._as_ordered_terms(expr, order=None)
        out: list[tuple[str, str]] = []
        for term in terms:
            negative, term = signed(term)
            sign = "-" if negative else "+"
            tex = p._print(term)
            if p._needs_add_brackets(term):
                tex = r"\left(%s\right)" % tex
            if budget is not None and visible_width(tex) > budget:
                opened = self._open_term(term, budget)
                if opened:
                    out.append((sign, opened[0][1]))
                    out += opened[1:]
                    continue
            out.append((sign, tex))
        return out

    def _open_term(self, term: sp.Expr, budget: int) -> list[tuple[str, str]]:
        r"""A wide product c (a + b + ...) F as pieces ``c \biggl(a``, ``+ b``, ..., ``+ z \biggr) F``; [] if it has no sum."""
        if not isinstance(term, sp.Mul):
            return []
        factors = sp.Mul.make_args(term)
        if any(f.is_Pow and f.exp.is_negative and not f.is_number and not f.base.is_Symbol for f in factors):
            return []  # a fraction with a denominator of several terms stays whole; a named one (1/Gamma) opens
        adds = [f for f in factors if isinstance(f, sp.Add)]
        if not adds:
            return []
        big = max(adds, key=lambda f: visible_width(self.m(f)))
        rest = [f for f in factors if f is not big]
        den = sp.Integer(1)
        # the coefficient before the bracket, the functions of time (e^{...}, sin, a step) after it
        timed = [f for f in rest if f.has(sp.exp, sp.sin, sp.cos, sp.Heaviside)]
        coeff = sp.Mul(*[f for f in rest if f not in timed]) / den
        after = sp.Mul(*timed)
        before = "" if coeff == 1 else self.m(coeff)
        after_tex = "" if after == 1 else " " + self.m(after)
        inner = self._signed_terms(big, budget=budget)
        if len(inner) < 2:
            return []
        first_sign, first_tex = inner[0]
        pieces = [("+", f"{before} \\biggl({'-' if first_sign == '-' else ''}{first_tex}".strip())]
        pieces += inner[1:]
        last_sign, last_tex = pieces[-1]
        pieces[-1] = (last_sign, f"{last_tex} \\biggr){after_tex}")
        return pieces

    def _pack(self, pieces: list[tuple[str, str]], first_width: int) -> list[str]:
        """Greedy lines of signed pieces within the line width and term cap."""
        lines: list[str] = []
        current = ""
        count = width = 0
        budget = max(self.style.line_width - first_width, 20)
        for idx, (sign, tex) in enumerate(pieces):
            if idx == 0:
                chunk = tex if sign == "+" else f"-{tex}"
            else:
                chunk = f"{sign} {tex}"
            # a space has no width, so the line's width is the sum of its chunks' (measuring the
            # growing line again at every piece made long sums quadratic)
            chunk_width = visible_width(chunk)
            if current and (width + chunk_width > budget or count >= self.style.terms_per_line):
                lines.append(current)
                current, count, width = "", 0, 0
                # continuation lines start at the alignment point after the left
                # side, indented by a quad
                budget = max(self.style.line_width - first_width - 4, 20)
            current = f"{current} {chunk}" if current else chunk
            width += chunk_width
            count += 1
        if current:
            lines.append(current)
        return lines

    def split(self, obj: Any, *, lead: int = 0) -> list[str]:
        """An expression as one or more LaTeX lines; continuation lines start with a sign.

        ``lead`` is the width already used on the first line (the left side).
        A sum is broken at its top-level + and -; a term too wide for a line
        is opened at the sum inside it (``_open_term``); a product c (long sum)
        is broken inside big brackets.
        """
        obj = _as_expr(obj)
        if isinstance(obj, str):
            return [obj]
        whole = self.m(obj)
        if isinstance(obj, sp.MatrixBase) or visible_width(whole) + lead <= self.style.line_width:
            return [whole]
        budget = max(self.style.line_width - lead - 4, 20)
        if isinstance(obj, (sp.Add, Terms)):
            return self._pack(self._signed_terms(obj, budget=budget), lead)
        if isinstance(obj, sp.Mul):
            negative = obj.could_extract_minus_sign()
            pieces = self._open_term(-obj if negative else obj, budget)
            if len(pieces) > 1:
                if negative:
                    pieces[0] = ("-", pieces[0][1])
                return self._pack(pieces, lead)
        return [whole]

    def piecewise_rows(self, lhs: str, expr: sp.Piecewise, *, relation: str = "=") -> list[str]:
        r"""A piecewise value one interval per row, each with its condition; long values broken.

        The condition leads its interval (``for 1 \le t < 3:``) when the value
        needs the whole line, and follows it otherwise.
        """
        rows: list[str] = []
        for k, ((value, _), (low, cond)) in enumerate(zip(expr.args, interval_conditions(expr))):
            cond_tex = condition_text(low, cond, self.m, le=r"\le", ge=r"\ge", otherwise=r"\text{otherwise}")
            head = f"{lhs} &{relation} " if k == 0 else f"&{relation} "
            lines = self.split(value, lead=visible_width(lhs) + 12)
            tail = r"\qquad \text{for } " + cond_tex
            if len(lines) == 1 and visible_width(lines[0]) + visible_width(tail) + visible_width(lhs) + 4 <= self.style.line_width:
                rows.append(head + lines[0] + tail)
                continue
            rows.append(head + r"\text{for } " + cond_tex + ":")
            rows += [rf"&\quad {line}" for line in lines]
        return rows

    def equation_rows(self, rows: Sequence[tuple[str, Any]], *, relation: str = "=") -> str:
        """Rows ``lhs = rhs`` as the body of an ``align*`` (rhs split when long)."""
        return " \\\\\n".join(line for group in self._row_groups(rows, relation=relation) for line in group)

    def _row_groups(self, rows: Sequence[tuple[str, Any]], *, relation: str) -> list[list[str]]:
        """The lines of each row; a row "≈ decimals" (an empty left side) joins the row before it."""
        groups: list[list[str]] = []
        for lhs, rhs in rows:
            lhs_tex = lhs if isinstance(lhs, str) else self.m(lhs)
            rel = relation
            if isinstance(rhs, tuple) and len(rhs) == 2 and isinstance(rhs[0], str) and rhs[0] in ("=", r"\approx", r"\neq", r"\ne"):
                rel, rhs = rhs
            out: list[str] = []
            if isinstance(rhs, sp.Piecewise) and visible_width(self.m(rhs)) + visible_width(lhs_tex) + 2 > self.style.line_width:
                out = self.piecewise_rows(lhs_tex, rhs, relation=rel)
            else:
                lines = self.split(rhs, lead=visible_width(lhs_tex) + 2)
                out = [f"{lhs_tex} &{rel} {lines[0]}"] + [rf"&\quad {line}" for line in lines[1:]]
            if groups and not lhs_tex.strip():
                groups[-1] += out
            else:
                groups.append(out)
        return groups

    def display(self, rows: Sequence[tuple[str, Any]], *, relation: str = "=") -> str:
        """A displayed group of equations (``align*``), long sides broken.

        A long group is set as several ``align*`` of at most ``ALIGN_LINES`` lines, cut between
        rows: TeX builds a whole display in memory before breaking it across pages, and one
        display of thousands of lines (an appendix of exact coefficients) exhausts its memory.
        """
        if not rows:
            return ""
        chunks: list[list[str]] = [[]]
        for group in self._row_groups(rows, relation=relation):
            if chunks[-1] and len(chunks[-1]) + len(group) > ALIGN_LINES:
                chunks.append([])
            chunks[-1] += group
        return "\n".join("\\begin{align*}\n" + " \\\\\n".join(c) + "\n\\end{align*}" for c in chunks)

    # -- matrices -----------------------------------------------------------

    def matrix_fits(self, M: sp.MatrixBase, *, lead: int = 0) -> bool:
        """True when ``M`` can be printed as one bracketed matrix on one line."""
        if M.cols > self.style.max_matrix_cols and M.cols > 1:
            return False
        widths = [[visible_width(self.m(M[i, j])) for j in range(M.cols)] for i in range(M.rows)]
        if any(w > self.style.matrix_entry_width for row in widths for w in row):
            return False
        col_widths = [max((widths[i][j] for i in range(M.rows)), default=0) for j in range(M.cols)]
        return lead + sum(col_widths) + 3 * M.cols <= self.style.line_width

    def element_name(self, name: str, i: int, j: int | None) -> str:
        """``name_{ij}`` for an entry, bracketing a name that has a superscript."""
        base = rf"\left({name}\right)" if ("^" in name or "_" in name) else name
        if j is None:
            return f"{base}_{{{i}}}"
        sep = "," if max(i, j) > 9 else ""
        return f"{base}_{{{i}{sep}{j}}}"

    def vector_tex(self, v: sp.MatrixBase) -> str:
        """A column of four or more entries as a transposed row, ``(a, b, c, d)^{T}`` (a page of columns reads
        badly); a shorter one, or a matrix, as it is printed."""
        if v.cols == 1 and v.rows >= 4:
            return r"\bigl(%s\bigr)^{T}" % ", ".join(self.m(e) for e in v)
        return self.m(v)

    def matrix_rows(self, name: str, M: sp.MatrixBase) -> str:
        """``align*`` rows showing ``M`` whole, by columns or element by element."""
        lead = visible_width(name) + 2
        if M.cols == 1 and M.rows >= 4 and visible_width(self.vector_tex(M)) + lead <= self.style.line_width:
            return f"{name} &= {self.vector_tex(M)}"
        if self.matrix_fits(M, lead=lead):
            return f"{name} &= {self.m(M)}"
        rows: list[tuple[str, Any]] = []
        col_lead = visible_width(name) + 8
        if M.cols > 1 and M.rows >= 4 and all(visible_width(self.vector_tex(M[:, j])) + col_lead <= self.style.line_width for j in range(M.cols)):
            # columns of four or more entries, each as a transposed row, one per line
            return " \\\\\n".join(rf"&\operatorname{{col}}_{{{j + 1}}} {name} = {self.vector_tex(M[:, j])}" for j in range(M.cols))
        if M.cols > 1 and all(self.matrix_fits(M[:, j], lead=col_lead) for j in range(M.cols)):
            # Columns side by side, as many per row as the line holds.
            lines: list[str] = []
            current: list[str] = []
            used = 0
            for j in range(M.cols):
                piece = rf"\operatorname{{col}}_{{{j + 1}}} {name} = {self.m(M[:, j])}"
                width = visible_width(piece) + 3
                if current and used + width > self.style.line_width:
                    lines.append(r",\quad ".join(current))
                    current, used = [], 0
                current.append(piece)
                used += width
            if current:
                lines.append(r",\quad ".join(current))
            return " \\\\\n".join("&" + line for line in lines)
        zeros = 0
        for i in range(M.rows):
            for j in range(M.cols):
                if M[i, j] == 0:
                    zeros += 1
                    continue
                rows.append((self.element_name(name, i + 1, j + 1 if M.cols > 1 else None), M[i, j]))
        if not rows:
            return f"{name} &= 0"
        text = self.equation_rows(rows)
        if zeros:
            text += r" \\" + "\n" + r"&\text{all other entries of } " + name + r" \text{ are } 0"
        return text

    def matrix_display(self, name: str, M: sp.MatrixBase) -> str:
        """A displayed matrix, broken into columns or elements when too wide."""
        return "\\begin{align*}\n" + self.matrix_rows(name, M) + "\n\\end{align*}"

    def plain_matrix(self, M: sp.MatrixBase, *, indent: int = 0) -> list[str]:
        """Rows of a matrix as aligned plain-text lines ``[ a  b ]``."""
        cells = [[self.plain(M[i, j]) for j in range(M.cols)] for i in range(M.rows)]
        widths = [max((len(cells[i][j]) for i in range(M.rows)), default=0) for j in range(M.cols)]
        pad = " " * indent
        return [
            pad + "[ " + "  ".join(cells[i][j].rjust(widths[j]) for j in range(M.cols)) + " ]"
            for i in range(M.rows)
        ]


_DOMAINS = {"QQ": r"\mathbb{Q}", "ZZ": r"\mathbb{Z}", "RR": r"\mathbb{R}", "CC": r"\mathbb{C}", "QQ_I": r"\mathbb{Q}(i)", "ZZ_I": r"\mathbb{Z}[i]"}


def domain_tex(domain: str) -> str:
    """A sympy domain name as mathematics (``QQ(k, m)`` -> Q(k, m)); unknown ones as text.

    >>> domain_tex("QQ")
    '\\\\mathbb{Q}'
    """
    domain = str(domain)
    for key in ("QQ_I", "ZZ_I", "QQ", "ZZ", "RR", "CC"):
        if domain == key:
            return _DOMAINS[key]
        if domain.startswith(key + "(") or domain.startswith(key + "[") or domain.startswith(key + "<"):
            rest = domain[len(key):]
            names = re.fullmatch(r"([(\[])([A-Za-z_][\w]*(?:,\s*[A-Za-z_]\w*)*)([)\]])", rest)
            if names:
                # the field's generators are the parameters: printed as they are in the formulas
                printer = SheetLatexPrinter()
                inner = ", ".join(printer.doprint(sp.Symbol(n.strip())) for n in names.group(2).split(","))
                return r"%s%s%s%s" % (_DOMAINS[key], names.group(1), inner, names.group(3))
            return r"%s\text{%s}" % (_DOMAINS[key], tex_escape(rest))
    return r"\text{%s}" % tex_escape(domain)


def root_legend_rows(roots: Sequence[RootName]) -> list[tuple[sp.Expr, tuple[RootName, ...]]]:
    """Indexed eigenvalues grouped by their polynomial, in order of first appearance
    (the parts sigma_k, omega_k have a legend of their own, ``part_legend``)."""
    groups: dict[Any, list[RootName]] = {}
    polys: dict[Any, sp.Expr] = {}
    for r in roots:
        if r.letter != "lambda":
            continue
        key = r.root.poly
        groups.setdefault(key, []).append(r)
        polys[key] = r.root
    return [(polys[k], tuple(v)) for k, v in groups.items()]

