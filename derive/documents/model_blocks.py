"""The sheet's blocks for the model forms: reduction to first order, the modal route, the Laplace check.

One function per step kind, ``(step, ctx) -> list[Block]``, registered in
``sheet_steps.STEP_BLOCKS``; ``ctx`` is the sheet's ``StepContext`` (taken as
``Any`` here: sheet_steps imports this module).
"""

from __future__ import annotations

from typing import Any

import sympy as sp

from .blocks import Block, Code, Eq, Heading, Inline, Items, Math, MathRows, N, Name, P, Table
from .frequency_blocks import frequency_blocks

__all__ = ["reduction_blocks", "modal_blocks", "laplace_blocks"]


def _mat(latex: str, plain: str, value: Any) -> Eq:
    return Eq(((Name(latex, plain), value),))


def _derivative(var: sp.Symbol, order: int, c: Any) -> Name:
    """dy/dt, d^2y/dt^2 as a Name."""
    f = c.fmt
    V, Vp, T, Tp = f.m(var), f.plain(var), f.m(c.t), f.plain(c.t)
    if order == 1:
        return N(rf"\frac{{d{V}}}{{d{T}}}", f"d{Vp}/d{Tp}")
    return N(rf"\frac{{d^{{{order}}}{V}}}{{d{T}^{{{order}}}}}", f"d^{order}{Vp}/d{Tp}^{order}")


def reduction_blocks(s: Any, c: Any) -> list[Block]:
    """Equations of higher order, or M q'' + C q' + K q = F, as x' = A x + f."""
    f = c.fmt
    T, Tp = f.m(s.t), f.plain(s.t)
    out: list[Block] = [Heading(3, "Reduction to first order")]
    if s.second_order is not None:
        M, C, K, F = s.second_order
        out += [
            P("The model is written as ", N(rf"M\,q'' + C\,q' + K\,q = F({T})", f"M q'' + C q' + K q = F({Tp})"),
              " with the coordinates ", N(f"q = ({c.m_list(s.definitions[i][0] for i in range(M.rows))})^{{T}}",
                                          f"q = ({c.plain_list([s.definitions[i][0] for i in range(M.rows)])})^T"), " and"),
            _mat("M", "M", M), _mat("C", "C", C), _mat("K", "K", K), _mat(f"F({T})", f"F({Tp})", F),
            P("Since ", N("M"), " is invertible, ", N(rf"q'' = -M^{{-1}} K\,q - M^{{-1}} C\,q' + M^{{-1}} F",
                                                        "q'' = -M^-1 K q - M^-1 C q' + M^-1 F"),
              ". The coordinates and their rates are the states, so that"),
            MathRows((
                (N("x"), N(r"\begin{pmatrix} q \\ q' \end{pmatrix}", "(q, q')")),
                (N("A"), N(r"\begin{pmatrix} 0 & I \\ -M^{-1} K & -M^{-1} C \end{pmatrix}", "[[0, I], [-M^-1 K, -M^-1 C]]")),
                (N(f"f({T})", f"f({Tp})"), N(r"\begin{pmatrix} 0 \\ M^{-1} F \end{pmatrix}", "(0, M^-1 F)")),
            )),
        ]
    else:
        out += [
            P("The equations hold derivatives of order higher than one:", runs_on=True),
            Items(tuple((Code(e),) for e in s.equations)),
            P("Each variable and its derivatives below the highest order become states; the highest derivative is "
              "then given by its equation, solved for it (its coefficient is a nonzero constant)."),
        ]
    defs: list[tuple[Inline, ...]] = []
    for k, (state, var, order) in enumerate(s.definitions, start=1):
        lead = N(f"x_{{{k}}} = {f.m(state)}", f"x{k} = {f.plain(state)}")
        if order == 0:
            defs.append((lead,))
        else:
            d = _derivative(var, order, c)
            defs.append((lead, " = ", d))
    out += [P("The states:", runs_on=True), Items(tuple(defs))]
    out += [
        P("Each state's derivative is the next state, and the last is given by the equation:"),
        Eq(tuple((N(f"{f.m(st)}'({T})", f"{f.plain(st)}'({Tp})"), rhs) for st, rhs in s.rows)),
        P("so that ", N(rf"x' = A\,x + f({T})", f"x' = A x + f({Tp})"), " with"),
        _mat("A", "A", s.A),
        _mat(f"f({T})", f"f({Tp})", s.f),
    ]
    return out


