"""Safe expression parsing: text -> sympy, without eval.

Strings become sympy objects here and nowhere else.  The route is

1. a small tokenizer of our own (:mod:`derive.tokens`), which refuses the
   readings that go two ways (``u(t)`` with a parameter ``u``, ``x/2T``,
   ``e^-2t``: see :func:`derive.tokens.call_problem` and
   :func:`~derive.tokens.product_problem`), rewrites ``^`` as ``**`` and
   inserts ``*`` where multiplication is implied and unambiguous (``2t``,
   ``3 sin(t)``, ``2(t+1)``, ``(a+b)(a-b)``, ``2 pi``, ``k (t+1)``);
2. ``ast.parse(mode="eval")``, which only builds a syntax tree and runs
   nothing;
3. a tree walk that accepts a short whitelist of node types (numbers, declared
   names, ``+ - * / **``, unary signs, calls of the functions in
   :data:`FUNCTIONS`, whose arguments are checked by
   :mod:`derive.functions`) and builds sympy objects directly from
   already-built sympy objects.  No string ever reaches sympy.

Size limits are checked before the expensive thing they guard: the length
before tokenizing, the nesting before ``ast.parse``, an exponent before the
power is built.  Every exception that leaves :func:`parse_expression` is a
:class:`~derive.errors.DeriveError`.
"""

from __future__ import annotations

import ast
import keyword
import math
import re
from collections.abc import Collection, Mapping, Sequence
from dataclasses import dataclass
from fractions import Fraction
from types import MappingProxyType

import sympy as sp

from .errors import DeriveError, ExpressionError, LimitError
from .functions import CONSTANTS, FUNCTIONS, RESERVED_NAMES, FunctionSpec
from .names import name_problem, nearest, split_names, suggest_name
from .tokens import TOKEN, Token, call_problem, character_problem, drop_input_calls, product_problem, tokenize

__all__ = [
    "Limits",
    "DEFAULT_LIMITS",
    "FunctionSpec",
    "FUNCTIONS",
    "CONSTANTS",
    "RESERVED_NAMES",
    "parse_expression",
    "expression_names",
    "name_problem",
    "suggest_name",
    "nearest",
    "split_names",
]


@dataclass(frozen=True)
class Limits:
    """Size limits for untrusted input.

    ``max_number_digits`` bounds every exact number the parser builds (a
    literal or the value of numeric arithmetic such as ``2^200``);
    ``max_file_bytes`` bounds a case file before it is read as TOML.
    """

    max_length: int = 2000  # characters in one expression
    max_depth: int = 40  # AST nesting depth
    max_int_digits: int = 40  # digits in one integer literal
    max_exponent: int = 200  # |integer exponent| allowed in a power
    max_dimension: int = 12  # matrix size n (used by casefile)
    max_number_digits: int = 1000  # digits of any exact number built while parsing
    max_file_bytes: int = 1_000_000  # size of one case file


DEFAULT_LIMITS = Limits()


# ---------------------------------------------------------------------------
# Tokenizer
# ---------------------------------------------------------------------------

_NUMBER_PARTS = re.compile(r"(?P<mantissa>\d*\.?\d*)(?:[eE](?P<exp>[+-]?\d+))?\Z")


def _tokens(text: str, where: _Where) -> tuple[Token, ...]:
    problem = character_problem(text)
    if problem is not None:
        raise where.error(ExpressionError, problem.message, column=problem.column, hint=problem.hint)
    return tokenize(text)


def _is_value_name(tok: Token, symbols: Mapping[str, sp.Symbol]) -> bool:
    """A name that denotes a value (declared symbol or constant), not a call."""
    if tok.kind != "name" or keyword.iskeyword(tok.text) or tok.text in FUNCTIONS:
        return False
    return tok.text in symbols or tok.text in CONSTANTS


