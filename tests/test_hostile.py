"""A corpus of malformed and hostile case files.

Each entry is written to a fresh folder and loaded with ``load_case``.  The
refused ones must raise the stated class with exit code 2, name the key in
the message, and never create the canary file that the injection tries to
write.  Inputs are bounded so the whole corpus loads in well under a second
per case.  LaTeX and path-like text in metadata must load unchanged: escaping
is the renderer's job, not the loader's.
"""

from __future__ import annotations

import json
from dataclasses import dataclass
from pathlib import Path

import pytest

from derive.casefile import load_case, loads_case
from derive.errors import CaseFileError, DeriveError, ExpressionError, InputError, LimitError

CANARY = "{canary}"  # replaced by the absolute path of tmp_path/"canary"


def q(text: str) -> str:
    """A TOML basic string (JSON string escapes are valid TOML)."""
    return json.dumps(text)


def in_matrix(expr: str) -> str:
    return f"[system]\nmatrix = [[{q(expr)}]]\n"


def in_forcing(expr: str) -> str:
    return f"[system]\nmatrix = [[-1]]\nforcing = [{q(expr)}]\n"


def in_equation(rhs: str) -> str:
    return f"[system]\nequations = [{q('x1' + chr(39) + ' = ' + rhs)}]\n"


@dataclass(frozen=True)
class Hostile:
    id: str
    text: str
    error: type[InputError]
    key: str | None  # the key the message must name; None for whole-file problems


M00, F0, EQ0 = "system.matrix[0][0]", "system.forcing[0]", "system.equations[0]"