def modal_blocks(s: Any, c: Any) -> list[Block]:
    """The generalized eigenproblem, mass-normalised modes and one oscillator per mode."""
    f = c.fmt
    T, Tp = f.m(s.t), f.plain(s.t)
    md = s.modes
    alpha, beta = s.rayleigh
    undamped = alpha == 0 and beta == 0
    n = len(s.eta)
    out: list[Block] = [
        Heading(3, "Modes of the second-order model"),
        P("The damping matrix is "
          + ("zero" if undamped else "proportional, "), *(() if undamped else (
              N(rf"C = \alpha M + \beta K", "C = alpha M + beta K"), " with ",
              N(rf"\alpha = {f.m(alpha)},\ \beta = {f.m(beta)}", f"alpha = {f.plain(alpha)}, beta = {f.plain(beta)}"))),
          ", so the undamped mode shapes decouple the equations. They solve the generalized eigenproblem ",
          N(r"K\,\varphi = \omega^{2} M\,\varphi", "K phi = omega^2 M phi"), ", whose frequency equation is"),
        Eq(((N(r"\det(K - \omega^{2} M)", "det(K - omega^2 M)"), s.frequency_equation),)),
    ]
    if md is None:
        return out + [P("A factor of this equation has degree three or more in ", N(r"\omega^{2}", "omega^2"),
                        "; its roots and mode shapes are not written out here (in radicals they would be "
                        "unreadable). The solution below does not need them: it is found from the first-order form.")]
    out += [
        P("Its roots, the natural frequencies and the mass-normalised shapes ",
          N(r"\varphi_r^{T} M\,\varphi_r = 1", "phi_r^T M phi_r = 1"),
          (", with the damping ratios " if not undamped else ""),
          *((N(r"\zeta_r = (\alpha + \beta\,\omega_r^{2}) / (2\,\omega_r)", "zeta_r = (alpha + beta omega_r^2) / (2 omega_r)"),)
            if not undamped else ()), ":"),
    ]
    rows = []
    for r in range(n):
        cells: list[tuple[Inline, ...]] = [
            (f"{r + 1}",), (Math(md.omega_squared[r]),), (Math(md.frequencies[r]),),
        ]
        if not undamped and md.damping_ratios is not None:
            cells.append((Math(md.damping_ratios[r]),))
        rows.append(tuple(cells))
    header: list[Any] = ["Mode", (N(r"\omega_r^{2}", "omega_r^2"),), (N(r"\omega_r", "omega_r"),)]
    if not undamped:
        header.append((N(r"\zeta_r", "zeta_r"),))
    out.append(Table(tuple(header), tuple(rows), align="c" + "l" * (len(header) - 1)))
    out += [_mat(rf"\varphi_{{{r + 1}}}", f"phi_{r + 1}", md.shapes[:, r]) for r in range(n)]
    q = c.m_list(s.coordinates)
    eta = c.m_list(s.eta)
    out += [
        P("With ", N(rf"q = \Phi\,\eta", "q = Phi eta"), ", ", N(rf"\Phi = (\varphi_1, \dots, \varphi_{{{n}}})" if n > 2 else r"\Phi = (\varphi_1, \varphi_2)",
                                                              f"Phi = (phi_1, ..., phi_{n})" if n > 2 else "Phi = (phi_1, phi_2)"),
          ", ", N(f"q = ({q})^{{T}}", f"q = ({c.plain_list(s.coordinates)})^T"), " and the modal coordinates ",
          N(f"\\eta = ({eta})^{{T}}", f"eta = ({c.plain_list(s.eta)})^T"), ", and since ",
          N(r"\Phi^{T} M \Phi = I", "Phi^T M Phi = I"), ", ", N(r"\Phi^{T} K \Phi = \operatorname{diag}(\omega_r^{2})",
                                                               "Phi^T K Phi = diag(omega_r^2)"),
          ", multiplying the equations by ", N(r"\Phi^{T}", "Phi^T"), " gives one oscillator per mode, ",
          N(r"\eta_r'' + 2\,\zeta_r \omega_r\,\eta_r' + \omega_r^{2}\,\eta_r = \varphi_r^{T} F",
            "eta_r'' + 2 zeta_r omega_r eta_r' + omega_r^2 eta_r = phi_r^T F"), ":"),
    ]
    osc = []
    for r, e in enumerate(s.eta):
        terms = [(sp.Integer(1), e, "''"), (alpha + beta * md.omega_squared[r], e, "'"), (md.omega_squared[r], e, "")]
        force = (md.shapes[:, r].T * s.F)[0]
        osc.append((_oscillator(terms, f), sp.factor(force) if force != 0 else force))
    out.append(Eq(tuple(osc)))
    out.append(P("The solution below is found from the first-order form; these oscillators describe the same motion "
                 "mode by mode, with ", N(r"\omega_r", "omega_r"), " the natural frequency of mode r."))
    return out