def _implied_product(left: Token, right: Token, symbols: Mapping[str, sp.Symbol]) -> bool:
    """Whether ``left right`` means ``left * right``.

    Only cases that cannot be read another way: a number, a closing
    parenthesis or a declared value name, followed by a name or ``(``
    (``k(t + 1)`` never gets here: :func:`derive.tokens.call_problem`
    refuses it first, since it is as often meant as a function of time).  A
    number on the right (``t 2``, ``(a)2``) is left alone: it is more often a
    typo than a product.  Keywords are never touched so that ``lambda`` and
    friends reach the tree walk and are refused by name.
    """
    left_ok = left.kind == "number" or left.text == ")" or _is_value_name(left, symbols)
    if not left_ok:
        return False
    if right.text == "(":
        return True
    return right.kind == "name" and not keyword.iskeyword(right.text)


def _rewrite(tokens: Sequence[Token], symbols: Mapping[str, sp.Symbol], where: _Where) -> tuple[str, tuple[int, ...]]:
    """Join tokens into Python source; also map each source column to the original."""
    pieces: list[str] = []
    columns: list[int] = []
    prev: Token | None = None
    for i, tok in enumerate(tokens):
        if prev is not None:
            if _implied_product(prev, tok, symbols):
                problem = product_problem(tokens, i, where.text)
                if problem is not None:
                    raise where.error(ExpressionError, problem.message, column=problem.column, hint=problem.hint)
                pieces.append("*")
                columns.append(tok.column)
            pieces.append(" ")
            columns.append(tok.column)
        piece = "**" if tok.text == "^" else tok.text
        pieces.append(piece)
        columns.extend(tok.column + min(i, len(tok.text) - 1) for i in range(len(piece)))
        prev = tok
    return "".join(pieces), tuple(columns)


# ---------------------------------------------------------------------------
# Error location
# ---------------------------------------------------------------------------


@dataclass(frozen=True)
class _Where:
    text: str
    key: str | None
    file: str | None
    #: the names that are states, and the independent variable, when the caller knows them
    states: frozenset[str] = frozenset()
    time: sp.Symbol | None = None
    #: declared input functions: ``u(t)`` is read as ``u``
    inputs: frozenset[str] = frozenset()

    def error(
        self,
        cls: type[DeriveError],
        message: str,
        *,
        column: int | None = None,
        hint: str | None = None,
    ) -> DeriveError:
        shown = self.text if len(self.text) <= 80 else self.text[:77] + "..."
        return cls(
            f"{message} (in {shown!r})",
            file=self.file,
            key=self.key,
            column=column,
            hint=hint,
        )


# ---------------------------------------------------------------------------
# Numbers
# ---------------------------------------------------------------------------


def _digits(n: int) -> int:
    """Decimal digits of |n|: exact for moderate sizes, a bound from the bit length beyond."""
    n = abs(n)
    if n.bit_length() < 10_000:
        return len(str(n))
    # str() of a huge int is slow (and refused past 4300 digits).
    return int(n.bit_length() * 0.30103) + 1


def _rational_digits(value: sp.Rational) -> int:
    return _digits(int(value.p)) + _digits(int(value.q))


def _number_from_literal(text: str, where: _Where, limits: Limits, column: int) -> tuple[sp.Rational, str | None]:
    """An exact Rational from a decimal literal, and a notice when it had a point or exponent."""
    m = _NUMBER_PARTS.match(text)
    if m is None:  # pragma: no cover - the tokenizer only hands over valid literals
        raise where.error(ExpressionError, f"{text!r} is not a number", column=column)
    mantissa_digits = sum(ch.isdigit() for ch in m.group("mantissa"))
    if mantissa_digits > limits.max_int_digits:
        raise where.error(
            LimitError,
            f"the number literal at column {column} has {mantissa_digits} digits, "
            f"more than the limit of {limits.max_int_digits}",
            column=column,
        )
    if m.group("exp") is not None and abs(int(m.group("exp"))) > limits.max_exponent:
        raise where.error(
            LimitError,
            f"the number literal {text!r} has a decimal exponent of {m.group('exp')}, "
            f"beyond the limit of +-{limits.max_exponent}",
            column=column,
        )
    exact = Fraction(text)
    value = sp.Rational(exact.numerator, exact.denominator)
    if text.isdigit():
        return value, None
    return value, f"{text} read as the exact value {value}"


