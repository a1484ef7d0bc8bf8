"""Tests of the renderers, the printer and the safe file output.

The samples below are built by hand (small exact sympy objects for the
system x' = A x + f with A = [[0, 1], [-2, -3]], f = (0, e^{-t}), x(0) = (1, 0),
whose eigenvalues are -1 and -2), so these tests do not depend on the solver.
The solution x_1 = (t - 1) e^{-t} + ... is worked by hand for this file, not
taken from any source.
"""

from __future__ import annotations

import dataclasses
import json
import os
from dataclasses import dataclass, replace
from pathlib import Path
from typing import ClassVar

import re

import jinja2
import pytest
import sympy as sp

import derive
from model_samples import MODEL_HEADINGS, model_step_samples

from derive.errors import InputError, OutputError
from derive.model import Case, NumericCheck, Parameter, SheetMeta, Solution, System, Verification, Condition
from derive.output import check_stem, write_outputs
from derive.render import RENDERERS, Renderer, render
from derive.render.latex import LatexRenderer, template_environment
from derive.render.printing import (
    MathFormatter,
    MathStyle,
    collect_roots,
    format_decimal,
    tex_escape,
    visible_width,
)
from derive.steps import (
    STEP_KINDS,
    ChainLink,
    CharPolyStep,
    DecoupleStep,
    EigenvalueEntry,
    EigenvaluesStep,
    EigenvectorStep,
    EquationsStep,
    InitialValuesStep,
    InverseStep,
    JordanChainStep,
    ModalMatrixStep,
    RealFormPair,
    RealFormStep,
    RecombineStep,
    ResultStep,
    ScalarStep,
    SimilarityStep,
    Step,
    IntervalStep,
    JumpStep,
    ConvolutionStep,
    SteadyStateStep,
    ValuesStep,
    OutputStep,
    ShiftStep,
)

M = sp.ImmutableMatrix
t = sp.Symbol("t", real=True)
lam = sp.Symbol("lambda")
x1, x2 = sp.symbols("x_1 x_2")
y1, y2 = sp.symbols("y_1 y_2")
c1, c2 = sp.symbols("c_1 c_2")
k = sp.Symbol("k", positive=True)
ROOT = sp.CRootOf(sp.Symbol("z") ** 3 - 3 * sp.Symbol("z") + 1, 0)

A = M([[0, 1], [-2, -3]])
F = M([0, sp.exp(-t)])
P_ = M([[1, 1], [-1, -2]])
D_ = M([[-1, 0], [0, -2]])
P_INV = M([[2, 1], [-1, -1]])
X = M([(t + 1) * sp.exp(-t) - sp.exp(-2 * t) + 0 * t, -t * sp.exp(-t) + 2 * sp.exp(-2 * t) - sp.exp(-t)])
XH = M([2 * sp.exp(-t) - sp.exp(-2 * t), -2 * sp.exp(-t) + 2 * sp.exp(-2 * t)])
XP = X - XH


