"""The sheet's notation: a sympy LaTeX printer and a plain printer.

Every renderer prints sympy objects through these two printers (by way of
``derive.render.printing.MathFormatter``), so the notation of a sheet is
decided here, once:

* ``Heaviside(t - a)`` is the unit step ``H(t - a)``, upright in LaTeX, never
  ``u``, which reads as a named input (sympy's ``theta`` reads as an angle);
* ``DiracDelta(t - a)`` is ``delta(t - a)``;
* ``atan2(b, a)`` is ``arg(a + i b)``, the argument of a complex number, and
  ``atan`` is ``arctan``: a checker's notation, not a program's function names;
* a state made by a reduction of order, ``q1'`` or ``y''``, is its base state
  printed as usual with the primes after it (``q_1'``), so it never appears
  beside ``q_1`` as ``q1'``;
* ``exp`` with a long exponent is ``exp(...)`` rather than a tiny superscript;
* an exponent or a sine's or cosine's argument m t + c with numbers m != 1
  and c != 0 is written m (t - a) with a = -c/m, so e^{2 - 2t} reads
  e^{-2 (t - 1)} and sin(2t - 2) reads sin(2 (t - 1)), the way a response
  that starts at t = a is written by hand;
* an eigenvalue with no radical form (``CRootOf``) is printed by name,
  ``lambda_k``, through a named stand-in, so a printout never evaluates a root;
* the imaginary unit is ``i`` or ``j`` (electrical engineers read ``j``).
"""

from __future__ import annotations

import functools
import re
from typing import Any, Callable

import sympy as sp
from sympy.printing.latex import LatexPrinter
from sympy.printing.str import StrPrinter

from ..rootring import atoms_of, contains, replace_atoms
from .escape import GREEK_LETTERS
from .measure import visible_width
from .terms import Terms, terms_text

__all__ = ["shifted_argument", "greek_text", "SheetLatexPrinter", "PlainPrinter", "plain_text", "interval_conditions", "condition_text"]

# ---------------------------------------------------------------------------
# Printers


def shifted_argument(arg: sp.Expr) -> sp.Expr:
    """m t + c as the unevaluated product m (t - a), a = -c/m, for numbers m != 1, c != 0
    (the argument of an exponential, a sine or a cosine, as printed).

    Any other exponent comes back as it is.

    >>> t = sp.Symbol("t")
    >>> shifted_argument(2 - 2*t)
    -2*(t - 1)
    """
    syms = arg.free_symbols
    if len(syms) != 1 or not arg.is_Add and not arg.is_Mul:
        return arg
    (x,) = syms
    expanded = sp.expand(arg)
    c, rest = expanded.as_independent(x, as_Add=True)
    m, var = rest.as_independent(x, as_Add=False) if rest.is_Mul else (sp.Integer(1), rest)
    if var != x or not (m.is_Rational and c.is_Rational) or c == 0 or m == 1 or m == 0:
        return arg
    return sp.Mul(m, x - (-c / m), evaluate=False)


@functools.lru_cache(maxsize=1024)
def _stand_in(root: sp.Expr, number: int) -> sp.Symbol:
    """The stand-in symbol of a root: its name sorts by the root's number, then its polynomial and index."""
    return sp.Symbol("\x00root%04d:%s:%d" % (number, root.poly.as_expr(), root.index))


def _replaced(expr: Any, stand: dict) -> Any:
    """``expr`` with its roots swapped for their stand-ins (entry by entry in a matrix)."""
    if isinstance(expr, sp.MatrixBase):
        return expr.applyfunc(lambda e: replace_atoms(e, stand))
    return replace_atoms(expr, stand)


