"""The calculation sheet's derivation steps as blocks: one function per step kind.

``STEP_BLOCKS`` maps every kind in ``derive.steps.STEP_KINDS`` to a function
that describes a step of that kind in the format-neutral blocks of
``derive.documents.blocks``.  Markdown, text and any new output format show
a step only through this description; the LaTeX sheet has, in addition, a
hand-set partial per kind (``templates/steps/<kind>.tex.j2``) and falls back
to this description for a kind without one.
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace
from typing import Any, Callable, Sequence

import sympy as sp

from ..model import Solution
from ..render.escape import spoken, tex_escape
from ..render.printing import MathFormatter, domain_tex, root_legend_rows, visible_width
from .output_blocks import output_blocks, values_blocks
from .interval_blocks import interval_blocks, jump_blocks, shift_blocks, with_decimals
from . import model_blocks
from ..render.root_parts import part_legend
from .blocks import Block, Code, Eq, Heading, Inline, Items, Math, MathRows, N, Name, P, Para, Strong, Table, TermSum
from .coefficients import NAMES_KEY, Naming, compact, naming_for, parameter_values, tidy, where_blocks
from .notation import coordinate_letter, notation_blocks

__all__ = ["StepContext", "STEP_BLOCKS", "step_blocks", "coordinate_letter", "notation_blocks", "LONG_DISPLAY_LINES"]

#: Estimated display lines above which a matrix or list of the derivation moves to the appendix
#: (a third of a page); the main flow says where it is.  Small cases never reach it.
LONG_DISPLAY_LINES = 16


@dataclass(frozen=True)
class StepContext:
    """What a step's block function needs besides the step: the solution and its printer."""

    solution: Solution
    fmt: MathFormatter
    lam: sp.Symbol
    #: (label, heading, blocks) of the long intermediate algebra, moved to the
    #: appendix at the end of the sheet; filled as the steps are described
    appendix: list[tuple[str, Heading, list[Block]]] = field(default_factory=list)
    #: the names of recurring subexpressions (computed on first use) and those already introduced
    cache: dict[str, Any] = field(default_factory=dict)

    @property
    def naming(self) -> Naming:
        """omega, Delta, Gamma for this sheet (see ``derive.documents.coefficients``)."""
        if "naming" not in self.cache:
            self.cache["naming"] = naming_for(self.solution, roots=self.fmt.roots)
        return self.cache["naming"]

    def compact(self, obj: Any, var: sp.Symbol | None = None) -> Any:
        """An expression (or each entry of a matrix) collected by mode in ``var`` (t) with tidy coefficients,
        in the names; display only."""
        t = var if var is not None else self.t
        if isinstance(obj, sp.MatrixBase):
            if not any(isinstance(e, sp.Expr) and e.has(t) for e in obj):
                return obj
            return sp.ImmutableMatrix(obj.rows, obj.cols, [self.compact(e, t) for e in obj])
        if not isinstance(obj, sp.Expr) or not obj.has(t):
            return obj
        # every symbol that is not a parameter (y_1, c_1) is part of a mode, not of a coefficient
        params = {p.symbol for p in self.solution.system.params}
        unknowns = frozenset(x for x in obj.free_symbols if x != t and x not in params)
        return compact(obj, t, self.naming, values=parameter_values(self.solution) or {}, unknowns=unknowns,
                       names=self.cache.setdefault(NAMES_KEY, {}))

    def where(self, *objs: Any) -> list[Block]:
        """A "where" line defining each name that ``objs`` use and the derivation has not defined yet."""
        introduced: set[sp.Symbol] = self.cache.setdefault("introduced", set())
        present: set[sp.Basic] = set()
        for obj in objs:
            present |= getattr(obj, "free_symbols", set())
        rows = [(sym, value) for sym, value in self.naming.rows if sym in present and sym not in introduced]
        if not rows:
            return []
        introduced |= {sym for sym, _ in rows}
        return where_blocks(rows, self.fmt)

    def to_appendix(self, title: str, math: Name | None, bookmark: str, blocks: list[Block]) -> str:
        """Move ``blocks`` to the appendix under ``title`` (+ ``math``); returns their label, ``A.3``."""
        label = f"A.{len(self.appendix) + 1}"
        self.appendix.append((label, Heading(4, f"{label} {title}", math, bookmark), blocks))
        return label

    def is_long(self, obj: Any, *, lines: int = LONG_DISPLAY_LINES) -> bool:
        """Whether ``obj`` (an expression, a matrix, or rows of them) would fill more than ``lines`` display lines.

        Estimated from the LaTeX width of each entry, a line per ``line_width``
        glyphs, at least one per entry; a matrix that fits on one line counts
        its rows.  Display only: it decides what the main flow shows in full.
        """
        items = list(obj) if isinstance(obj, (tuple, list)) else [obj]
        width = self.fmt.style.line_width
        total = 0
        for item in items:
            if isinstance(item, sp.MatrixBase):
                if self.fmt.matrix_fits(item):
                    total += item.rows
                    continue
                entries = list(item)
            else:
                entries = [item]
            total += sum(max(1, -(-visible_width(self.fmt.m(e)) // width)) for e in entries)
            if total > lines:
                return True
        return total > lines

    def appendix_blocks(self) -> list[Block]:
        """The appendix section: every moved piece of algebra under its label (empty when none)."""
        if not self.appendix:
            return []
        out: list[Block] = [
            Heading(2, "Appendix A: intermediate algebra"),
            P("The long intermediate algebra of the derivation (row reductions, chain links, long matrices and "
              "the vectors of each individual root), in the order it is referred to."),
        ]
        for _, heading, blocks in self.appendix:
            out.append(heading)
            out += blocks
        return out

    @property
    def t(self) -> sp.Symbol:
        return self.solution.system.t

    def fn(self, sym: sp.Symbol, suffix: str = "") -> Name:
        """``y_1(t)`` (optionally ``y_1'(t)``) as a Name."""
        return Name(
            f"{self.fmt.m(sym)}{suffix}({self.fmt.m(self.t)})",
            f"{self.fmt.plain(sym)}{suffix}({self.fmt.plain(self.t)})",
        )

    def m_list(self, items: Sequence[Any]) -> str:
        """Items as LaTeX, separated by commas."""
        return ", ".join(self.fmt.m(e) for e in items)

    def plain_list(self, items: Sequence[Any]) -> str:
        """Items as plain text, separated by commas."""
        return ", ".join(self.fmt.plain(e) for e in items)

    def root_value(self, value: Any) -> Name:
        """An eigenvalue by its root name where it has one (``lambda_3``), else its value."""
        return Name(self.fmt.root_value(value), self.fmt.root_value_plain(value))

    def state_name(self, i: int, part: str = "") -> Name:
        """``x_1(t)``, or ``x_1^p(t)`` for a part, of state ``i`` (from 0)."""
        state = self.solution.system.states[i]
        mark = rf"^{{\mathrm{{{part}}}}}" if part else ""
        pl = self.fmt.plain(state) + (f"_{part}" if part else "")
        return Name(f"{{{self.fmt.m(state)}}}{mark}({self.fmt.m(self.t)})", f"{pl}({self.fmt.plain(self.t)})")

    def state_rows(self, vec: sp.MatrixBase, part: str = "") -> tuple[tuple[Name, Any], ...]:
        """(``x_1(t)``, entry) rows, each entry collected by mode (display only)."""
        return tuple((self.state_name(i, part), self.compact(vec[i])) for i in range(vec.rows))

    def legend(self, objs: Sequence[Any]) -> list[Block]:
        """A paragraph naming the indexed roots that occur in ``objs`` (empty when none do)."""
        present: set[sp.Basic] = set()
        for obj in objs:
            items = list(obj) if isinstance(obj, (tuple, list, sp.MatrixBase)) else [obj]
            for e in items:
                if isinstance(e, sp.Basic):
                    present |= e.atoms(sp.CRootOf)
        wanted = [r for r in self.fmt.roots if r.root in present]
        f = self.fmt
        L, Lp = f.m(self.lam), f.plain(self.lam)
        parts: list[Inline] = []
        for _, group in root_legend_rows(wanted):
            one = len(group) == 1
            if parts:
                parts.append(" ")
            for k, r in enumerate(group):
                parts += [", " if k else "", Math(r.root)]
            poly = group[0].polynomial(self.lam)
            parts += [
                f" {'is a root' if one else 'are roots'} of ",
                N(f"q({L}) = {f.m(poly)} = 0", f"q({Lp}) = {f.plain(poly)} = 0"),
                f", which has no root in radicals of reasonable size; {'it is' if one else 'they are'} kept exact as "
                "indexed roots (numbered in sympy's order: real roots ascending, then complex pairs), with ",
            ]
            for k, r in enumerate(group):
                parts += [", " if k else "", N(rf"{f.m(r.root)} \approx {r.decimal}", f"{f.plain(r.root)} ~ {r.decimal}")]
            parts.append(".")
        parts += [p if isinstance(p, str) else N(*p) for p in part_legend(wanted, f, lead=" " if parts else "")]
        # the LaTeX sheet keeps the line of an empty legend
        return [Para(tuple(p for p in parts if p != ""), runs_on=True)]

    def coord(self, sub: str = "") -> tuple[str, str]:
        """The decoupled coordinate vector ``y`` (or its entry ``y_k`` with ``sub``) as LaTeX and plain text."""
        letter = coordinate_letter(self.solution).name
        sym = sp.Symbol(f"{letter}_{sub}" if sub else letter)
        return self.fmt.m(sym), self.fmt.plain(sym)

    def conjugate_name(self, step: Any) -> Name:
        """The y_k of the scalar step whose eigenvalue ``step``'s mirrors."""
        for other in self.solution.steps:
            if getattr(other, "kind", "") == "scalar" and other.index == step.conjugate_of and other is not step:
                return Name(self.fmt.m(other.y), self.fmt.plain(other.y))
        return Name(*self.coord(str(step.conjugate_of)))


def integration_variable(t: sp.Symbol, *exprs: Any) -> sp.Symbol:
    """A variable of integration distinct from the limit ``t`` and from every name in ``exprs``.

    >>> integration_variable(sp.Symbol("t"), sp.Symbol("s"))
    tau
    """
    used = {t.name} | {x.name for e in exprs if isinstance(e, sp.Basic) for x in e.free_symbols}
    name = next(n for n in ("s", "tau", "sigma", "xi", "s_1") if n not in used)
    return sp.Symbol(name, real=True)


def _mat(name: str, plain: str, M: Any) -> Eq:
    return Eq(((Name(name, plain), M),))


# ---------------------------------------------------------------------------
# One function per step kind


def _equations(s: Any, c: StepContext) -> list[Block]:
    f = c.fmt
    T, Tp = f.m(s.t), f.plain(s.t)
    out: list[Block] = [
        Heading(3, "The system in matrix form"),
        P("The equations are brought to the form ", N(rf"x' = A\,x + f({T})", f"x' = A x + f({Tp})"),
          ": the coefficient of each state in each equation gives a row of ", N("A"),
          ", and the terms free of the states give the forcing ", N("f"), "."),
    ]
    if s.equations:
        out += [P("As written:", runs_on=True), Items(tuple((Code(e),) for e in s.equations))]
    out += [
        P("With the state vector ", N(f"x = ({c.m_list(s.states)})^{{T}}", f"x = ({c.plain_list(s.states)})^T"), ":"),
        _mat("A", "A", s.A),
        _mat(f"f({T})", f"f({Tp})", s.f),
    ]
    return out


def _charpoly(s: Any, c: StepContext) -> list[Block]:
    f = c.fmt
    L, Lp = f.m(s.lam), f.plain(s.lam)
    det = N(rf"\det(A - {L} I)", f"det(A - {Lp} I)")
    return [
        Heading(3, "Characteristic polynomial"),
        P("The eigenvalues are the values of ", Math(s.lam), " for which ", N(f"A - {L} I", f"A - {Lp} I"),
          " is singular, so its determinant is formed:"),
        _mat(f"A - {L} I", f"A - {Lp} I", s.shifted),
        # an irreducible polynomial is shown once
        Eq(((det, s.expanded), (N(""), s.factored)) if f.m(s.factored) != f.m(s.expanded) else ((det, s.expanded),)),
        P("Factored over ", N(domain_tex(s.domain), str(s.domain)), ", the irreducible factors and their multiplicities are:"),
        Items(tuple((Math(factor), f", multiplicity {mult}") for factor, mult in s.factors)),
    ]


def _eigenvalues(s: Any, c: StepContext) -> list[Block]:
    f = c.fmt
    L, Lp = f.m(s.lam), f.plain(s.lam)
    rows = []
    for e in s.entries:
        dec = f.decimal(e.value) if not e.value.is_Integer else ""
        dec_plain = f.decimal(e.value, latex=False) if dec else ""
        rows.append((
            N(L, Lp),
            N(f.m(e.value), f.plain(e.value)),
            N(rf"\approx {dec}" if dec else "", f"~ {dec_plain}" if dec else ""),
            N(rf"\text{{mult.\ {e.algebraic} (geom.\ {e.geometric})}}", f"mult. {e.algebraic} (geom. {e.geometric})"),
            N(rf"\text{{{tex_escape(e.form)}}}", str(e.form)),
        ))
    out: list[Block] = [
        Heading(3, "Eigenvalues"),
        P("Each irreducible factor is set to zero. The eigenvalues, in the order used for the columns of ", N("P"), ", are:"),
        MathRows(tuple(rows)),
    ]
    # one sentence per rule: six roots of one sextic share their reason
    by_rule: dict[str, list[Any]] = {}
    for e in s.entries:
        if e.rule:
            by_rule.setdefault(e.rule, []).append(e.value)
    for rule, values in by_rule.items():
        names: list[Inline] = [part for k, v in enumerate(values) for part in ((", " if k else ""), Math(v))]
        out.append(P("Form of ", *names, f": {spoken(rule)}.", runs_on=True))
    out += c.legend([e.value for e in s.entries])
    return out


def _instances(c: StepContext, instances: Any, L: str, Lp: str, *, single: bool) -> list[Block]:
    """The vectors of each individual root; ``single``: a root with one vector names it v, not v_1."""
    out: list[Block] = [P("For the individual roots:", runs_on=True)]
    for value, vecs in instances:
        if single and len(vecs) == 1:
            out.append(_mat(f"{L} = {c.fmt.root_value(value)}:\\quad v", f"{Lp} = {c.fmt.root_value_plain(value)}: v", vecs[0]))
            continue
        if single:
            out.append(P(runs_on=True))  # the sheet keeps the empty line of a root with several vectors
        for k, v in enumerate(vecs, start=1):
            out.append(_mat(f"{L} = {c.fmt.root_value(value)}:\\quad v_{{{k}}}", f"{Lp} = {c.fmt.root_value_plain(value)}: v_{k}", v))
    return out + c.legend([value for value, _ in instances])


def _moved_instances(c: StepContext, instances: Any, L: str, Lp: str, *, single: bool) -> list[Block]:
    """The vectors of each root in place when short, else in the appendix with a reference.

    Each is the generic vector at one root, and the columns of P repeat them,
    so a checker needs them in the main flow only when they are few and short.
    """
    blocks = _instances(c, instances, L, Lp, single=single)
    if not c.is_long([v for _, vecs in instances for v in vecs]):
        return blocks
    label = c.to_appendix("Vectors of the individual roots", None, "", blocks[1:])
    return [P(f"For each individual root the vectors are the ones above with ", N(L, Lp), " set to that root; they are "
              f"written out in Appendix {label} and stand as the columns of ", N("P"), " below.", runs_on=True)]


def _cols(idx: Any) -> str:
    return ", ".join(str(int(i) + 1) for i in idx) or "none"


def _eigenvector(s: Any, c: StepContext) -> list[Block]:
    f = c.fmt
    L, Lp = f.m(s.lam), f.plain(s.lam)
    shifted = N(f"A - {L} I", f"A - {Lp} I")
    if s.root_of is None:
        at = N(f"{L} = {f.root_value(s.eigenvalue)}", f"{Lp} = {f.root_value_plain(s.eigenvalue)}")
        out: list[Block] = [
            Heading(3, "Eigenvectors for ", at, "an eigenvalue"),
            P("The eigenvectors for ", at, f" (algebraic multiplicity {s.algebraic}) span the null space of ", shifted,
              ", found by row reduction."),
        ]
    else:
        q = N(f"q({L})", f"q({Lp})")
        out = [
            Heading(3, "Eigenvectors for the roots of ", q, "q"),
            P("For each root ", N(L, Lp), " of ", N(f"q({L}) = {f.m(s.root_of)} = 0", f"q({Lp}) = {f.plain(s.root_of)} = 0"),
              " the computation is the same, so it is done once for a generic root, using ", N(f"q({L}) = 0", f"q({Lp}) = 0"),
              " to reduce powers of ", N(L, Lp), ". The eigenvectors span the null space of ", shifted, ", found by row reduction."),
        ]
    at_math = N(f"{L} = {f.root_value(s.eigenvalue)}", f"{Lp} = {f.root_value_plain(s.eigenvalue)}") if s.root_of is None else N(f"q({L}) = {f.m(s.root_of)} = 0", f"q({Lp}) = {f.plain(s.root_of)} = 0")
    label = c.to_appendix("Row reduction for ", at_math, "an eigenvalue", [
        _mat(f"A - {L} I", f"A - {Lp} I", s.shifted),
        _mat(rf"\operatorname{{rref}}(A - {L} I)", f"rref(A - {Lp} I)", s.rref),
    ])
    out += [
        P(f"(The matrix and its reduced row echelon form are in Appendix {label}.) "
          f"The pivot columns are {_cols(s.pivots)}; the free columns are {_cols(s.free)}. Setting each free unknown "
          "to one in turn (and scaling to small integers) gives the basis"),
    ]
    many = len(s.basis) > 1
    out += [_mat(f"v_{{{k}}}" if many else "v", f"v_{k}" if many else "v", v) for k, v in enumerate(s.basis, start=1)]
    if s.root_of is not None and s.instances:
        out += _moved_instances(c, s.instances, L, Lp, single=True)
    return out


def _jordan_chain(s: Any, c: StepContext) -> list[Block]:
    f = c.fmt
    L, Lp = f.m(s.lam), f.plain(s.lam)
    plural = "s" if s.geometric != 1 else ""
    if s.root_of is None:
        at = N(f"{L} = {f.root_value(s.eigenvalue)}", f"{Lp} = {f.root_value_plain(s.eigenvalue)}")
        out: list[Block] = [
            Heading(3, "Jordan chain for ", at, "a defective eigenvalue"),
            P("The eigenvalue ", at, f" has algebraic multiplicity {s.algebraic} but only {s.geometric} independent "
              f"eigenvector{plural}, so ", N("A"), " is not diagonalizable."),
        ]
    else:
        out = [
            Heading(3, "Jordan chains for the roots of ", N(f"q({L})", f"q({Lp})"), "q"),
            P("For each root ", N(L, Lp), " of ", N(f"q({L}) = {f.m(s.root_of)} = 0", f"q({Lp}) = {f.plain(s.root_of)} = 0"),
              f" the algebraic multiplicity is {s.algebraic} but there {'is' if s.geometric == 1 else 'are'} only "
              f"{s.geometric} independent eigenvector{plural}; the chain is computed once for a generic root."),
        ]
    links: list[Block] = [_mat(f"A - {L} I", f"A - {Lp} I", s.shifted)]
    for k, link in enumerate(s.links, start=1):
        links += [
            P("For ", N(f"v_{{{k + 1}}}", f"v_{k + 1}"), ": the right side is ",
              N(f"v_{{{k}}} = {f.m(link.rhs.T)}^{{T}}", f"v_{k} = {f.plain(link.rhs.T)}^T"), " and the augmented matrix reduces to"),
            _mat(rf"\operatorname{{rref}}\bigl[A - {L} I \mid v_{{{k}}}\bigr]", f"rref[A - {Lp} I | v_{k}]", link.augmented_rref),
            P("so that (free unknowns set to zero)"),
            _mat(f"v_{{{k + 1}}}", f"v_{k + 1}", link.solution),
        ]
    at_math = N(f"{L} = {f.root_value(s.eigenvalue)}", f"{Lp} = {f.root_value_plain(s.eigenvalue)}") if s.root_of is None else N(f"q({L}) = {f.m(s.root_of)} = 0", f"q({Lp}) = {f.plain(s.root_of)} = 0")
    label = c.to_appendix("Jordan chain links for ", at_math, "a defective eigenvalue", links)
    out += [
        P("A chain of generalized eigenvectors completes the basis: each solves ",
          N(rf"(A - {L} I)\,v_{{k+1}} = v_k", f"(A - {Lp} I) v_(k+1) = v_k"), ", starting from the eigenvector ", N("v_1"),
          f"; the reduction of each link is in Appendix {label}.", runs_on=True),
    ]
    out.append(P("The chain:"))
    out += [_mat(f"v_{{{k}}}", f"v_{k}", v) for k, v in enumerate(s.vectors, start=1)]
    if s.root_of is not None and s.instances:
        out += _moved_instances(c, s.instances, L, Lp, single=False)
    return out


def _modal_matrix(s: Any, c: StepContext) -> list[Block]:
    name = "D" if s.diagonal else "J"
    out: list[Block] = [
        Heading(3, "Modal matrix"),
        P("The " + ("eigenvectors" if s.diagonal else "eigenvectors and chain vectors") + " are placed as the columns of ",
          N("P"), ", in the order of the eigenvalues on the diagonal of ", N(name), ":"),
        _mat("P", "P", s.P),
        _mat(name, name, s.D),
    ]
    if not s.diagonal:
        out += [
            P("The Jordan blocks, in order:"),
            Items(tuple((c.root_value(v), f", block of size {k}") for v, k in s.blocks)),
        ]
    return out


def _rel(value: sp.Expr) -> str:
    return r"\approx" if value.has(sp.Float) else "="


def _inverse(s: Any, c: StepContext) -> list[Block]:
    lead: tuple[Inline, ...] = (
        "The decoupling needs ", N("P^{-1}", "P^-1"), ". Since ",
        # a decimal det P (indexed roots) is rounded: it is "about", and only its distance from 0 matters
        N(rf"\det P {_rel(s.det)} {c.fmt.m(s.det)} \neq 0", f"det P {'≈' if s.det.has(sp.Float) else '='} {c.fmt.plain(s.det)} ≠ 0"),
        " the columns of ", N("P"), f" are independent and the inverse exists (method: {s.method})")
    out: list[Block] = [Heading(3, "Inverse of the modal matrix")]
    if not c.is_long(s.P_inv):
        return out + [P(*lead, ":"), _mat("P^{-1}", "P^-1", s.P_inv)]
    label = c.to_appendix("The inverse of the modal matrix", None, "", [_mat("P^{-1}", "P^-1", s.P_inv)])
    return out + [P(*lead, f"; its entries are long, and are written out in Appendix {label}. The derivation uses it only "
                    "through the decoupled forcing ", N("g = P^{-1} f", "g = P^-1 f"), " and the constants below.")]


def _similarity(s: Any, c: StepContext) -> list[Block]:
    out: list[Block] = [
        Heading(3, "Check of the decomposition"),
        P("Before the decomposition is used, the product is multiplied out and compared with ", N("A"), ":"),
        _mat(r"P\,D\,P^{-1}", "P D P^-1", s.product),
    ]
    if s.ok:
        out.append(P("This equals ", N("A"), " entry by entry, so ", N(r"A = P\,D\,P^{-1}", "A = P D P^-1"), " holds exactly."))
    else:
        out += [
            P(Strong(("This does not equal ", N("A"), ":")), " the decomposition is wrong and the result below must not be used."),
            _mat("A", "A", s.A),
        ]
    return out


def _decouple(s: Any, c: StepContext) -> list[Block]:
    f = c.fmt
    T, Tp = f.m(s.t), f.plain(s.t)
    y = sp.ImmutableMatrix([[v] for v in s.y])
    rhs = s.D * y + s.g
    Y, Yp = c.coord()
    return [
        Heading(3, "Decoupling"),
        P("Substituting ", N(rf"x = P\,{Y}", f"x = P {Yp}"), " into ", N(r"x' = A\,x + f", "x' = A x + f"), " and multiplying by ",
          N("P^{-1}", "P^-1"), " gives ", N(rf"{Y}' = P^{{-1}} A P\,{Y} + P^{{-1}} f = D\,{Y} + g", f"{Yp}' = P^-1 A P {Yp} + P^-1 f = D {Yp} + g"),
          ", with ", N(f"{Y} = ({c.m_list(s.y)})^{{T}}", f"{Yp} = ({c.plain_list(s.y)})^T"), " and the transformed forcing"),
        _mat(f"g({T}) = P^{{-1}} f({T})", f"g({Tp}) = P^-1 f({Tp})", c.compact(s.g)),
        P("Row by row, the equations to solve are:"),
        Eq(tuple((N(f"{f.m(s.y[k])}'({T})", f"{f.plain(s.y[k])}'({Tp})"), c.compact(rhs[k])) for k in range(len(s.y)))),
    ]


def _scalar(s: Any, c: StepContext) -> list[Block]:
    f = c.fmt
    Y, Yp = f.m(s.y), f.plain(s.y)
    T, Tp = f.m(s.t), f.plain(s.t)
    out: list[Block] = [Heading(3, "Solution for ", N(Y, Yp), coordinate_letter(c.solution).name)]
    if s.conjugate_of is not None:
        other = c.conjugate_name(s)
        return out + [
            P("The eigenvalue ", c.root_value(s.eigenvalue), " is the complex conjugate of the one of ", other,
              ". Since ", N("A"), " and ", N("f"), " are real, ", N(Y, Yp), " is the complex conjugate of ", other,
              " (with its own constant ", Math(s.constant), "):"),
            Eq(((c.fn(s.y), c.compact(s.solution)),)),
        ]
    out += [
        P("The equation for ", N(Y, Yp), ", with eigenvalue ", c.root_value(s.eigenvalue), ", is"),
        Eq(((N(f"{Y}'({T})", f"{Yp}'({Tp})"), c.compact(s.eigenvalue * s.y + s.rhs)),)),
    ]
    k = s.index
    g, gp = f"g_{{{k}}}", f"g_{k}"
    if s.coupling is not None:
        # the right side is still named after the decoupled forcing g_k, plus the solved coordinate after it
        G, Gp = rf"\bigl(g_{{{k}}} + {f.m(s.coupling)}\bigr)", f"(g_{k} + {f.plain(s.coupling)})"
        out += [
            P("Its forcing is the decoupled forcing ", N(rf"{g}({T}) = {f.m(s.g)}", f"{gp}({Tp}) = {f.plain(s.g)}"),
              " plus the next component of the same Jordan block, already solved, ",
              N(f"{f.m(s.coupling)} = {f.m(s.coupling_value)}", f"{f.plain(s.coupling)} = {f.plain(s.coupling_value)}"),
              "; together"),
            Eq(((N(rf"{g}({T}) + {f.m(s.coupling)}({T})", f"{gp}({Tp}) + {f.plain(s.coupling)}({Tp})"), c.compact(s.rhs)),)),
        ]
    else:
        G, Gp = g, gp
    # the variable of integration is a letter of its own, never the limit t
    var = integration_variable(s.t, s.integrand, s.integral, s.solution)
    V, Vp = f.m(var), f.plain(var)
    out += [
        P("Multiplying by the integrating factor"),
        Eq(((N(rf"\mu({T})", f"μ({Tp})"), c.compact(s.factor)),)),
        P("makes the left side an exact derivative, ",
          N(rf"\frac{{d}}{{d{T}}}\bigl(\mu\,{Y}\bigr) = \mu\,{G}", f"d/d{Tp} (μ {Yp}) = μ {Gp}"), ", with"),
        Eq(((N(rf"\mu({V})\,{G}({V})", f"μ({Vp}) {Gp}({Vp})"), c.compact(s.integrand.xreplace({s.t: var}), var)),)),
    ]
    if s.resonant:
        out.append(P("The forcing has the same exponent as the eigenvalue (resonance): the exponentials cancel in the "
                     "integrand, and the integral brings a polynomial factor in ", N(T, Tp), "."))
    if c.solution.system.is_ivp:
        t0, t0p = f.m(s.t0), f.plain(s.t0)
        out += [
            P("Integrating from ", N(f"{T}_0 = {t0}", f"{Tp}0 = {t0p}"), " to ", N(T, Tp), ":", runs_on=True),
            Eq(((N(rf"\int_{{{t0}}}^{{{T}}} \mu({V})\,{G}({V}) \, d{V}", f"integral from {t0p} to {Tp} of μ({Vp}) {Gp}({Vp}) d{Vp}"), c.compact(s.integral)),)),
        ]
    else:
        out += [P("An antiderivative is", runs_on=True),
                Eq(((N(rf"\int \mu({V})\,{G}({V}) \, d{V}", f"antiderivative of μ({Vp}) {Gp}({Vp})"), c.compact(s.integral)),))]
    out += [
        P("Dividing by ", N(r"\mu", "μ"), ", with the constant ", Math(s.constant), ":"),
        Eq(((c.fn(s.y), c.compact(s.solution)),)),
    ]
    return out


def _recombine(s: Any, c: StepContext) -> list[Block]:
    complex_form = any(getattr(other, "kind", "") == "real_form" for other in c.solution.steps)
    # in complex form the parts go to the appendix as they stand (collecting them costs seconds on a
    # 6-state case, for a stage the real form replaces)
    show = (lambda M: M) if complex_form else c.compact
    parts: list[Block] = [
        _mat(r"x^{\mathrm{h}}", "x_h", show(s.homogeneous)),
        P("and the remaining terms the particular part,"),
        _mat(r"x^{\mathrm{p}}", "x_p", show(s.particular)),
    ]
    moved: list[Block] = [
        P("Each solved ", N(*c.coord("k")), " times the ", N("k"), "-th column of ", N("P"), ", the terms carrying the constants:"),
        TermSum(N(r"x^{\mathrm{h}}", "x_h"), tuple(s.homogeneous_terms)),
    ]
    if complex_form:
        # the complex form is only a stage on the way to the real form shown next
        moved += [P("that is, the homogeneous part"), *parts]
    label = c.to_appendix("Recombination term by term", None, "", moved)
    out: list[Block] = [
        Heading(3, "Recombination"),
        P("The state follows from ", N(rf"x = P\,{c.coord()[0]}", f"x = P {c.coord()[1]}"), ": each solved ", N(*c.coord("k")), " multiplies the ", N("k"),
          f"-th column of ", N("P"), f" (term by term in Appendix {label}). The terms carrying the constants form the homogeneous part"
          + (", and the remaining terms the particular part; in complex form both are in the appendix, and the real form follows."
             if complex_form else ","))
    ]
    return out if complex_form else out + parts


def _real_form(s: Any, c: StepContext) -> list[Block]:
    f = c.fmt
    T, Tp = f.m(s.t), f.plain(s.t)
    j = f.style.imaginary_unit
    re_v = rf"\operatorname{{Re}}\bigl(v e^{{\lambda {T}}}\bigr)"
    im_v = rf"\operatorname{{Im}}\bigl(v e^{{\lambda {T}}}\bigr)"
    out: list[Block] = [
        Heading(3, "Real form"),
        P(N("A"), " and ", N("f"), " are real, so each complex pair of terms is rewritten with real functions and real constants."),
    ]
    moved: list[Block] = []
    # a constant already solved from the initial values is called by its name, not written out again
    solved = {value: name for st in c.solution.steps if getattr(st, "kind", "") == "initial_values" for name, value in st.values}
    for p in s.pairs:
        c1, c2 = p.real_constants[0], p.real_constants[1]
        pair = [solved.get(k, k) if c.is_long(k, lines=1) else k for k in p.complex_constants]
        moved += [
            P("For the pair ", N(rf"\lambda = {f.m(p.re)} \pm {f.m(p.im)}\,{j}", f"λ = {f.plain(p.re)} +- {f.plain(p.im)} {j}"),
              " (from ", c.root_value(p.eigenvalue), ") with eigenvector ",
              N(rf"v = \operatorname{{Re}} v + {j} \operatorname{{Im}} v", f"v = Re v + {j} Im v"), ":", runs_on=True),
            _mat(r"\operatorname{Re} v", "Re v", p.vector_re),
            _mat(r"\operatorname{Im} v", "Im v", p.vector_im),
            P("The real and imaginary parts of ", N(rf"v\,e^{{\lambda {T}}}", f"v exp(λ {Tp})"), " are two real solutions:"),
            _mat(re_v, f"Re(v exp(λ {Tp}))", c.compact(p.real_part)),
            _mat(im_v, f"Im(v exp(λ {Tp}))", c.compact(p.imag_part)),
        ]
        out.append(
            P("For the pair ", N(rf"\lambda = {f.m(p.re)} \pm {f.m(p.im)}\,{j}", f"λ = {f.plain(p.re)} +- {f.plain(p.im)} {j}"),
              " the complex constants ", N(c.m_list(pair), c.plain_list(pair)),
              " are replaced by the real constants ", N(c.m_list(p.real_constants), c.plain_list(p.real_constants)),
              ", the pair contributing ",
              N(f"{f.m(c1)} {re_v} + {f.m(c2)} {im_v}", f"{f.plain(c1)} Re(v exp(λ {Tp})) + {f.plain(c2)} Im(v exp(λ {Tp}))"), "."),
        )
    if moved:
        label = c.to_appendix("Real and imaginary parts of the complex pairs", None, "", moved)
        out.append(P(f"The real and imaginary parts of each pair are worked out in Appendix {label}.", runs_on=True))
    xh, xp = c.compact(s.homogeneous), c.compact(s.particular)
    parts: list[Block] = [_mat(r"x^{\mathrm{h}}", "x_h", xh), _mat(r"x^{\mathrm{p}}", "x_p", xp)]
    if c.is_long([xh, xp], lines=2 * LONG_DISPLAY_LINES):
        label = c.to_appendix("The homogeneous and particular parts in real form", None, "", parts)
        return out + [P(f"In real form the homogeneous and particular parts are written out in Appendix {label}; their sum, "
                        "collected by mode, is the result stated in the Result section.", runs_on=True)]
    return out + [P("In real form:", runs_on=True), *parts]


def _initial_values(s: Any, c: StepContext) -> list[Block]:
    f = c.fmt
    t = c.solution.system.t
    label = c.to_appendix("The linear system for the constants", None, "", [_mat("M", "M", s.matrix), _mat("r", "r", s.rhs)])
    return [
        Heading(3, "Constants from the initial values"),
        P("Setting ", N(f"{f.m(t)} = {f.m(s.t0)}", f"{f.plain(t)} = {f.plain(s.t0)}"),
          " in the general solution and equating it to ", N("x_0", "x0"), " gives a linear system ", N(r"M\,c = r", "M c = r"),
          " for the constants ", N(f"c = ({c.m_list(s.constants)})^{{T}}", f"c = ({c.plain_list(s.constants)})^T"), ":"),
        _mat("x_0", "x0", s.x0),
        *_constants(s, c, label),
    ]


def _constants(s: Any, c: StepContext, label: str) -> list[Block]:
    """The solved constants, in place when short, else with M and r in the appendix."""
    f = c.fmt
    rows = Eq(tuple((N(f.m(k), f.plain(k)), v) for k, v in s.values))
    if not c.is_long([v for _, v in s.values]):
        return [P("The matrix ", N("M"), " and the right side ", N("r"), f" are written out in Appendix {label}. Its solution:"), rows]
    c.appendix[-1][2].extend([P("Its solution:"), rows])
    return [P("The matrix ", N("M"), " and the right side ", N("r"), ", and the solution ",
              N(c.m_list(s.constants), c.plain_list(s.constants)), f" (long in the indexed roots), are written out in Appendix {label}.")]


def _result(s: Any, c: StepContext) -> list[Block]:
    # the result itself is written once, in the Result section
    where = " is the result stated, component by component and with its parts, in the Result section."
    lead = (
        P("The general solution, with the free constants ", N(c.m_list(s.constants), c.plain_list(s.constants)), ",", where)
        if s.constants
        else P("Substituting the constants gives the result stated, component by component and with its parts, in the Result section.")
    )
    return [Heading(3, "Collected result"), lead]


def _convolution(s: Any, c: StepContext) -> list[Block]:
    f = c.fmt
    T, Tp = f.m(s.t), f.plain(s.t)
    S, Sp = f.m(s.s), f.plain(s.s)
    t0, t0p = f.m(s.t0), f.plain(s.t0)
    out: list[Block] = [
        Heading(3, "Convolution form for ", N(f.m(s.y), f.plain(s.y)), coordinate_letter(c.solution).name),
        P("The equation for ", Math(s.y), ", with eigenvalue ", c.root_value(s.eigenvalue), " and decoupled forcing ",
          N(f"g = {f.m(s.g)}", f"g = {f.plain(s.g)}"),
          ", has no closed-form rule for the integral of the integrating factor, so its solution is written as a "
          "convolution (the free part plus the response to the input from ", Math(s.t0), " to ", N(T, Tp), "):"),
        Eq(((c.fn(s.y), c.compact(s.written)),)),
        P("Since ", N(rf"e^{{\lambda({T} - {S})}} = e^{{\lambda({T} - {t0})}}\,e^{{-\lambda({S} - {t0})}}",
                      f"exp(λ ({Tp} - {Sp})) = exp(λ ({Tp} - {t0p})) exp(-λ ({Sp} - {t0p}))"),
          ", the convolution is a combination of integrals whose integrands do not contain ", N(T, Tp), ":"),
    ]
    for integral, value in s.integrals:
        out.append(Eq(((N(f.m(integral), f.plain(integral)), value),)))
        if value == integral:
            out.append(P("no closed form was found within the time limit: it is kept as a definite integral and "
                         "evaluated by quadrature in the numeric check."))
    out += [P("With these,", runs_on=True), Eq(((c.fn(s.y), c.compact(s.solution)),))]
    return out


def _steady_state(s: Any, c: StepContext) -> list[Block]:
    f = c.fmt
    T, Tp = f.m(s.t), f.plain(s.t)
    j = f.style.imaginary_unit
    basis = "decided exactly" if s.stability == "exact" else "decided at the given parameter values"
    since: tuple[Inline, ...] = (", here the input from ", N(f"{T} = {f.m(s.since)}", f"{Tp} = {f.plain(s.since)}"), " on") if s.since is not None else ()
    out: list[Block] = [
        Heading(3, "Steady state and transient"),
        P(f"Every eigenvalue has a negative real part ({basis}), so the free response decays and the solution tends to "
          "the steady state, the particular solution of the form of the input", *since, "."),
    ]
    if s.constant is not None:
        out += [
            P("For the constant part ", N("f_0", "f0"), " of the input, ", N(r"x_{\mathrm{ss}}' = 0", "x_ss' = 0"), " gives ",
              N(r"x_{\mathrm{ss}} = -A^{-1} f_0", "x_ss = -A^-1 f0"), ":", runs_on=True),
            _mat("f_0", "f0", s.constant),
            _mat("-A^{-1} f_0", "-A^-1 f0", s.x_constant),
        ]
    if s.omega is not None:
        def approx(value: Any) -> tuple[str, str]:
            dec = f.decimal(value)
            if dec and not value.is_Rational:
                return rf" \approx {dec}", f" ~ {f.decimal(value, latex=False)}"
            return "", ""

        rows = []
        for state, amp, ph in zip(c.solution.system.states, s.amplitude, s.phase):
            a_tex, a_plain = approx(amp)
            p_tex, p_plain = approx(ph)
            rows.append((
                (Math(state),),
                (N(f.m(amp) + a_tex, f.plain(amp) + a_plain),),
                (N(f.m(ph) + p_tex, f.plain(ph) + p_plain),),
            ))
        out += [
            P("The sinusoidal part is ", N(rf"\operatorname{{Re}}(F\,e^{{{j} \omega {T}}})", f"Re(F exp({j} ω {Tp}))"),
              " with ", N(rf"\omega = {f.m(s.omega)}", f"ω = {f.plain(s.omega)}"), "; trying ",
              N(rf"x = \operatorname{{Re}}(X\,e^{{{j} \omega {T}}})", f"x = Re(X exp({j} ω {Tp}))"), " gives ",
              N(rf"X = ({j}\omega I - A)^{{-1}} F", f"X = ({j} ω I - A)^-1 F"), ":", runs_on=True),
            _mat("F", "F", s.phasor_in),
            _mat("X", "X", sp.ImmutableMatrix([[tidy(e, c.naming)] for e in s.phasor])),
            P("Each state oscillates as ", N(rf"|X_k| \cos(\omega {T} + \arg X_k)", f"|X_k| cos(ω {Tp} + arg X_k)"), ":"),
        ]
        cell_widths = [visible_width(f.m(v)) for v in (*s.amplitude, *s.phase)]
        if max(cell_widths, default=0) <= f.style.line_width // 3:
            out.append(Table(("State", ("Amplitude ", N("|X_k|")), ("Phase ", N(r"\arg X_k", "arg X_k"), " (rad)")), tuple(rows), align="lll"))
        else:
            # too wide for a table cell: each amplitude and phase as a display of its own, broken as needed
            for k, (amp, ph) in enumerate(zip(s.amplitude, s.phase), start=1):
                amp, ph = _over_one_denominator(amp), _over_one_denominator(ph)
                a_tex, a_plain = approx(amp)
                p_tex, p_plain = approx(ph)
                out.append(Eq(((N(f"|X_{{{k}}}|", f"|X_{k}|"), amp), (N(rf"\arg X_{{{k}}}", f"arg X_{k}"), ph))))
                if a_tex and p_tex:
                    out.append(P("so that ", N(f"|X_{{{k}}}|{a_tex}", f"|X_{k}|{a_plain}"), " and ",
                                 N(rf"\arg X_{{{k}}}{p_tex}", f"arg X_{k}{p_plain}"), " rad.", runs_on=True))
    label = c.to_appendix("The transient", None, "", [
        P("The transient ", N(r"x - x_{\mathrm{ss}}", "x - x_ss"), ", which decays:"),
        Eq(c.state_rows(s.transient, "tr")),
    ])
    out += [
        P("The steady state (the transient ", N(r"x - x_{\mathrm{ss}}", "x - x_ss"), f", which decays, is written out in Appendix {label}):",
          runs_on=True),
        Eq(c.state_rows(s.x_ss, "ss")),
        P("Substituting ", N(r"x_{\mathrm{ss}}", "x_ss"), " into ", N(r"x' = A\,x + f", "x' = A x + f"),
          *((" leaves a zero residual.",) if s.residual_zero else (" does ", Strong("not"), " leave a zero residual."))),
    ]
    return out


def _over_one_denominator(e: Any) -> Any:
    """The argument of each square root and arctangent in ``e`` over one denominator, for display.

    A sum of fractions under a root cannot be broken across lines; over a
    common denominator it is one short fraction.  The value is unchanged.
    """
    if not isinstance(e, sp.Basic):
        return e
    return e.replace(
        lambda x: isinstance(x, sp.atan) or (x.is_Pow and x.exp == sp.S.Half and x.base.is_Add),
        lambda x: sp.atan(sp.cancel(sp.together(x.args[0]))) if isinstance(x, sp.atan) else sp.sqrt(sp.factor(sp.cancel(sp.together(x.base)))),
    )


#: Step kind -> blocks; every kind in ``derive.steps.STEP_KINDS`` has an entry.
STEP_BLOCKS: dict[str, Callable[[Any, StepContext], list[Block]]] = {
    "equations": _equations,
    "charpoly": _charpoly,
    "eigenvalues": _eigenvalues,
    "eigenvector": _eigenvector,
    "jordan_chain": _jordan_chain,
    "modal_matrix": _modal_matrix,
    "inverse": _inverse,
    "similarity": _similarity,
    "decouple": _decouple,
    "scalar": _scalar,
    "recombine": _recombine,
    "real_form": _real_form,
    "initial_values": _initial_values,
    "result": _result,
    "convolution": _convolution,
    "steady_state": _steady_state,
    "values": values_blocks, "outputs": output_blocks,
    "reduction": model_blocks.reduction_blocks,
    "modal": model_blocks.modal_blocks,
    "laplace_check": model_blocks.laplace_blocks,
}
STEP_BLOCKS["shift"] = shift_blocks  # noqa: E305 (time measured from t0; derive.documents.interval_blocks)
STEP_BLOCKS["interval"], STEP_BLOCKS["jump"] = with_decimals(interval_blocks), with_decimals(jump_blocks)  # handed-over states, decimals



def step_blocks(step: Any, ctx: StepContext) -> list[Block]:
    """The blocks of one step; ``OutputError`` names a kind that has no block function."""
    from ..errors import OutputError

    handler = STEP_BLOCKS.get(step.kind)
    if handler is None:
        raise OutputError(f"no rendering for step kind {step.kind!r}; expected one of {', '.join(STEP_BLOCKS)}", key="steps")
    if getattr(step, "t", ctx.t) != ctx.t:  # after a time shift the steps run in tau = t - t0
        ctx = replace(ctx, solution=replace(ctx.solution, system=replace(ctx.solution.system, t=step.t)))
    blocks = handler(step, ctx)
    # the names (omega, Delta, Gamma) a step's formulas use are defined where they first appear,
    # and so are the sheet's own function symbols (the unit step H, the impulse, arg)
    shown = [rhs for b in blocks if isinstance(b, Eq) for _, rhs in b.rows]
    blocks = blocks + notation_blocks(shown, ctx)
    return blocks + ctx.where(*shown) if ctx.naming.rows else blocks