def sample_steps() -> dict[str, Step]:
    """One sample of every step kind, keyed by kind."""
    return {
        "equations": EquationsStep(
            equations=("x_1' = x_2", "x_2' = -2*x_1 - 3*x_2 + exp(-t)"),
            states=(x1, x2), t=t, A=A, f=F,
        ),
        "charpoly": CharPolyStep(
            lam=lam, shifted=A - lam * sp.eye(2), expanded=lam**2 + 3 * lam + 2,
            factored=(lam + 1) * (lam + 2), factors=((lam + 1, 1), (lam + 2, 1)), domain="QQ",
        ),
        "eigenvalues": EigenvaluesStep(
            lam=lam,
            entries=(
                EigenvalueEntry(value=sp.Integer(-1), decimal="-1", algebraic=1, geometric=1, factor=lam + 1, form="rational"),
                EigenvalueEntry(value=ROOT, decimal="-1.8794", algebraic=1, geometric=1, factor=lam**3 - 3 * lam + 1,
                                form="indexed root", rule="degree 3 with casus irreducibilis"),
            ),
        ),
        "eigenvector": EigenvectorStep(
            lam=lam, eigenvalue=lam, root_of=lam**3 - 3 * lam + 1,
            shifted=M([[-lam, 1], [-2, -3 - lam]]), rref=M([[1, -1 / lam], [0, 0]]),
            pivots=(0,), free=(1,), basis=(M([1, lam]),), algebraic=1,
            instances=((ROOT, (M([1, ROOT]),)),),
        ),
        "jordan_chain": JordanChainStep(
            lam=lam, eigenvalue=sp.Integer(-1), root_of=None, algebraic=2, geometric=1,
            shifted=M([[1, 1], [-1, -1]]), vectors=(M([1, -1]), M([1, 0])),
            links=(ChainLink(rhs=M([1, -1]), augmented_rref=M([[1, 1, 1], [0, 0, 0]]), solution=M([1, 0])),),
            instances=(),
        ),
        "modal_matrix": ModalMatrixStep(P=P_, D=D_, diagonal=True, blocks=((sp.Integer(-1), 1), (sp.Integer(-2), 1))),
        "inverse": InverseStep(P=P_, det=sp.Integer(-1), P_inv=P_INV, method="the adjugate formula"),
        "similarity": SimilarityStep(P=P_, D=D_, P_inv=P_INV, product=A, A=A, ok=True),
        "decouple": DecoupleStep(t=t, y=(y1, y2), D=D_, P_inv=P_INV, f=F, g=M([sp.exp(-t), -sp.exp(-t)])),
        "scalar": ScalarStep(
            index=1, t=t, y=y2, eigenvalue=sp.Integer(-1), g=-sp.exp(-t), coupling=None, coupling_value=None,
            rhs=-sp.exp(-t), factor=sp.exp(t), integrand=sp.Integer(-1), integral=-t, constant=c2,
            solution=(c2 - t) * sp.exp(-t), resonant=True,
        ),
        "recombine": RecombineStep(
            P=P_, y=M([y1, y2]), homogeneous_terms=((c1 * sp.exp(-t), M([1, -1])), (c2 * sp.exp(-2 * t), M([1, -2]))),
            homogeneous=XH, particular=XP, x=X,
        ),
        "real_form": RealFormStep(
            t=t,
            pairs=(
                RealFormPair(
                    eigenvalue=-1 + 2 * sp.I, re=sp.Integer(-1), im=sp.Integer(2), vector=M([1, -1 + 2 * sp.I]),
                    vector_re=M([1, -1]), vector_im=M([0, 2]),
                    complex_constants=(c1 / 2 - sp.I * c2 / 2, c1 / 2 + sp.I * c2 / 2),
                    real_constants=(c1, c2),
                    real_part=M([sp.exp(-t) * sp.cos(2 * t), sp.exp(-t) * (-sp.cos(2 * t) - 2 * sp.sin(2 * t))]),
                    imag_part=M([sp.exp(-t) * sp.sin(2 * t), sp.exp(-t) * (2 * sp.cos(2 * t) - sp.sin(2 * t))]),
                ),
            ),
            homogeneous=XH, particular=XP,
        ),
        "initial_values": InitialValuesStep(
            t0=sp.Integer(0), x0=M([1, 0]), matrix=P_, constants=(c1, c2), rhs=M([1, 0]),
            values=((c1, sp.Integer(2)), (c2, sp.Integer(-1))),
        ),
        "result": ResultStep(t=t, states=(x1, x2), x=X, homogeneous=XH, particular=XP, constants=()),
        # the samples below belong to the forcing classes of derive.forcing (switched
        # inputs, impulses, convolution, steady state); small hand-made objects
        "interval": IntervalStep(
            index=2, t=t, start=sp.Integer(1), end=sp.Integer(3), f=M([0, 5]), g=M([5, -5]),
            x_start=M([1, 0]), y_start=M([2, -1]), y=M([2 * sp.exp(1 - t) + 5, -sp.exp(2 - 2 * t)]),
            x=M([5 + 2 * sp.exp(1 - t) - sp.exp(2 - 2 * t), -2 * sp.exp(1 - t) + 2 * sp.exp(2 - 2 * t)]),
            x_end=M([5 + 2 * sp.exp(-2) - sp.exp(-4), -2 * sp.exp(-2) + 2 * sp.exp(-4)]), method="closed form",
        ),
        "jump": JumpStep(t=t, at=sp.Integer(2), weight=M([0, 3]), before=M([1, 0]), after=M([1, 3])),
        "convolution": ConvolutionStep(
            index=1, t=t, s=sp.Symbol("s", real=True), y=y1, eigenvalue=sp.Integer(-1), g=1 / (1 + t**2),
            kernel=sp.exp(sp.Symbol("s", real=True) - t) / (1 + sp.Symbol("s", real=True) ** 2), t0=sp.Integer(0),
            homogeneous=2 * sp.exp(-t),
            integrals=((sp.Integral(sp.exp(sp.Symbol("s", real=True)) / (1 + sp.Symbol("s", real=True) ** 2),
                                    (sp.Symbol("s", real=True), 0, t)),) * 2,),
            closed=False,
            written=2 * sp.exp(-t) + sp.Integral(sp.exp(sp.Symbol("s", real=True) - t) / (1 + sp.Symbol("s", real=True) ** 2),
                                                 (sp.Symbol("s", real=True), 0, t)),
            solution=2 * sp.exp(-t) + sp.exp(-t) * sp.Integral(sp.exp(sp.Symbol("s", real=True)) / (1 + sp.Symbol("s", real=True) ** 2),
                                                               (sp.Symbol("s", real=True), 0, t)),
        ),
        "steady_state": SteadyStateStep(
            t=t, eigenvalues=(sp.Integer(-1), sp.Integer(-2)), stability="exact", forcing=M([0, 2 + sp.cos(t)]),
            constant=M([0, 2]), x_constant=M([1, 0]), omega=sp.Integer(1), phasor_in=M([0, 1]),
            phasor=M([sp.Rational(1, 10) - 3 * sp.I / 10, sp.Rational(3, 10) + sp.I / 10]),
            amplitude=(sp.sqrt(10) / 10, sp.sqrt(10) / 10), phase=(-sp.atan(3), sp.atan(sp.Rational(1, 3))),
            x_ss=M([1 + sp.cos(t) / 10 + 3 * sp.sin(t) / 10, 3 * sp.cos(t) / 10 - sp.sin(t) / 10]),
            transient=M([-sp.exp(-t), sp.exp(-t)]), since=None, residual_zero=True,
        ),
        "values": ValuesStep(t=t, values=((k, sp.Integer(2)),), A_symbolic=M([[0, 1], [-k, -3]]), f_symbolic=F, x0_symbolic=None, A=A, f=F, x0=None),
        "outputs": OutputStep(t=t, states=(x1, x2), names=(sp.Symbol("y_1"),), written=(x1 + x2,), C=M([[1, 1]]), D=M([[0, 0]]), inputs=(), u=F, y=M([X[0] + X[1]]), method="exact"),
        "shift": ShiftStep(t=t, tau=sp.Symbol("tau", real=True), t0=sp.Integer(1), x0=M([1, 0]), f=M([0, sp.sin(t)]),
                           f_shifted=M([0, sp.sin(1) * sp.cos(sp.Symbol("tau", real=True)) + sp.cos(1) * sp.sin(sp.Symbol("tau", real=True))])),
        **model_step_samples(),
    }