class _RootStandIns:
    """Prints indexed roots through named stand-in symbols.

    sympy orders the terms and factors of an expression holding a ``CRootOf``
    by evaluating the root, refining its isolating interval every time
    (seconds on a quintic's sheet).  Each top-level print therefore swaps every
    root for a symbol named by its number and prints that symbol as the root:
    the order is then that of a polynomial in lambda_1, lambda_2, ... and
    nothing is evaluated.
    """

    _settings: dict[str, Any]
    #: stand-in symbol -> root, while a top-level print is under way (else empty)
    _standing: dict = {}

    def _print(self, expr: Any, **kwargs: Any) -> str:
        if not kwargs and isinstance(expr, (sp.Add, sp.Mul)):
            # a long display prints a sum whole, then term by term, then the sum inside a wide
            # term: each sum and product is printed once (its text does not depend on where it
            # stands; the caller brackets it).  Floats of one value but different precision
            # compare equal and print differently, so an expression holding one is not kept.
            memo = self.__dict__.setdefault("_printed", {})
            key = (expr, bool(self._standing))
            tex = memo.get(key)
            if tex is None:
                tex = self._print_new(expr)
                if not contains(expr, sp.Float):
                    memo[key] = tex
            return tex
        return self._print_new(expr, **kwargs)

    def _print_new(self, expr: Any, **kwargs: Any) -> str:
        if self._standing or not isinstance(expr, (sp.Basic, sp.MatrixBase)):
            return super()._print(expr, **kwargs)  # type: ignore[misc]
        stand = self._stand_ins(expr)
        if not stand:
            return super()._print(expr, **kwargs)  # type: ignore[misc]
        self._standing = {v: k for k, v in stand.items()}
        try:
            return super()._print(_replaced(expr, stand), **kwargs)  # type: ignore[misc]
        finally:
            self._standing = {}

    def _as_ordered_terms(self, expr: Any, order: Any = None) -> list:
        # also called directly, to break a long sum at its terms
        stand = {} if self._standing or not isinstance(expr, sp.Basic) else self._stand_ins(expr)
        if not stand:
            return super()._as_ordered_terms(expr, order=order)  # type: ignore[misc]
        back = {v: k for k, v in stand.items()}
        return [replace_atoms(term, back) for term in super()._as_ordered_terms(replace_atoms(expr, stand), order=order)]  # type: ignore[misc]

    def _stand_ins(self, expr: Any) -> dict[sp.Expr, sp.Symbol]:
        # sympy's atoms and has open every root, rebuilding its polynomial each time (seconds on a 6-state sheet)
        # kept per expression: a sheet prints the same sums and symbols many times over
        # (a mutable matrix is a Basic too, but cannot be a key)
        keyed = isinstance(expr, sp.Basic) and type(expr).__hash__ is not None
        memo = self.__dict__.setdefault("_stands", {}) if keyed else {}
        got = memo.get(expr) if keyed else None
        if got is None:
            names = self._settings["root_names"]
            items = list(expr) if isinstance(expr, sp.MatrixBase) else [expr]
            got = {r: _stand_in(r, names.get(r, 0)) for e in items for r in atoms_of(e, sp.CRootOf)}
            if keyed:
                memo[expr] = got
        return got

    def _print_Symbol(self, expr: sp.Symbol, *args: Any, **kwargs: Any) -> str:
        root = self._standing.get(expr)
        if root is not None:
            return self._print_ComplexRootOf(root)  # type: ignore[attr-defined]
        return super()._print_Symbol(expr, *args, **kwargs)  # type: ignore[misc]


#: A name of two or more Latin letters, which TeX would set as a product of letters.
_MULTI_LETTER = re.compile(r"[A-Za-z]{2,}")

def greek_text(name: str) -> str:
    """A symbol's name for plain text, a Greek name (alone or before ``_``) as its letter.

    >>> greek_text("lambda_1"), greek_text("omega"), greek_text("Kq")
    ('λ_1', 'ω', 'Kq')
    """
    primes = prime_count(name)
    base, sep, rest = name[: len(name) - primes].partition("_")
    return GREEK_LETTERS.get(base, base) + sep + rest + "'" * primes


def prime_count(name: str) -> int:
    """How many primes end a state's name (``q1''`` made by a reduction of order has 2).

    >>> prime_count("q1''"), prime_count("q1")
    (2, 0)
    """
    return len(name) - len(name.rstrip("'")) if name.rstrip("'") else 0


def _unprimed(expr: sp.Symbol) -> tuple[sp.Symbol, int]:
    """The base state of a primed name and the number of primes (the name as it is when none)."""
    primes = prime_count(expr.name)
    if not primes:
        return expr, 0
    return sp.Symbol(expr.name[:-primes], **expr.assumptions0), primes


def _arg_text(print_: Any, y: sp.Expr, x: sp.Expr, brackets: str) -> str:
    """x + i y as printed by ``print_``, real part first, a negative y as x - i |y|, for arg(...) of atan2(y, x)."""
    negative = y.could_extract_minus_sign()
    size = -y if negative else y
    unit = print_(sp.I)
    if size == 1:
        imag = unit
    else:
        text = brackets % print_(size) if isinstance(size, sp.Add) else print_(size)
        imag = f"{text} {unit}" if size.is_number else f"{unit} {text}"
    if x == 0:
        return ("-" if negative else "") + imag
    return f"{print_(x)} {'-' if negative else '+'} {imag}"