def _number_from_python(value: int | float, where: _Where, limits: Limits) -> tuple[sp.Rational, str | None]:
    if isinstance(value, bool):
        raise where.error(ExpressionError, f"found the boolean {value}; expected a number or an expression string")
    if isinstance(value, int):
        if _digits(value) > limits.max_int_digits:
            raise where.error(
                LimitError,
                f"the integer has {_digits(value)} digits, more than the limit of {limits.max_int_digits}",
            )
        return sp.Integer(value), None
    if not math.isfinite(value):
        raise where.error(ExpressionError, f"found {value!r}; expected a finite number")
    # repr gives the shortest decimal that reads back as this float, which is
    # what the user typed in the TOML file (0.1, not 0.1000000000000000055...).
    number, notice = _number_from_literal(repr(abs(value)), where, limits, column=1)
    if value < 0:
        return -number, f"{value!r} read as the exact value {-number}"
    return number, notice


# ---------------------------------------------------------------------------
# Tree walk
# ---------------------------------------------------------------------------

_CONSTRUCT_NAMES: Mapping[type, str] = MappingProxyType(
    {
        ast.Attribute: "attribute access ('.')",
        ast.Subscript: "indexing or slicing ('[...]')",
        ast.Lambda: "lambda",
        ast.ListComp: "a list comprehension",
        ast.SetComp: "a set comprehension",
        ast.DictComp: "a dict comprehension",
        ast.GeneratorExp: "a generator expression",
        ast.Compare: "a comparison",
        ast.BoolOp: "'and'/'or'",
        ast.IfExp: "a conditional expression ('if ... else')",
        ast.NamedExpr: "an assignment expression (':=')",
        ast.Starred: "unpacking ('*')",
        ast.Tuple: "a tuple (a comma outside a function call)",
        ast.List: "a list ('[...]')",
        ast.Set: "a set ('{...}')",
        ast.Dict: "a dict ('{...}')",
        ast.JoinedStr: "an f-string",
        ast.FormattedValue: "an f-string",
        ast.Await: "'await'",
        ast.Yield: "'yield'",
        ast.YieldFrom: "'yield from'",
        ast.Slice: "a slice",
    }
)

_BINOP_NAMES: Mapping[type, str] = MappingProxyType(
    {
        ast.Mod: "'%' (remainder)",
        ast.FloorDiv: "'//' (floor division)",
        ast.MatMult: "'@' (matrix product)",
        ast.BitOr: "'|'",
        ast.BitAnd: "'&'",
        ast.BitXor: "'^' as exclusive or",
        ast.LShift: "'<<'",
        ast.RShift: "'>>'",
    }
)


@dataclass(frozen=True)
class _Built:
    """A built sub-expression with a bound on its polynomial degree.

    ``degree`` grows through powers and products; it is what stops
    ``((t^200)^200)^200`` before sympy combines the exponents.
    """

    expr: sp.Expr
    degree: int