#: A heading each renderer must show for each kind (LaTeX, Markdown and text share the words).
HEADINGS = {
    "equations": "The system in matrix form",
    "charpoly": "Characteristic polynomial",
    "eigenvalues": "Eigenvalues",
    "eigenvector": "Eigenvectors for the roots of",
    "jordan_chain": "Jordan chain for",
    "modal_matrix": "Modal matrix",
    "inverse": "Inverse of the modal matrix",
    "similarity": "Check of the decomposition",
    "decouple": "Decoupling",
    "scalar": "Solution for",
    "recombine": "Recombination",
    "real_form": "Real form",
    "initial_values": "Constants from the initial values",
    "result": "Collected result",
    "interval": "Interval 2",
    "jump": "Impulse at",
    "convolution": "Convolution form for",
    "steady_state": "Steady state and transient",
    "values": "Parameter values put into the algebra",
    "outputs": "Outputs",
    "shift": "Time measured from",
    **MODEL_HEADINGS,
}


def make_verification(ok: bool = True) -> Verification:
    return Verification(
        residual=M([0, 0]) if ok else M([sp.exp(-t), 0]),
        residual_zero=ok,
        residual_method="exact",
        initial_residual=M([0, 0]),
        initial_ok=True,
        numeric=NumericCheck(method="DOP853", t_start=0.0, t_end=4.0, points=41, rtol=1e-10, atol=1e-12,
                             max_abs_gap=3.2e-11, max_rel_gap=1.5e-10, ok=True),
        similarity_ok=True,
    )


def make_solution(steps: tuple[Step, ...] | None = None, *, meta: SheetMeta | None = None, ok: bool = True,
                  case: bool = True) -> Solution:
    system = System(A=A, f=F, t=t, states=(x1, x2), x0=M([1, 0]), t0=sp.Integer(0),
                    params=(Parameter(k, sp.Rational(5, 2), unit="N/m", description="spring rate, 50% of k_max"),))
    the_case = Case(
        name="demo", system=system, meta=meta or SheetMeta(project="Pump skid P-7", calc_number="C-0042"),
        source="cases/demo.toml", source_hash="ab" * 32, notices=("0.5 was read as 1/2",),
    ) if case else None
    return Solution(
        system=system, x=X, constants=(), eigenvalues=(sp.Integer(-1), sp.Integer(-2)), P=P_, D=D_, P_inv=P_INV,
        is_diagonalizable=True, homogeneous=XH, particular=XP,
        steps=tuple(sample_steps().values()) if steps is None else steps,
        verification=make_verification(ok),
        conditions=(Condition(expr=k - 1, relation="!= 0", reason="distinct eigenvalues"),),
        case=the_case,
    )