CORPUS: tuple[Hostile, ...] = (
    # -- code injection through the expression grammar --
    Hostile("class-base", in_matrix("().__class__.__base__.__subclasses__()"), ExpressionError, M00),
    Hostile("import-system", in_forcing(f"__import__('os').system('touch {CANARY}')"), ExpressionError, F0),
    Hostile("import-bare", in_forcing("__import__"), ExpressionError, F0),
    Hostile("open-write", in_forcing(f"open('{CANARY}', 'w')"), ExpressionError, F0),
    Hostile("exec-string", in_forcing(f"exec(\"open('{CANARY}','w')\")"), ExpressionError, F0),
    Hostile("eval-string", in_forcing(f"eval(\"open('{CANARY}','w')\")"), ExpressionError, F0),
    Hostile("compile", in_matrix("compile('1', 'f', 'eval')"), ExpressionError, M00),
    Hostile("getattr", in_matrix("getattr(t, 'real')"), ExpressionError, M00),
    Hostile("globals", in_matrix("globals()"), ExpressionError, M00),
    Hostile("builtins", in_matrix("__builtins__"), ExpressionError, M00),
    Hostile("func-globals", in_matrix("sin.__globals__"), ExpressionError, M00),
    Hostile("lambda", in_forcing(f"(lambda: open('{CANARY}', 'w'))()"), ExpressionError, F0),
    Hostile("listcomp", in_forcing(f"[open('{CANARY}', 'w') for _ in (1,)]"), ExpressionError, F0),
    Hostile("genexp", in_forcing(f"sum(open('{CANARY}', 'w') for _ in (1,))"), ExpressionError, F0),
    Hostile("walrus", in_forcing("(x := 1)"), ExpressionError, F0),
    Hostile("import-stmt", in_forcing("import os"), ExpressionError, F0),
    Hostile("semicolon", in_forcing(f"1; open('{CANARY}', 'w')"), ExpressionError, F0),
    Hostile("fstring", in_forcing(f"f\"{{open('{CANARY}', 'w')}}\""), ExpressionError, F0),
    Hostile("subscript", in_matrix("t[0]"), ExpressionError, M00),
    Hostile("sympy-ctor", in_matrix("Symbol('x')"), ExpressionError, M00),
    Hostile("fullwidth-open", in_forcing(f"\uff4f\uff50\uff45\uff4e('{CANARY}', 'w')"), ExpressionError, F0),
    Hostile("keyword-arg", in_matrix("exp(x=open('f'))"), ExpressionError, M00),
    Hostile("in-equation", in_equation(f"-x1 + __import__('os').system('touch {CANARY}')"), ExpressionError, EQ0),
    Hostile(
        "in-param-value",
        f"[system]\nmatrix = [[\"-k\"]]\n[parameters.k]\nvalue = {q(f'open({CANARY!r})')}\n",
        CaseFileError,
        "parameters.k.value",
    ),
    Hostile(
        "in-t0",
        f"[system]\nmatrix = [[-1]]\n[initial]\nt0 = {q('__import__(1)')}\nvalues = [1]\n",
        CaseFileError,
        "initial.t0",
    ),
    Hostile(
        "in-initial",
        f"[system]\nmatrix = [[-1]]\n[initial]\nvalues = [{q(f'open({CANARY!r}, {chr(39)}w{chr(39)})')}]\n",
        ExpressionError,
        "initial.values[0]",
    ),
    Hostile("state-name-code", f"[system]\nstates = [{q('__import__')}]\nmatrix = [[-1]]\n", CaseFileError, "system.states[0]"),
    Hostile("t-name-code", f"[system]\nt = {q('os.system')}\nmatrix = [[-1]]\n", CaseFileError, "system.t"),
    Hostile("param-dunder", '[system]\nmatrix = [[-1]]\n[parameters."__class__"]\n', CaseFileError, "parameters.__class__"),
    # -- resource exhaustion --
    Hostile("tower-9", in_matrix("9^9^9^9"), LimitError, M00),
    Hostile("tower-10", in_forcing("10**10**10"), LimitError, F0),
    Hostile("exp-of-log", in_forcing("exp(10^40*log(2))"), LimitError, F0),
    Hostile("nested-powers", in_forcing("((t^50)^50)^50"), LimitError, F0),
    Hostile("paren-500", in_matrix("(" * 500 + "1" + ")" * 500), LimitError, M00),
    Hostile("unary-900", in_matrix("-" * 900 + "1"), LimitError, M00),
    Hostile("calls-100", in_forcing("sin(" * 100 + "t" + ")" * 100), LimitError, F0),
    Hostile("long-100k", in_forcing("t+" * 50_000 + "t"), LimitError, F0),
    Hostile("int-literal-400", in_matrix("1" * 400), LimitError, M00),
    Hostile("int-literal-5000", in_matrix("1" * 5000), LimitError, M00),
    Hostile("toml-int-60", "[system]\nmatrix = [[" + "9" * 60 + "]]\n", LimitError, M00),
    Hostile("float-exponent", in_matrix("1e999999999"), LimitError, M00),
    Hostile("big-root", in_forcing("sqrt(10^100 + 1)"), LimitError, F0),
    Hostile(
        "dimension-13",
        "[system]\nmatrix = [" + ", ".join("[" + ", ".join(["0"] * 13) + "]" for _ in range(13)) + "]\n",
        LimitError,
        "system.matrix",
    ),
    Hostile("toml-deep-arrays", "[system]\nmatrix = " + "[" * 3000 + "]" * 3000 + "\n", LimitError, None),
    Hostile("huge-file", "# " + "x" * 1_100_000 + "\n[system]\nmatrix = [[-1]]\n", LimitError, None),
    # -- malformed files --
    Hostile("bad-toml", "[system\nmatrix = [[-1]]\n", CaseFileError, None),
    Hostile("bad-toml-value", "[system]\nmatrix = [[-k]]\n", CaseFileError, None),
    Hostile("duplicate-table", "[system]\nmatrix = [[-1]]\n[parameters.k]\n[parameters.k]\n", CaseFileError, None),
    Hostile("unknown-top", "[system]\nmatrix = [[-1]]\n[output]\npath = '/tmp/x'\n", CaseFileError, "output"),
    Hostile("unknown-system", "[system]\nmatrix = [[-1]]\nsolver = 'x'\n", CaseFileError, "system.solver"),
    Hostile("ragged", "[system]\nmatrix = [[1, 2], [3]]\n", CaseFileError, "system.matrix[1]"),
    Hostile("not-square", "[system]\nmatrix = [[1, 2]]\n", CaseFileError, "system.matrix[0]"),
    Hostile("forcing-length", "[system]\nmatrix = [[-1, 0], [0, -1]]\nforcing = [1, 2, 3]\n", CaseFileError, "system.forcing"),
    Hostile("initial-length", "[system]\nmatrix = [[-1, 0], [0, -1]]\n[initial]\nvalues = [1]\n", CaseFileError, "initial.values"),
    Hostile("matrix-is-table", "[system]\n[system.matrix]\na = 1\n", CaseFileError, "system.matrix"),
    Hostile("nonlinear", in_equation("x1^2"), ExpressionError, EQ0),
    Hostile("nonlinear-sin", in_equation("sin(x1)"), ExpressionError, EQ0),
    Hostile("t-dependent-A", in_matrix("-(1 + t)"), CaseFileError, M00),
    Hostile("t-dependent-eq", in_equation("-exp(t)*x1"), ExpressionError, EQ0),
    Hostile("undeclared", in_matrix("-k"), ExpressionError, M00),
    Hostile("path-state-name", f"[system]\nstates = [{q('../x')}]\nmatrix = [[-1]]\n", CaseFileError, "system.states[0]"),
    Hostile("nul-in-expr", in_forcing("t\u0000+1"), ExpressionError, F0),
    Hostile("boolean-entry", "[system]\nmatrix = [[true]]\n", CaseFileError, M00),
    Hostile("date-entry", "[system]\nmatrix = [[2026-01-01]]\n", CaseFileError, M00),
)