class _Walker:
    def __init__(
        self,
        *,
        where: _Where,
        symbols: Mapping[str, sp.Symbol],
        limits: Limits,
        columns: Sequence[int],
    ) -> None:
        self.where = where
        self.symbols = symbols
        self.limits = limits
        self.columns = columns
        self.notices: list[str] = []

    # -- helpers -----------------------------------------------------------

    def column(self, node: ast.AST) -> int | None:
        offset = getattr(node, "col_offset", None)
        if offset is None:
            return None
        if 0 <= offset < len(self.columns):
            return self.columns[offset] + 1
        return None

    def fail(self, node: ast.AST, message: str, *, cls: type[DeriveError] = ExpressionError, hint: str | None = None) -> DeriveError:
        col = self.column(node)
        where = f" at column {col}" if col is not None else ""
        return self.where.error(cls, f"{message}{where}", column=col, hint=hint)

    def check_number(self, node: ast.AST, value: sp.Expr) -> None:
        # Only the leading number of a product or sum can grow through
        # arithmetic; looking at it alone keeps long chains linear in time.
        coeff = value
        if isinstance(value, sp.Mul):
            coeff = value.as_coeff_Mul()[0]
        elif isinstance(value, sp.Add):
            coeff = value.as_coeff_Add()[0]
        if isinstance(coeff, sp.Rational) and _rational_digits(coeff) > self.limits.max_number_digits:
            raise self.fail(
                node,
                f"a number in the expression grows to about {_rational_digits(coeff)} digits, "
                f"more than the limit of {self.limits.max_number_digits}",
                cls=LimitError,
            )

    def check_root(self, node: ast.AST, base: sp.Expr) -> None:
        """Refuse roots of long numbers: sympy factors them to simplify the root."""
        longest = max((_rational_digits(r) for r in base.atoms(sp.Rational)), default=0)
        if longest > self.limits.max_int_digits:
            raise self.fail(
                node,
                f"a root or fractional power of a number with about {longest} digits "
                f"(more than the limit of {self.limits.max_int_digits}) is not allowed",
                cls=LimitError,
            )

    def exp_of(self, node: ast.AST, arg: _Built) -> _Built:
        """exp(arg), guarded: sympy turns exp(n log b) into the number b^n."""
        degree = arg.degree
        if arg.expr.has(sp.log):
            biggest = max((max(abs(int(r.p)), int(r.q)) for r in arg.expr.atoms(sp.Rational)), default=1)
            if biggest > self.limits.max_exponent:
                raise self.fail(
                    node,
                    f"exp of a logarithm with the factor {self.short(sp.Integer(biggest))} would be a power "
                    f"beyond the exponent limit of {self.limits.max_exponent}",
                    cls=LimitError,
                )
            degree = max(degree, 1) * biggest
            self.check_degree(node, degree)
            self.check_root(node, arg.expr)
        value = sp.exp(arg.expr)
        self.check_number(node, value)
        return _Built(value, degree)

    def check_degree(self, node: ast.AST, degree: int) -> None:
        if degree > self.limits.max_exponent:
            raise self.fail(
                node,
                f"powers and products here reach a combined exponent of {degree}, "
                f"more than the limit of {self.limits.max_exponent}",
                cls=LimitError,
            )

    # -- the walk ----------------------------------------------------------

    def walk(self, node: ast.AST, depth: int) -> _Built:
        if depth > self.limits.max_depth:
            raise self.fail(
                node,
                f"the expression is nested more than {self.limits.max_depth} levels deep",
                cls=LimitError,
            )
        if isinstance(node, ast.Constant):
            return self.constant(node)
        if isinstance(node, ast.Name):
            return self.name(node)
        if isinstance(node, ast.UnaryOp):
            return self.unary(node, depth)
        if isinstance(node, ast.BinOp):
            return self.binop(node, depth)
        if isinstance(node, ast.Call):
            return self.call(node, depth)
        what = _CONSTRUCT_NAMES.get(type(node), f"the construct {type(node).__name__}")
        comma = re.search(r"\d,\d", self.where.text) if isinstance(node, ast.Tuple) else None
        hint = (
            f"a decimal number is written with a point ({comma.group().replace(',', '.')}); a comma only "
            "separates the arguments of a function"
            if comma
            else None
        )
        raise self.fail(node, f"{what} is not allowed in an expression", hint=hint)

    def constant(self, node: ast.Constant) -> _Built:
        value = node.value
        if isinstance(value, bool) or value is None or value is Ellipsis:
            raise self.fail(node, f"{value!r} is not a number")
        if isinstance(value, str):
            raise self.fail(node, "a string literal is not allowed in an expression")
        if isinstance(value, bytes):
            raise self.fail(node, "a bytes literal is not allowed in an expression")
        if isinstance(value, complex):
            raise self.fail(node, "a complex literal is not allowed in an expression")
        # The literal's own text (not the Python value) gives the exact number.
        col = self.column(node) or 1
        text = self.literal_text(node)
        number, notice = _number_from_literal(text, self.where, self.limits, col)
        if notice is not None:
            self.notices.append(notice)
        return _Built(number, 0)

    def literal_text(self, node: ast.Constant) -> str:
        offset = node.col_offset
        start = self.columns[offset] if 0 <= offset < len(self.columns) else None
        if start is not None:
            m = TOKEN.match(self.where.text, start)
            if m is not None and m.lastgroup == "number":
                return m.group()
        raise self.fail(node, "could not read this number literal")  # pragma: no cover

    def name(self, node: ast.Name) -> _Built:
        ident = node.id
        if ident.startswith("__") or ident.endswith("__"):
            raise self.fail(node, f"the name {ident!r} (double underscores) is not allowed")
        if ident in self.symbols:
            return _Built(self.symbols[ident], 1)
        if ident in CONSTANTS:
            return _Built(CONSTANTS[ident], 0)
        if ident in FUNCTIONS:
            raise self.fail(
                node,
                f"{ident!r} is a function and needs parentheses",
                hint=f"write {FUNCTIONS[ident].usage}",
            )
        time = self.where.time
        if time is not None and ident == "t" and time.name != "t":
            raise self.fail(
                node,
                f"'t' is used here, but the independent variable of this case is {time.name!r} (system.t)",
                hint=f"write {time.name} instead of t, or remove system.t to keep the name t",
            )
        declared = sorted(self.symbols)
        listing = ", ".join(declared) if declared else "none"
        guess = nearest(ident, set(declared) | set(CONSTANTS))
        parts = split_names(ident, declared)
        hint = f"did you mean {guess!r}?" if guess else "declare it as a parameter, or check the spelling"
        if parts:
            hint = f"{ident} is read as one name: write {'*'.join(parts)} for a product" + (
                f", or did you mean {guess!r}?" if guess else ""
            )
        if ident in ("I", "i", "j", "J") and not guess:
            # a case file has no imaginary unit (I is a current more often than not)
            hint = (
                f"if {ident} is a quantity of your model, declare it as a parameter; a case file describes a "
                "real system and has no imaginary unit: complex-valued entries are accepted through the "
                "Python interface (derive.solve with sympy's I)"
            )
        raise self.fail(
            node,
            f"unknown name {ident!r}; the declared names are: {listing} (and the constants pi, e)",
            hint=hint,
        )

    def unary(self, node: ast.UnaryOp, depth: int) -> _Built:
        if isinstance(node.op, ast.USub):
            inner = self.walk(node.operand, depth + 1)
            return _Built(-inner.expr, inner.degree)
        if isinstance(node.op, ast.UAdd):
            return self.walk(node.operand, depth + 1)
        what = "'not'" if isinstance(node.op, ast.Not) else "'~'"
        raise self.fail(node, f"{what} is not allowed in an expression")

    def chain(self, node: ast.BinOp, ops: tuple[type, ...]) -> list[tuple[ast.operator | None, ast.expr]]:
        """Flatten a left-leaning chain ``a + b - c + ...`` into its operands.

        Long sums and products are not deep nesting; flattening keeps the
        depth limit about parentheses and powers, and the walk iterative.
        """
        items: list[tuple[ast.operator | None, ast.expr]] = []
        cur: ast.expr = node
        while isinstance(cur, ast.BinOp) and isinstance(cur.op, ops):
            items.append((cur.op, cur.right))
            cur = cur.left
        items.append((None, cur))
        items.reverse()
        return items

    def binop(self, node: ast.BinOp, depth: int) -> _Built:
        op = node.op
        if isinstance(op, (ast.Add, ast.Sub)):
            terms = self.chain(node, (ast.Add, ast.Sub))
            built = [(o, self.walk(n, depth + 1)) for o, n in terms]
            total = sp.Add(*[b.expr if not isinstance(o, ast.Sub) else -b.expr for o, b in built])
            self.check_number(node, total)
            return _Built(total, max(b.degree for _, b in built))
        if isinstance(op, (ast.Mult, ast.Div)):
            factors = self.chain(node, (ast.Mult, ast.Div))
            built = [(o, self.walk(n, depth + 1)) for o, n in factors]
            degree = sum(b.degree for _, b in built)
            self.check_degree(node, degree)
            value: sp.Expr = sp.Integer(1)
            for o, b in built:
                if isinstance(o, ast.Div):
                    value = value / b.expr
                else:
                    value = value * b.expr
                self.check_number(node, value)
            return _Built(value, degree)
        if isinstance(op, ast.Pow):
            return self.power(node, depth)
        what = _BINOP_NAMES.get(type(op), f"the operator {type(op).__name__}")
        raise self.fail(node, f"{what} is not allowed in an expression")

    def power(self, node: ast.BinOp, depth: int) -> _Built:
        # The exponent is built (and checked) first: 9^9^9^9 is 9^(9^(9^9))
        # and fails on the innermost 9^9 before anything large is computed.
        exponent = self.walk(node.right, depth + 1)
        base = self.walk(node.left, depth + 1)
        exp_value = exponent.expr
        if base.expr == sp.E:
            # e^x is exp(x): no exponent limit for a plain e^(-300).
            return self.exp_of(node, exponent)
        size = self.exponent_size(node, exp_value)
        if size > self.limits.max_exponent:
            raise self.fail(
                node,
                f"the exponent {self.short(exp_value)} is larger than the limit of {self.limits.max_exponent}",
                cls=LimitError,
            )
        degree = max(base.degree, 1) * max(size, exponent.degree, 1) if base.degree else 0
        self.check_degree(node, degree)
        if isinstance(exp_value, sp.Integer):
            longest = max((_rational_digits(r) for r in base.expr.atoms(sp.Rational)), default=0)
            estimate = longest * abs(int(exp_value))
            if estimate > self.limits.max_number_digits:
                raise self.fail(
                    node,
                    f"raising {self.short(base.expr)} to the power {exp_value} would give a number of "
                    f"about {estimate} digits, more than the limit of {self.limits.max_number_digits}",
                    cls=LimitError,
                )
        else:
            self.check_root(node, base.expr)
        value = sp.Pow(base.expr, exp_value)
        self.check_number(node, value)
        return _Built(value, degree)

    def exponent_size(self, node: ast.AST, exponent: sp.Expr) -> int:
        """A bound on |exponent| when it is a number; 0 when it depends on a symbol."""
        if isinstance(exponent, sp.Rational):
            return max(abs(int(exponent.p)), int(exponent.q) if exponent.q != 1 else 0)
        if exponent.free_symbols:
            return 0
        # A constant such as 3*pi: its magnitude, from a few digits of evalf.
        try:
            magnitude = abs(complex(exponent.evalf(15)))
        except (TypeError, ValueError, OverflowError):
            raise self.fail(node, f"the exponent {self.short(exponent)} is not a finite number") from None
        if not math.isfinite(magnitude):
            raise self.fail(node, f"the exponent {self.short(exponent)} is not a finite number")
        return math.ceil(magnitude)

    @staticmethod
    def short(value: sp.Expr) -> str:
        text = str(value)
        return text if len(text) <= 40 else text[:37] + "..."

    def call(self, node: ast.Call, depth: int) -> _Built:
        func = node.func
        if not isinstance(func, ast.Name):
            what = _CONSTRUCT_NAMES.get(type(func), type(func).__name__)
            raise self.fail(node, f"only the listed functions can be called, not {what}")
        ident = func.id
        if ident.startswith("__") or ident.endswith("__"):
            raise self.fail(node, f"the name {ident!r} (double underscores) is not allowed")
        spec = FUNCTIONS.get(ident)
        if spec is None:
            available = ", ".join(sorted(FUNCTIONS))
            guess = nearest(ident, FUNCTIONS.keys())
            raise self.fail(
                node,
                f"{ident!r} is not an available function; available: {available}",
                hint=f"did you mean {guess!r}?" if guess else None,
            )
        if node.keywords:
            raise self.fail(node, f"keyword arguments are not allowed (in the call of {ident})")
        for arg in node.args:
            if isinstance(arg, ast.Starred):
                raise self.fail(arg, f"unpacking ('*') is not allowed (in the call of {ident})")
        if len(node.args) not in spec.arities:
            counts = " or ".join(str(n) for n in spec.arities)
            raise self.fail(
                node,
                f"{ident} takes {counts} argument{'s' if spec.arities != (1,) else ''}, found {len(node.args)}",
                hint=f"write {spec.usage}",
            )
        args = [self.walk(a, depth + 1) for a in node.args]
        problem = spec.check([a.expr for a in args], self.where.time)
        if problem is not None:
            raise self.fail(node.args[problem.index], f"{ident}: {problem.message}", hint=problem.hint)
        if ident == "exp":
            return self.exp_of(node, args[0])
        if ident == "sqrt":
            self.check_root(node, args[0].expr)
        value = spec.build(*[a.expr for a in args])
        return _Built(value, max(a.degree for a in args))