# ---------------------------------------------------------------------------
# The contract: every step kind through every renderer


def test_samples_cover_every_step_kind() -> None:
    assert set(sample_steps()) == {kind.kind for kind in STEP_KINDS}
    assert set(HEADINGS) == {kind.kind for kind in STEP_KINDS}
    assert [type(s) for s in sample_steps().values()] == list(STEP_KINDS)


@pytest.mark.parametrize("fmt", sorted(RENDERERS))
@pytest.mark.parametrize("kind", [k.kind for k in STEP_KINDS])
def test_every_kind_renders_in_every_format(kind: str, fmt: str) -> None:
    step = sample_steps()[kind]
    text = render(make_solution((step,)), fmt)
    without = render(make_solution(()), fmt)
    assert len(text) > len(without)
    if fmt == "json":
        record = json.loads(text)
        assert [s["kind"] for s in record["steps"]] == [kind]
        assert set(record["steps"][0]["fields"]) == {f.name for f in dataclasses.fields(step)}
    else:
        assert HEADINGS[kind] in text
        assert HEADINGS[kind] not in without or kind == "eigenvalues"


def test_renderers_share_the_base_class_and_suffixes() -> None:
    assert list(RENDERERS) == ["latex", "markdown", "text", "json"]
    assert {r.suffix for r in RENDERERS.values()} == {".tex", ".md", ".txt", ".json"}
    assert all(isinstance(r, Renderer) for r in RENDERERS.values())
    assert all(r.name == key for key, r in RENDERERS.items())


@dataclass(frozen=True)
class MysteryStep(Step):
    kind: ClassVar[str] = "mystery"
    value: sp.Expr


@pytest.mark.parametrize("fmt", ["latex", "markdown", "text"])
def test_a_step_kind_without_a_renderer_fails_loudly(fmt: str) -> None:
    with pytest.raises(OutputError, match="mystery"):
        render(make_solution((MysteryStep(sp.Integer(1)),)), fmt)


def test_full_sheet_in_every_format() -> None:
    sol = make_solution()
    for fmt in RENDERERS:
        text = render(sol, fmt)
        assert "VERIFICATION FAILED" not in text
    tex = render(sol, "latex")
    order = ["Purpose", "Inputs", "Assumptions", "Method", "Derivation", "Result", "Verification", "References", "Caution"]
    positions = [tex.index(r"\derivesection{%s}" % name) for name in order]
    assert positions == sorted(positions)
    assert r"\VAR{" not in tex and r"\BLOCK{" not in tex
    # the indexed root (not among the eigenvalues -1, -2) is numbered after them,
    # its polynomial is said and its decimal shown
    assert r"\lambda_{3} \approx -1.8794" in tex
    assert r"q(\lambda) = \lambda^{3} - 3 \lambda + 1 = 0" in tex
    assert "for each root" in tex.lower() or "For each root" in tex
    assert r"\setcounter{MaxMatrixCols}{20}" in tex
    assert "sha256" in tex.lower() and "ab" * 32 in tex
    assert "must be checked and approved" in tex


def test_caution_and_program_in_compact_formats() -> None:
    sol = make_solution()
    for fmt in ("markdown", "text"):
        text = render(sol, fmt)
        assert "must be checked and approved" in text
        assert f"eigensheet {derive.__version__}" in text
        assert "sympy " + sp.__version__ in text


def test_failed_verification_is_prominent_everywhere() -> None:
    sol = make_solution(ok=False)
    for fmt in ("latex", "markdown", "text"):
        assert "VERIFICATION FAILED: do not use this result" in render(sol, fmt)
    assert json.loads(render(sol, "json"))["verification"]["ok"] is False


def test_general_solution_without_case_uses_defaults() -> None:
    sol = replace(make_solution(case=False), constants=(c1, c2))
    tex = render(sol, "latex")
    assert SheetMeta().title.replace("'", "'") in tex
    assert "Python interface" in tex


# ---------------------------------------------------------------------------
# User text is escaped, mathematics is not


HOSTILE = r"Load & 50% $5 #1 a_b {x} ~ ^ \input{/etc/passwd}"