def interval_conditions(expr: sp.Piecewise) -> list[tuple[Any, Any]]:
    """Each piece's (lower bound, condition), as a checker reads a chain of upper bounds.

    The lower bound is the previous piece's ``t < a`` when this piece continues the
    chain (``t < b`` in the same variable, or the last piece), else None.
    """
    out: list[tuple[Any, Any]] = []
    last: Any = None
    for _, cond in expr.args:
        chained = isinstance(last, sp.StrictLessThan) and (
            cond is sp.true or (isinstance(cond, sp.StrictLessThan) and cond.lhs == last.lhs))
        out.append((last if chained else None, cond))
        last = cond
    return out


def condition_text(low: Any, cond: Any, show: Callable[[Any], str], *, le: str, ge: str, otherwise: str) -> str:
    """One piece's condition from ``interval_conditions``: a <= t < b, t >= a, "otherwise", or as it stands."""
    if low is not None and cond is sp.true:
        return f"{show(low.lhs)} {ge} {show(low.rhs)}"
    if low is not None:
        return f"{show(low.rhs)} {le} {show(cond.lhs)} < {show(cond.rhs)}"
    return otherwise if cond is sp.true else show(cond)


class SheetLatexPrinter(_RootStandIns, LatexPrinter):
    """sympy's LaTeX printer with the sheet's notation (see the module docstring).

    >>> t = sp.Symbol("t")
    >>> SheetLatexPrinter().doprint(sp.Heaviside(t - 2))
    '\\\\mathrm{H}\\\\left(t - 2\\\\right)'
    """

    _default_settings: dict[str, Any] = {
        **LatexPrinter._default_settings,
        "root_names": {},
        "root_letters": {},
        "exp_threshold": 10,
        # arctan, as a checker writes it, not a program's atan
        "inv_trig_style": "full",
    }

    def _print_Symbol(self, expr: sp.Symbol, style: str = "plain") -> str:
        # A multi-letter name (Kq, Rth) is one symbol, set in italic as a whole
        # rather than read as the product K q; a multi-letter subscript or
        # superscript (k_on) is a label, set upright.  Greek names and sympy's
        # modifiers (alpha, xdot) are translated first and stay as they are.
        # Function names (atan) do not pass here.
        if expr in self._standing or expr in self._settings["symbol_names"] or "{" in expr.name:
            return super()._print_Symbol(expr, style=style)
        # q1' (a reduction of order) is q_1 with a prime; text that writes a derivative
        # of it appends one more (q_1''), and a power of it is bracketed (_print_Pow)
        unprimed, primes = _unprimed(expr)
        if primes:
            return self._print_Symbol(unprimed, style=style) + "'" * primes
        base, supers, subs = self._split_super_sub(expr.name)
        if _MULTI_LETTER.fullmatch(base):
            base = r"\mathit{%s}" % base
        if style == "bold":
            base = r"\mathbf{%s}" % base
        label = [r"\mathrm{%s}" % x if _MULTI_LETTER.fullmatch(x) else x for x in supers]
        if label:
            base += "^{%s}" % " ".join(label)
        label = [r"\mathrm{%s}" % x if _MULTI_LETTER.fullmatch(x) else x for x in subs]
        if label:
            base += "_{%s}" % " ".join(label)
        return base

    def _print_Heaviside(self, expr: sp.Expr, exp: str | None = None) -> str:
        # H, upright: u(t) would read as a named input (issue 19); defined in the sheet's notation
        tex = r"\mathrm{H}\left(%s\right)" % self._print(expr.args[0])
        if exp:
            tex = r"\left(%s\right)^{%s}" % (tex, exp)
        return tex

    def _print_Pow(self, expr: sp.Expr) -> str:
        # (q_1')^2: a prime is a superscript, so a power of a primed name needs brackets
        base = expr.base
        if isinstance(base, sp.Symbol) and prime_count(base.name) and base not in self._standing and expr.exp.is_Integer:
            if expr.exp.is_negative:
                return r"\frac{1}{%s}" % self._print(sp.Pow(base, -expr.exp, evaluate=False)) if expr.exp != -1 else r"\frac{1}{%s}" % self._print(base)
            return r"\left(%s\right)^{%s}" % (self._print(base), self._print(expr.exp))
        return str(super()._print_Pow(expr))

    def _print_atan2(self, expr: sp.Expr, exp: str | None = None) -> str:
        # the angle of the point (x, y) is the argument of x + i y, as a checker writes it
        tex = r"\arg\left(%s\right)" % _arg_text(self._print, expr.args[0], expr.args[1], r"\left(%s\right)")
        return r"\left(%s\right)^{%s}" % (tex, exp) if exp else tex

    def _print_Piecewise(self, expr: sp.Expr) -> str:
        # "otherwise" after a chain of t < b_k reads as the interval t >= b_last
        rows = [r"%s & \text{for}\: %s" % (self._print(value), condition_text(
                    low, cond, self._print, le=r"\le", ge=r"\ge", otherwise=r"\text{otherwise}"))
                for (value, _), (low, cond) in zip(expr.args, interval_conditions(expr))]
        return r"\begin{cases} %s \end{cases}" % r" \\ ".join(rows)

    def _print_ExpBase(self, expr: sp.Expr, exp: str | None = None) -> str:
        arg = self._print(shifted_argument(expr.args[0]))
        if visible_width(arg) > self._settings["exp_threshold"]:
            tex = r"\exp\left(%s\right)" % arg
        else:
            tex = r"e^{%s}" % arg
        return self._do_exponent(tex, exp)

    def _print_sin(self, expr: sp.Expr, exp: str | None = None) -> str:
        return self._delayed_trig("sin", expr, exp)

    def _print_cos(self, expr: sp.Expr, exp: str | None = None) -> str:
        return self._delayed_trig("cos", expr, exp)

    def _delayed_trig(self, name: str, expr: sp.Expr, exp: str | None) -> str:
        arg = self._print(shifted_argument(expr.args[0]))
        power = "^{%s}" % exp if exp else ""
        return r"\%s%s{\left(%s \right)}" % (name, power, arg)

    def _print_Terms(self, expr: Terms) -> str:
        return terms_text(expr.args, self._print, r"\left(%s\right)")

    def _print_ComplexRootOf(self, root: sp.Expr) -> str:
        number = self._settings["root_names"].get(root)
        if number is not None:
            return r"\%s_{%d}" % (self._settings["root_letters"].get(root, "lambda"), number)
        # Not named by the sheet (a caller printing on its own): say it in full.
        return r"\left[\text{root } %d \text{ of } %s = 0\right]" % (
            root.index,
            self._print(root.expr),
        )