# ---------------------------------------------------------------------------
# Public entry points
# ---------------------------------------------------------------------------


def _prepare(
    text: str, symbols: Mapping[str, sp.Symbol], where: _Where, limits: Limits
) -> tuple[str, tuple[int, ...]]:
    """Check length, characters and nesting; return the Python source and its column map."""
    if len(text) > limits.max_length:
        raise where.error(
            LimitError,
            f"the expression has {len(text)} characters, more than the limit of {limits.max_length}",
        )
    if not text.strip():
        raise where.error(ExpressionError, "the expression is empty; expected a number or a formula")
    tokens = _tokens(text, where)
    depth = 0
    for tok in tokens:
        if tok.text == "(":
            depth += 1
            if depth > limits.max_depth:
                raise where.error(
                    LimitError,
                    f"parentheses are nested more than {limits.max_depth} deep (column {tok.column + 1})",
                    column=tok.column + 1,
                )
        elif tok.text == ")":
            depth -= 1
        elif tok.kind == "number":
            # Checked before ast.parse, which would otherwise convert the
            # literal to a Python number first.
            _number_from_literal(tok.text, where, limits, tok.column + 1)
    time = where.time.name if where.time is not None else None
    if where.inputs:
        tokens, dropped = drop_input_calls(tokens, where.text, where.inputs, time=time or "t")
        if dropped is not None:
            raise where.error(ExpressionError, dropped.message, column=dropped.column, hint=dropped.hint)
    problem = call_problem(tokens, where.text, set(symbols), states=where.states, time=time)
    if problem is not None:
        raise where.error(ExpressionError, problem.message, column=problem.column, hint=problem.hint)
    return _rewrite(tokens, symbols, where)