def test_user_text_with_all_specials_is_escaped_in_tex() -> None:
    meta = SheetMeta(title=HOSTILE, project=HOSTILE, prepared_by=HOSTILE, notes=HOSTILE,
                     assumptions=(HOSTILE,), references=(HOSTILE,))
    tex = render(make_solution(meta=meta), "latex")
    assert r"\input{/etc/passwd}" not in tex
    escaped = tex_escape(HOSTILE)
    assert escaped == (r"Load \& 50\% \$5 \#1 a\_b \{x\} \textasciitilde{} \textasciicircum{} "
                       r"\textbackslash{}input\{/etc/passwd\}")
    assert tex.count(escaped) >= 6
    frag = render(make_solution(meta=meta), "latex", fragment=True)
    assert r"\input{/etc/passwd}" not in frag


def test_math_is_not_escaped() -> None:
    tex = render(make_solution(), "latex")
    assert r"\begin{bmatrix}0 & 1\\-2 & -3\end{bmatrix}" in tex
    assert r"e^{- t}" in tex


def test_markdown_escapes_user_text() -> None:
    md = render(make_solution(meta=SheetMeta(title="# <script>x</script> [a](b)")), "markdown")
    assert "<script>" not in md
    assert r"\[a\](b)" in md and "[a](b)" not in md


# ---------------------------------------------------------------------------
# Templates


def test_strict_undefined_fails_on_a_missing_field() -> None:
    env = template_environment()
    with pytest.raises(jinja2.UndefinedError):
        env.from_string(r"\VAR{nothing_here}").render()

    @dataclass(frozen=True)
    class Crippled:  # an inverse step that lost its det field
        kind: ClassVar[str] = "inverse"
        P: sp.ImmutableMatrix
        P_inv: sp.ImmutableMatrix
        method: str

    # the inverse step is described once, by its block function (derive.documents.sheet_steps),
    # for LaTeX as for the other formats: a missing field stops every one of them
    for fmt in ("latex", "markdown", "text"):
        with pytest.raises(AttributeError, match="det"):
            render(make_solution((Crippled(P=P_, P_inv=P_INV, method="x"),)), fmt)


def test_template_delimiters_and_no_glued_words() -> None:
    env = template_environment()
    assert (env.block_start_string, env.variable_start_string, env.comment_start_string) == (r"\BLOCK{", r"\VAR{", r"\#{")
    assert env.line_statement_prefix is None and env.autoescape is False
    tex = render(make_solution(), "latex")
    for phrase in ("given below, with the initial values", "reduces to zero (method: exact)",
                   "Input file & \\texttt{cases/demo.toml}", "Date & \\\\"):
        assert phrase in tex


def test_fragment_has_no_preamble_and_lists_packages() -> None:
    sol = make_solution()
    frag = render(sol, "latex", fragment=True)
    full = render(sol, "latex")
    assert r"\documentclass" not in frag and r"\begin{document}" not in frag and r"\usepackage" not in frag
    assert frag.startswith("%")
    first_lines = "\n".join(frag.splitlines()[:3])
    for pkg in ("amsmath", "amssymb", "mathtools", "booktabs", "refcount"):
        assert pkg in first_lines
    assert r"\documentclass" in full and r"\begin{document}" in full and r"\end{document}" in full
    assert full.index(r"\usepackage{hyperref}" if r"\usepackage{hyperref}" in full else r"]{hyperref}") > full.index(r"\usepackage{refcount}")
    assert r"\derivesection{Result}" in frag


def test_unknown_format_lists_known_ones() -> None:
    with pytest.raises(InputError) as info:
        render(make_solution(), "docx")
    assert "docx" in str(info.value)
    for name in RENDERERS:
        assert name in str(info.value)


def test_json_is_stable_and_complete() -> None:
    sol = make_solution()
    a, b = render(sol, "json"), render(sol, "json")
    assert a == b
    record = json.loads(a)
    assert record["system"]["A"] == [["0", "1"], ["-2", "-3"]]
    assert record["eigenvalues"] == ["-1", "-2"]
    assert record["P_inv"] == [["2", "1"], ["-1", "-1"]]
    assert record["verification"]["numeric"]["max_rel_gap"] == 1.5e-10
    assert record["conditions"] == [{"expr": "k - 1", "relation": "!= 0", "reason": "distinct eigenvalues"}]
    assert [s["kind"] for s in record["steps"]] == [k.kind for k in STEP_KINDS]
    assert list(record) == sorted(record)
    assert "Symbol(" not in a  # str, not srepr


# ---------------------------------------------------------------------------
# The printer