def _oscillator(terms: list[tuple[sp.Expr, sp.Symbol, str]], f: Any) -> Name:
    """eta'' + a eta' + b eta in this order (a sympy sum would sort the terms), zero terms left out."""
    tex: list[str] = []
    plain: list[str] = []
    for coeff, sym, primes in terms:
        if coeff == 0:
            continue
        c = sp.factor(coeff)
        lead = " + " if tex else ""
        name, name_plain = f.m(sym) + primes, f.plain(sym) + primes
        if c == 1:
            tex.append(lead + name)
            plain.append(lead + name_plain)
        else:
            wrap = isinstance(c, sp.Add)
            ct, cp = f.m(c), f.plain(c)
            tex.append(lead + (rf"\left({ct}\right)" if wrap else ct) + r"\," + name)
            plain.append(lead + (f"({cp})" if wrap else cp) + " " + name_plain)
    return Name("".join(tex), "".join(plain))


def laplace_blocks(s: Any, c: Any) -> list[Block]:
    """G(s), and the solution found again by partial fractions, compared with the result."""
    f = c.fmt
    T, Tp, S, Sp = f.m(s.t), f.plain(s.t), f.m(s.s), f.plain(s.s)
    out: list[Block] = [Heading(3, "Independent check through the Laplace transform")]
    if not s.ran:
        return out + [P(f"This check was not run: {s.reason}.")] + frequency_blocks(s, c)
    if not s.inputs:
        out += [
            P("The system is unforced, so the transfer function from an input added to each state equation is the "
              "resolvent, ", N(rf"G({S}) = ({S} I - A)^{{-1}}", f"G({Sp}) = ({Sp} I - A)^-1"), ":"),
            _mat(f"G({S})", f"G({Sp})", s.G),
        ]
    else:
        if len(s.inputs) == 1:
            u = N(f"u({T}) = {f.m(s.inputs[0])}", f"u({Tp}) = {f.plain(s.inputs[0])}")
        else:
            u = N(f"u = ({c.m_list(s.inputs)})^{{T}}", f"u = ({c.plain_list(s.inputs)})^T")
        out += [
            P("The forcing is written as ", N(rf"f({T}) = B\,u({T})", f"f({Tp}) = B u({Tp})"), f" ({s.reason}), with ",
              u, " and"),
            _mat("B", "B", s.B),
            P("The transform of ", N(r"x' = A\,x + B\,u", "x' = A x + B u"),
              " gives the transfer function from the inputs to the states, ",
              N(rf"G({S}) = ({S} I - A)^{{-1}} B", f"G({Sp}) = ({Sp} I - A)^-1 B"), ":"),
            _mat(f"G({S})", f"G({Sp})", s.G),
        ]
    out.append(P("With the initial state and the transformed forcing, ",
                 N(rf"X({S}) = ({S} I - A)^{{-1}} \bigl(x({T}_0) + F({S})\bigr)",
                   f"X({Sp}) = ({Sp} I - A)^-1 (x({Tp}0) + F({Sp}))"),
                 " (time counted from the initial instant), expanded in partial fractions over the eigenvalues and "
                 "the exponents of the forcing and inverted term by term, gives the response again without the "
                 "modal matrix."))
    if s.agrees:
        out.append(P("This is the solution found above (the difference is zero, decided "
                     + (s.method if s.method != "exact" else "exactly") + "): the two routes agree."))
    else:
        out.append(P("This differs from the solution found above: the two routes disagree, and the result must not be "
                     "used until the difference is explained."))
    return out + frequency_blocks(s, c)