def parse_expression(
    text: str | int | float,
    *,
    symbols: Mapping[str, sp.Symbol],
    key: str | None = None,
    file: str | None = None,
    limits: Limits = DEFAULT_LIMITS,
    states: Collection[str] = (),
    t: sp.Symbol | None = None,
    inputs: Collection[str] = (),
) -> tuple[sp.Expr, tuple[str, ...]]:
    """Parse one expression string (or number) into a sympy Expr; returns (expr, notices).

    Floats become exact rationals, each with a notice.  Only the names in
    ``symbols`` and the constants ``pi`` and ``e`` may appear; only the
    functions in :data:`FUNCTIONS` may be called.  ``step`` is
    ``Heaviside`` with H(0) = 1/2.  A declared name directly followed by
    ``(`` is refused (``u(t)`` is not read as ``u*t``).  ``states`` and ``t``
    (the independent variable), when given, sharpen the messages and let the
    switching helpers check that their arguments move with time.  A name in
    ``inputs`` (a declared input function) may be written ``u(t)``.

    >>> t = sp.Symbol("t", real=True)
    >>> parse_expression("2t^2 + 0.5 sin(3t)", symbols={"t": t})
    (2*t**2 + sin(3*t)/2, ('0.5 read as the exact value 1/2',))
    """
    shown = text if isinstance(text, str) else repr(text)
    where = _Where(shown, key, file, frozenset(states), t, frozenset(inputs))
    try:
        return _parse(text, symbols=symbols, where=where, limits=limits)
    except DeriveError as err:
        raise err.with_location(file=file, key=key)
    except RecursionError:
        raise where.error(LimitError, "the expression is too deeply nested to read") from None
    except MemoryError:
        raise where.error(LimitError, "the expression is too large to read") from None
    except Exception as err:  # noqa: BLE001 - the contract: only DeriveError leaves
        raise where.error(
            ExpressionError,
            f"the expression could not be built ({type(err).__name__}: {err})",
        ) from err