def fmt(**kw: object) -> MathFormatter:
    return MathFormatter.for_roots(collect_roots((sp.Integer(-1), ROOT)), style=MathStyle(**kw))  # type: ignore[arg-type]


def test_printer_notation() -> None:
    f = fmt()
    assert f.m(sp.Heaviside(t - 3)) == r"\mathrm{H}\left(t - 3\right)"
    assert f.m(sp.DiracDelta(t - 2)) == r"\delta\left(t - 2\right)"
    assert f.m(sp.exp(-2 * t)) == r"e^{- 2 t}"
    a, b, m1, m2 = sp.symbols("a b m_1 m_2", positive=True)
    assert f.m(sp.exp(-(a + b) * t / (m1 + m2) + sp.sqrt(5) * t)).startswith(r"\exp\left(")
    assert f.m(sp.Symbol("T1")) == "T_{1}"
    assert f.m(ROOT) == r"\lambda_{2}"
    assert f.root_value(ROOT) == r"\lambda_{2} \approx -1.8794"
    assert fmt(imaginary_unit="j").m(1 + 2 * sp.I) == "1 + 2 j"
    assert f.plain(sp.Heaviside(t - 3) + ROOT) in ("λ_2 + H(t - 3)", "H(t - 3) + λ_2")


def test_unknown_imaginary_unit_is_refused() -> None:
    with pytest.raises(InputError, match="imaginary_unit"):
        MathStyle(imaginary_unit="k")


def test_decimals() -> None:
    assert format_decimal(sp.Rational(1, 3)) == "0.33333"
    assert format_decimal(-1 + 2 * sp.I, unit="j") == "-1 + 2 j"
    assert format_decimal(sp.Symbol("a")) == ""
    assert format_decimal(sp.Rational(1, 10**9), latex=True) == r"1 \times 10^{-9}"


def test_long_sums_are_broken_within_the_line_width() -> None:
    f = fmt()
    expr = sp.expand((1 + t) ** 14 * sp.exp(-t))
    block = f.display([("x_{1}(t)", expr)])
    lines = block.splitlines()[1:-1]
    assert len(lines) > 2
    for line in lines:
        assert visible_width(line) <= f.style.line_width + 8
    # the pieces still add up to the expression: every term appears once
    assert block.count("e^{- t}") == len(expr.args)


def test_large_matrices_are_shown_by_columns_or_elements() -> None:
    f = fmt()
    big = sp.ImmutableMatrix(6, 6, lambda i, j: i - j)
    shown = f.matrix_display("P", big)
    # six columns of six entries: each column a transposed row on a line of its own, not six tall brackets
    assert r"\operatorname{col}_{6} P = \bigl(-5, -4, -3, -2, -1, 0\bigr)^{T}" in shown and r"\begin{bmatrix}" not in shown
    assert shown.count(r"\operatorname{col}_") == 6
    tall = sp.ImmutableMatrix(3, 6, lambda i, j: i - j)
    assert f.matrix_display("Q", tall).count(r"\begin{bmatrix}") >= 1  # short columns stay bracketed
    assert f.matrix_display("v", sp.ImmutableMatrix([1, 0, -1, 2])) == "\\begin{align*}\nv &= \\bigl(1, 0, -1, 2\\bigr)^{T}\n\\end{align*}"
    wide = sp.ImmutableMatrix([[sp.expand((1 + t) ** 9), 1], [0, 2]])
    shown = f.matrix_display("M", wide)
    assert "M_{11}" in shown and "all other entries" in shown
    small = sp.ImmutableMatrix([[1, 2], [3, 4]])
    assert f.matrix_display("A", small).count(r"\begin{bmatrix}") == 1


# ---------------------------------------------------------------------------
# Output files


def test_write_outputs_writes_atomically(tmp_path: Path) -> None:
    sol = make_solution()
    paths = write_outputs(sol, tmp_path, stem="calc-1", formats=("latex", "markdown", "text", "json"), pdf=False)
    names = sorted(p.name for p in paths)
    assert names == ["calc-1-body.tex", "calc-1-eigenvalues.svg", "calc-1-response.svg", "calc-1.json", "calc-1.md", "calc-1.tex", "calc-1.txt"]
    assert sorted(p.name for p in tmp_path.iterdir()) == names  # no temporary file left
    assert (tmp_path / "calc-1.tex").read_text(encoding="utf-8") == render(sol, "latex")
    assert (tmp_path / "calc-1-body.tex").read_text(encoding="utf-8") == render(sol, "latex", fragment=True)