def test_corpus_is_large_enough() -> None:
    assert len(CORPUS) >= 40
    assert len({h.id for h in CORPUS}) == len(CORPUS)


@pytest.mark.parametrize("case", CORPUS, ids=[h.id for h in CORPUS])
def test_hostile_case_is_refused(case: Hostile, tmp_path: Path) -> None:
    canary = tmp_path / "canary"
    path = tmp_path / f"{case.id}.toml"
    path.write_text(case.text.replace(CANARY, str(canary)), encoding="utf-8")
    with pytest.raises(DeriveError) as info:
        load_case(path)
    err = info.value
    assert type(err) is case.error, f"{type(err).__name__}: {err}"
    assert err.exit_code == 2
    assert err.file == str(path)
    if case.key is not None:
        assert err.key == case.key
        assert case.key in str(err)
    else:
        assert str(path) in str(err)
    assert not canary.exists()
    assert not list(tmp_path.glob("*canary*"))


def test_bad_toml_points_at_line(tmp_path: Path) -> None:
    path = tmp_path / "bad.toml"
    path.write_text("[system]\nmatrix = [[-k]]\n", encoding="utf-8")
    with pytest.raises(CaseFileError) as info:
        load_case(path)
    assert info.value.line == 2 and info.value.column is not None


# -- hostile-looking text that must load, kept verbatim --

VERBATIM = {
    "title": r"\input{/etc/passwd}",
    "project": r"\immediate\write18{touch canary}",
    "subject": r"$\def\x{\x}\x$",
    "prepared_by": "../../etc/passwd",
    "checked_by": r"C:\Windows\System32",
    "purpose": r"100% & #1 _under_ {braces} ~tilde^ \\ \end{document}",
    "notes": "__import__('os').system('touch canary')",
}


def test_latex_and_paths_in_metadata_load_verbatim(tmp_path: Path) -> None:
    lines = ["[sheet]"] + [f"{k} = {q(v)}" for k, v in VERBATIM.items()]
    state_text = r"\(x_1\) in \si{\metre}"
    unit_text = r"\textbf{kW}"
    lines += ["assumptions = [" + q("\\catcode`\\@=11") + "]", "[sheet.states]", "x1 = " + q(state_text)]
    lines += ["[system]", "matrix = [[-1]]", "[parameters.k]", "unit = " + q(unit_text), "description = " + q("%comment")]
    path = tmp_path / "latex.toml"
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    case = load_case(path)
    for key, value in VERBATIM.items():
        assert getattr(case.meta, key) == value
    assert case.meta.assumptions == ("\\catcode`\\@=11",)
    assert case.meta.state_descriptions == (("x1", r"\(x_1\) in \si{\metre}"),)
    p = case.system.params[0]
    assert (p.unit, p.description) == (r"\textbf{kW}", "%comment")
    assert not (tmp_path / "canary").exists()


@pytest.mark.parametrize("name", ["../../etc/passwd", "/abs/path", "..", "a\\..\\b"])
def test_traversal_names_refused(name: str) -> None:
    with pytest.raises(CaseFileError) as info:
        loads_case("[system]\nmatrix = [[-1]]\n", name=name)
    assert info.value.key == "name" and info.value.exit_code == 2


def test_traversal_looking_file_stem_is_sanitised(tmp_path: Path) -> None:
    path = tmp_path / "..evil;rm -rf.toml"
    path.write_text("[system]\nmatrix = [[-1]]\n", encoding="utf-8")
    case = load_case(path)
    assert case.name == "evil_rm_-rf"
    assert "/" not in case.name and not case.name.startswith(".")