class PlainPrinter(_RootStandIns, StrPrinter):
    """sympy's str printer with the sheet's notation, for text and JSON-free output.

    >>> t = sp.Symbol("t")
    >>> PlainPrinter().doprint(sp.Heaviside(t - 2) + sp.I)
    'H(t - 2) + i'
    """

    _default_settings: dict[str, Any] = {
        **StrPrinter._default_settings,
        "root_names": {},
        "root_letters": {},
        "imaginary_unit": "i",
        # Greek names as letters (λ); the ASCII names where a caller's text is ASCII
        "greek_letters": True,
    }

    def doprint(self, expr: Any) -> str:
        # Mathematics, not program text: a power is written ^ and a product by
        # juxtaposition (a space), the way a formula is typed by hand.  The str
        # printer writes ** only for a power and * only between the factors of
        # a product (names never hold either), so the rewrite is exact.
        return str(super().doprint(expr)).replace("**", "^").replace("*", " ")

    def _print_Symbol(self, expr: sp.Symbol) -> str:
        if expr in self._standing:
            return super()._print_Symbol(expr)
        if self._settings["greek_letters"]:
            return greek_text(expr.name)
        unprimed, primes = _unprimed(expr)
        return unprimed.name + "'" * primes

    def _print_Dummy(self, expr: sp.Dummy) -> str:
        # the str printer marks a dummy with a leading underscore, which is program notation
        return self._print_Symbol(expr)

    def _print_Heaviside(self, expr: sp.Expr) -> str:
        return "H(%s)" % self._print(expr.args[0])

    def _print_atan2(self, expr: sp.Expr) -> str:
        return "arg(%s)" % _arg_text(self._print, expr.args[0], expr.args[1], "(%s)")

    def _print_atan(self, expr: sp.Expr) -> str:
        return "arctan(%s)" % self._print(expr.args[0])

    def _print_asin(self, expr: sp.Expr) -> str:
        return "arcsin(%s)" % self._print(expr.args[0])

    def _print_acos(self, expr: sp.Expr) -> str:
        return "arccos(%s)" % self._print(expr.args[0])

    def _relation(self, op: str) -> str:
        # ≥ ≤ ≠ as written by hand where the text is Unicode (Greek letters as letters), else ASCII
        return {">=": "≥", "<=": "≤", "!=": "≠"}.get(op, op) if self._settings["greek_letters"] else op

    def _print_Relational(self, expr: sp.Expr) -> str:
        return "%s %s %s" % (self._print(expr.lhs), self._relation(expr.rel_op), self._print(expr.rhs))

    def _print_Piecewise(self, expr: sp.Expr) -> str:
        # one value per interval, as on a hand-written sheet, not sympy's constructor
        rows = ["%s for %s" % (self._print(value), condition_text(
                    low, cond, self._print, le=self._relation("<="), ge=self._relation(">="), otherwise="otherwise"))
                for (value, _), (low, cond) in zip(expr.args, interval_conditions(expr))]
        return "{ %s }" % "; ".join(rows)

    def _print_Pow(self, expr: sp.Expr, rational: bool = False) -> str:
        # (q1')^2, not q1'^2: the prime belongs to the name
        base = expr.base
        if isinstance(base, sp.Symbol) and prime_count(base.name) and base not in self._standing:
            return self._print(sp.Pow(sp.Symbol("(%s)" % self._print(base)), expr.exp, evaluate=False))
        return str(super()._print_Pow(expr, rational=rational))

    def _print_DiracDelta(self, expr: sp.Expr) -> str:
        if len(expr.args) == 1 or expr.args[1] == 0:
            return "delta(%s)" % self._print(expr.args[0])
        return "delta^(%s)(%s)" % (self._print(expr.args[1]), self._print(expr.args[0]))

    def _print_ImaginaryUnit(self, expr: sp.Expr) -> str:
        return str(self._settings["imaginary_unit"])

    def _print_ComplexRootOf(self, root: sp.Expr) -> str:
        number = self._settings["root_names"].get(root)
        if number is not None:
            letter = self._settings["root_letters"].get(root, "lambda")
            return "%s_%d" % (GREEK_LETTERS[letter] if self._settings["greek_letters"] else letter, number)
        return "[root %d of %s = 0]" % (root.index, self._print(root.expr))

    def _print_Exp1(self, expr: sp.Expr) -> str:
        return "e"

    def _print_Terms(self, expr: Terms) -> str:
        return terms_text(expr.args, self._print, "(%s)")

    def _print_Pi(self, expr: sp.Expr) -> str:
        return "π" if self._settings["greek_letters"] else "pi"

    def _print_ExpBase(self, expr: sp.Expr) -> str:
        return "exp(%s)" % self._print(shifted_argument(expr.args[0]))

    def _print_sin(self, expr: sp.Expr) -> str:
        return "sin(%s)" % self._print(shifted_argument(expr.args[0]))

    def _print_cos(self, expr: sp.Expr) -> str:
        return "cos(%s)" % self._print(shifted_argument(expr.args[0]))

    def _print_Equality(self, expr: sp.Expr) -> str:
        return "%s = %s" % (self._print(expr.lhs), self._print(expr.rhs))


# ---------------------------------------------------------------------------
# Width estimate


def plain_text(obj: Any) -> str:
    """A sympy object, matrix or tuple as plain one-line text for sentences.

    >>> plain_text(sp.Matrix([1, sp.Symbol("t")]))
    '(1, t)'

    Greek names stay spelled out (``lambda^2``): callers put this into ASCII text.
    """
    printer = PlainPrinter({"greek_letters": False})
    if isinstance(obj, sp.MatrixBase):
        if obj.cols == 1:
            return "(" + ", ".join(printer.doprint(e) for e in obj) + ")"
        return "[" + ", ".join(
            "[" + ", ".join(printer.doprint(obj[i, j]) for j in range(obj.cols)) + "]" for i in range(obj.rows)
        ) + "]"
    if isinstance(obj, (tuple, list)):
        return "(" + ", ".join(plain_text(o) for o in obj) + ")"
    if isinstance(obj, sp.Basic):
        return printer.doprint(obj)
    return str(obj)