def test_failing_render_leaves_existing_output_untouched(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    old = tmp_path / "calc.tex"
    old.write_text("old sheet", encoding="utf-8")

    class Broken(LatexRenderer):
        def render(self, solution: Solution, *, fragment: bool = False) -> str:
            raise OutputError("renderer broke")

    monkeypatch.setitem(RENDERERS, "latex", Broken())
    with pytest.raises(OutputError, match="renderer broke"):
        write_outputs(make_solution(), tmp_path, stem="calc", formats=("latex", "json"), pdf=False)
    assert old.read_text(encoding="utf-8") == "old sheet"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["calc.tex"]


def test_interrupted_write_leaves_no_half_file(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    old = tmp_path / "calc.json"
    old.write_text("{}", encoding="utf-8")

    def refuse(src: str, dst: str) -> None:
        raise KeyboardInterrupt

    monkeypatch.setattr(os, "replace", refuse)
    with pytest.raises(KeyboardInterrupt):
        write_outputs(make_solution(), tmp_path, stem="calc", formats=("json",), pdf=False)
    assert old.read_text(encoding="utf-8") == "{}"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["calc.json"]


@pytest.mark.parametrize("stem", ["../x", "a/b", ".hidden", "", "..", "x\\y", "a\x00b", "/etc/x"])
def test_bad_stems_are_refused(tmp_path: Path, stem: str) -> None:
    with pytest.raises(InputError, match="plain file name"):
        write_outputs(make_solution(), tmp_path / "out", stem=stem, pdf=False)
    assert not (tmp_path / "out").exists()
    assert not (tmp_path / "x").exists()


def test_good_stem_passes() -> None:
    assert check_stem("pump_skid.rev-B") == "pump_skid.rev-B"


def test_unknown_format_in_write_outputs(tmp_path: Path) -> None:
    with pytest.raises(InputError, match="docx"):
        write_outputs(make_solution(), tmp_path, stem="c", formats=("docx",), pdf=False)
    assert list(tmp_path.iterdir()) == []


def test_pdf_true_without_latexmk_is_an_output_error(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setenv("PATH", str(tmp_path / "empty"))
    with pytest.raises(OutputError, match="latexmk"):
        write_outputs(make_solution(), tmp_path, stem="c", pdf=True)
    # the .tex was still written: the result is right, only the PDF is missing
    assert (tmp_path / "c.tex").is_file()


def test_indexed_roots_print_as_polynomials_without_evaluating_the_root(monkeypatch):
    """Sums and products holding an indexed root print in powers of its name, and
    printing never evaluates the root (sympy's own term order would, refining the
    root's interval each time: seconds on a quintic's sheet)."""
    from derive.render.printing import PlainPrinter, SheetLatexPrinter

    x, t = sp.symbols("x t")
    r = sp.CRootOf(x**5 - x - 1, 1)
    e = (r**4 - r**2 + r - 1) * sp.exp(r * t) + 3 * t / (r + 2)

    def no_evaluation(self, prec):
        raise AssertionError("the printer evaluated an indexed root")

    monkeypatch.setattr(sp.CRootOf, "_eval_evalf", no_evaluation)
    tex = SheetLatexPrinter({"root_names": {r: 2}}).doprint(e)
    assert r"\left(\lambda_{2}^{4} - \lambda_{2}^{2} + \lambda_{2} - 1\right) e^{\lambda_{2} t}" in tex
    assert r"\lambda_{2} + 2" in tex
    text = PlainPrinter({"root_names": {r: 2}}).doprint(e)
    assert "(λ_2^4 - λ_2^2 + λ_2 - 1) exp(λ_2 t)" in text
    # a root the sheet did not name is still said in full
    assert r"\text{root } 1 \text{ of }" in SheetLatexPrinter().doprint(r + 1)


# ---------------------------------------------------------------------------
# deferred step fields (display-only pieces built on first read)


def test_a_deferred_field_is_computed_once_and_reads_as_a_value():
    import pickle

    from derive.steps import CharPolyStep, Deferred

    calls = []

    def shifted(k):
        calls.append(k)
        return sp.ImmutableMatrix([[k]])

    lam = sp.Symbol("lambda")
    step = CharPolyStep(lam=lam, shifted=Deferred(shifted, 3), expanded=lam, factored=lam, factors=((lam, 1),), domain="QQ")
    assert calls == []
    assert step.shifted == sp.ImmutableMatrix([[3]])
    assert step.shifted == sp.ImmutableMatrix([[3]])
    assert calls == [3]
    # a lambda cannot be pickled: pickling must send the value, not the recipe
    other = CharPolyStep(lam=lam, shifted=Deferred(lambda: sp.ImmutableMatrix([[5]])), expanded=lam, factored=lam, factors=((lam, 1),), domain="QQ")
    back = pickle.loads(pickle.dumps(other))
    assert back.shifted == sp.ImmutableMatrix([[5]])
    assert back == other
    assert dataclasses.replace(step, domain="ZZ").shifted == sp.ImmutableMatrix([[3]])


def test_a_pickled_solution_renders_the_same_sheet():
    """The batch workers pickle solutions before any sheet is made: the deferred
    pieces travel as values and the sheet is the same as one made in place."""
    import pickle

    import derive

    t = sp.Symbol("t")
    # a defective block (Jordan chain), a complex pair (real form) and a forcing
    A = [[-1, 1, 0, 0], [0, -1, 0, 0], [0, 0, -1, 2], [0, 0, -2, -1]]
    sol = derive.solve(A, [0, sp.exp(-2 * t), 0, 1], t=t, x0=[1, 0, 0, 1])
    copy = pickle.loads(pickle.dumps(sol))
    for fmt in ("latex", "json", "markdown"):
        assert render(copy, fmt) == render(sol, fmt)


@pytest.mark.parametrize(
    "arg, shown",
    [
        (2 - 2 * sp.Symbol("t"), r"- 2 \left(t - 1\right)"),
        (1 - sp.Symbol("t"), r"- (t - 1)"),
        (sp.Rational(2, 3) - 2 * sp.Symbol("t"), r"- 2 \left(t - \frac{1}{3}\right)"),
        (sp.Symbol("t") - 1, "t - 1"),  # already in that form
        (-3 * sp.Symbol("t"), r"- 3 t"),  # no offset
        (sp.I * sp.Symbol("t") + 2, "i t + 2"),  # not a real rate
    ],
)
def test_an_exponent_with_an_offset_reads_as_a_delay(arg, shown):
    """e^{m t + c} is printed e^{m (t - a)}, a = -c/m: the form a switched response
    takes by hand; the value is unchanged (sympy's expand as the check)."""
    from derive.render.printing import shifted_argument

    assert sp.expand(shifted_argument(arg) - arg) == 0
    from derive.render.printing import SheetLatexPrinter

    assert SheetLatexPrinter().doprint(sp.exp(arg)) == "e^{%s}" % shown


def test_a_sinusoid_after_a_switch_reads_with_the_delay():
    """The damped oscillation that starts at t = 1 is printed e^{-(t-1)} sin(2(t-1)),
    and the plain text the same way; sympy's own latex is the reference for the rest."""
    from derive.render.printing import PlainPrinter, SheetLatexPrinter

    t = sp.Symbol("t")
    e = sp.exp(1 - t) * sp.sin(2 * t - 2) + sp.cos(2 * t - 2) ** 2
    tex = SheetLatexPrinter().doprint(e)
    assert r"e^{- (t - 1)} \sin{\left(2 \left(t - 1\right) \right)}" in tex
    assert r"\cos^{2}{\left(2 \left(t - 1\right) \right)}" in tex
    assert PlainPrinter().doprint(sp.sin(2 * t - 2)) == "sin(2 (t - 1))"
    assert SheetLatexPrinter().doprint(sp.sin(3 * t)) == sp.latex(sp.sin(3 * t))


def test_a_long_display_is_set_as_several_aligns_cut_between_rows() -> None:
    # TeX builds a whole display in memory before breaking it across pages: one align* of thousands
    # of lines (an appendix of exact coefficients) ended in "TeX capacity exceeded"
    from derive.render.printing import ALIGN_LINES, MathFormatter

    fmt = MathFormatter.for_roots(())
    x = sp.Symbol("x")
    rows = []
    for k in range(3 * ALIGN_LINES):
        rows += [(f"a_{{{k}}}", x + k), ("", (r"\approx", sp.Float(k + 0.5, 4)))]
    tex = fmt.display(rows)
    blocks = tex.split(r"\end{align*}")[:-1]
    assert len(blocks) == tex.count(r"\begin{align*}") >= 6
    for block in blocks:
        lines = block.split(" \\\\\n")
        assert len(lines) <= ALIGN_LINES
        # a row's decimal line stays with its row: no block opens with "≈"
        assert not lines[0].split(r"\begin{align*}")[1].strip().startswith(r"&\approx")
    # every row is there, in order
    assert [int(m) for m in re.findall(r"a_\{(\d+)\}", tex)] == list(range(3 * ALIGN_LINES))
    # a short display is one align*, as before
    assert fmt.display(rows[:4]).count(r"\begin{align*}") == 1