def _parse(
    text: str | int | float,
    *,
    symbols: Mapping[str, sp.Symbol],
    where: _Where,
    limits: Limits,
) -> tuple[sp.Expr, tuple[str, ...]]:
    prefix = f"{where.key}: " if where.key else ""
    if isinstance(text, (bool, int, float)):
        value, notice = _number_from_python(text, where, limits)
        return value, ((prefix + notice,) if notice else ())
    if not isinstance(text, str):
        raise where.error(
            ExpressionError,
            f"found a value of type {type(text).__name__}; expected a number or an expression string",
        )
    source, columns = _prepare(text, symbols, where, limits)
    try:
        tree = ast.parse(source, mode="eval")
    except SyntaxError as err:
        offset = (err.offset or 1) - 1
        col = columns[offset] + 1 if 0 <= offset < len(columns) else (len(text) if offset >= len(columns) else None)
        reason = err.msg or "invalid syntax"
        raise where.error(
            ExpressionError,
            f"the expression cannot be read: {reason} at column {col}",
            column=col,
        ) from None
    walker = _Walker(where=where, symbols=symbols, limits=limits, columns=columns)
    built = walker.walk(tree.body, 1)
    expr = built.expr
    if expr.has(sp.zoo, sp.nan, sp.oo, -sp.oo):
        raise where.error(
            ExpressionError,
            "the expression has no finite value (a division by zero or log(0))",
        )
    if expr.has(sp.I):
        # The systems are real; an imaginary unit can only come from sqrt or
        # log of a negative quantity, which is a mistake in the input.
        raise where.error(
            ExpressionError,
            f"the expression is not real: it evaluates to {_Walker.short(expr)} "
            "(a square root or logarithm of a negative quantity?)",
        )
    return expr, tuple(prefix + n for n in walker.notices)


def expression_names(text: str | int | float) -> tuple[str, ...]:
    """The value names an expression mentions (not the called functions), in order of first use.

    Used to give a specific message before parsing, e.g. for a state that has
    no equation.  Nothing is evaluated.

    >>> expression_names("3 sin(w t) + k*x")
    ('w', 't', 'k', 'x')
    """
    if not isinstance(text, str):
        return ()
    seen: dict[str, None] = {}
    toks = [m for m in TOKEN.finditer(text) if m.lastgroup != "space"]
    for i, m in enumerate(toks):
        if m.lastgroup != "name" or keyword.iskeyword(m.group()):
            continue
        nxt = toks[i + 1].group() if i + 1 < len(toks) else ""
        if nxt == "(" and m.group() in FUNCTIONS:
            continue
        if i > 0 and toks[i - 1].group() == ".":
            continue
        seen.setdefault(m.group(), None)
    return tuple(seen)
