"""``costcheck tensor`` on paper: the tidied MTW tensor and ``S`` on orthogonal pairs, as plain
text in 80 columns, as LaTeX, or as one JSON document (strings only).

The text is sympy's own printing (plain: the ``str`` form, which reads back into sympy; LaTeX:
``sympy.latex``), wrapped at the spaces around ``+`` and ``−`` so that no line is wider than
80 columns unless a single factor is.  An expression that was not tidied within the time limit
is shown in full only when it is short; otherwise its size is given and ``--json`` carries it.
"""

from __future__ import annotations

import re
import textwrap

import sympy as sp

from ..numerics.curvature.closed_form import THETA, ClosedForm, coefficient_labels

WIDTH = 80
#: an expression not tidied in time is printed only up to this many nodes (``--json`` has all):
#: sympy's printers take seconds on each of the formed components of a 3-D power cost
FORMED_SHOWN = 150
CONVENTION = "T_ijkl = sum_rs c_ij,r c^r,s c_s,kl - c_ij,kl (cost minimised; symmetric in ij and in kl)"
#: the monomial of ``a_p`` in ``S(θ)`` (n = 2)
ANGLE_MONOMIALS = ["cos⁴θ", "cos³θ sin θ", "cos²θ sin²θ", "cos θ sin³θ", "sin⁴θ"]
ANGLE_LATEX = [r"\cos^4\theta", r"\cos^3\theta\,\sin\theta", r"\cos^2\theta\,\sin^2\theta",
               r"\cos\theta\,\sin^3\theta", r"\sin^4\theta"]


def wrap(head: str, body: str, width: int = WIDTH) -> list[str]:
    """``head + body`` in lines of at most ``width``, broken before a ``+`` or ``−`` between terms
    (else at any space), continued with an indent; a single unbreakable piece stays whole."""
    first, *rest = re.split(r" (?=[+-] )", body)
    lines, line = [], head + first
    for piece in rest:
        if len(line) + 1 + len(piece) > width:
            lines.append(line)
            line = "    " + piece
        else:
            line += " " + piece
    lines.append(line)
    out = []
    for line in lines:
        if len(line) <= width:
            out.append(line)
            continue
        lead = "    " if line.startswith("    ") else ""
        out.extend(textwrap.wrap(line[len(lead):], width, initial_indent=lead, subsequent_indent="    ",
                                 break_long_words=False, break_on_hyphens=False))
    return out


def _label(index) -> str:
    return "".join(str(i + 1) for i in index)


def missing(cf: ClosedForm) -> list[str]:
    """What was not tidied in time, in words (empty when everything was)."""
    out = []
    untidied = [c for c in cf.components if not c.simplified]
    if untidied:
        out.append(f"{len(untidied)} of {len(cf.components)} components of T")
    if cf.form is None and cf.n >= 2:
        total = len(coefficient_labels(cf.n))
        out.append(f"S ({len(cf.coefficients)} of its {total} coefficients tidied)")
    return out


def limit_note(cf: ClosedForm, seconds: float) -> str | None:
    what = missing(cf)
    if not what:
        return None
    return (f"not tidied within {seconds:g} s: {' and '.join(what)}; "
            "--simplify-seconds allows more time, --json gives every expression as formed")


def _heading(cf: ClosedForm, latex: bool) -> list[str]:
    if latex:
        lines = [f"% MTW tensor of {cf.cost_id}: T_{{ijkl}} = \\sum_{{r,s}} c_{{ij,r}} c^{{r,s}} c_{{s,kl}} - c_{{ij,kl}}"]
        lines += [f"{sp.latex(d)} = {sp.latex(x - y)}" for d, x, y in zip(cf.differences, cf.xs, cf.ys)]
        return lines
    lines = [f"MTW tensor of {cf.cost_id}: T_ijkl = Σ c_ij,r c^r,s c_s,kl − c_ij,kl",
             f"(symmetric in ij and in kl; indices 1..{cf.n}; factored over one denominator)"]
    if cf.differences:
        lines.extend(wrap("written in ", ", ".join(f"{d} = {x} − {y}" for d, x, y in zip(cf.differences, cf.xs, cf.ys))))
    return lines


def nodes(expr: sp.Expr) -> int:
    """The size of an expression (its nodes), measured without printing it."""
    return sum(1 for _ in sp.preorder_traversal(expr))


def _expression(head: str, expr: sp.Expr, tidied: bool, latex: bool) -> list[str]:
    if not tidied and nodes(expr) > FORMED_SHOWN:
        note = f"(not tidied in time; {nodes(expr):,} nodes as formed, in --json)"
        return [("% " if latex else "") + head + note]
    body = sp.latex(expr) if latex else str(expr)
    lines = wrap(head, body)
    if not tidied:
        mark = "   (not tidied in time)"
        if len(lines[-1]) + len(mark) <= WIDTH:
            lines[-1] += mark
        else:
            lines.append("    " + mark.strip())
    return lines


def _form_lines(cf: ClosedForm, latex: bool) -> list[str]:
    if cf.n == 1:
        return ["% n = 1: no non-zero ξ, η with ξ · η = 0" if latex else "S: n = 1, no non-zero ξ ⊥ η"]
    lines = []
    if cf.n == 2:
        if latex:
            lines.append(r"% \xi = (\cos\theta, \sin\theta), \eta = (-\sin\theta, \cos\theta), \eta' = M^{-1}\eta")
            lines.extend(wrap(r"S(\theta) = ", " + ".join(f"a_{p} {m}" for p, m in enumerate(ANGLE_LATEX))))
        else:
            lines.append("S(ξ, η) = Σ T_ijkl ξ_i ξ_j η'_k η'_l, η' = M⁻¹η, on ξ = (cos θ, sin θ),")
            lines.append("η = (−sin θ, cos θ):")
            lines.extend(wrap("S(θ) = ", " + ".join(f"a_{p} {m}" for p, m in enumerate(ANGLE_MONOMIALS))))
    else:
        if latex:
            lines.append(r"% S(\xi, \eta) = \sum B_{ijkl} \xi_i \xi_j \eta_k \eta_l on \xi \cdot \eta = 0,")
            lines.append(r"% B_{ijkl} = \sum_{r,s} T_{ijrs} c^{r,k} c^{s,l}")
        else:
            lines.append("S(ξ, η) = Σ B_ijkl ξ_i ξ_j η_k η_l for covectors η with ξ · η = 0,")
            lines.append("B_ijkl = Σ_rs T_ijrs c^r,k c^s,l (M⁻¹ taken into T; B symmetric in ij, in kl)")
    for c in cf.coefficients:
        name = c.label.replace("_", "_{", 1) + "}" if latex else c.label
        lines.extend(_expression(f"{name} = ", c.expr, True, latex))
    return lines


def tensor_lines(cf: ClosedForm, seconds: float, latex: bool = False) -> list[str]:
    """The whole printout, line by line."""
    lines = _heading(cf, latex)
    for c in cf.components:
        name = f"T_{{{_label(c.index)}}} = " if latex else f"T_{_label(c.index)} = "
        lines.extend(_expression(name, c.expr, c.simplified, latex))
    lines.extend(_form_lines(cf, latex))
    if cf.n == 2 and cf.form is not None and latex:
        lines.extend(wrap(r"S(\theta) = ", sp.latex(cf.form)))
    note = limit_note(cf, seconds)
    if note:
        lines.extend(("% " + line.strip()) if latex else line for line in wrap("", note, WIDTH - 2 * latex))
    return lines


def _both(expr, tidied: bool = True) -> dict:
    """Plain text and LaTeX; a large expression not tidied in time in plain text only, in the
    order of its terms as formed (sympy's ordering of the terms alone takes seconds there)."""
    if tidied or nodes(expr) <= FORMED_SHOWN:
        return {"expr": str(expr), "latex": sp.latex(expr)}
    return {"expr": sp.sstr(expr, order="none"), "latex": None}


def tensor_json(cf: ClosedForm, file: str, seconds: float) -> dict:
    """Every expression as a string, plain and LaTeX, with whether it was tidied in time."""
    form = None
    if cf.n >= 2:
        form = {
            "orthogonal_pair": ("xi = (cos(theta), sin(theta)), eta = (-sin(theta), cos(theta))" if cf.n == 2
                                else "covectors eta with xi . eta = 0"),
            "definition": ("S(theta) = sum_p a_p cos(theta)**(4-p) sin(theta)**p" if cf.n == 2
                           else "S(xi, eta) = sum_ijkl B_ijkl xi_i xi_j eta_k eta_l, "
                                "B_ijkl = sum_rs T_ijrs c^r,k c^s,l"),
            "variable": str(THETA) if cf.n == 2 else None,
            "closed_form": None if cf.form is None else _both(cf.form),
            "coefficients": [{"label": c.label, **_both(c.expr)} for c in cf.coefficients],
        }
    return {
        "id": cf.cost_id, "file": file, "convention": CONVENTION,
        "variables": {str(d): str(x - y) for d, x, y in zip(cf.differences, cf.xs, cf.ys)},
        "components": [{"index": _label(c.index), **_both(c.expr, c.simplified), "simplified": c.simplified}
                       for c in cf.components],
        "inverse_mixed_hessian": {"entries": [[_both(cf.inverse[i, j], cf.inverse_tidied)["expr"] for j in range(cf.n)]
                                              for i in range(cf.n)],
                                  "simplified": cf.inverse_tidied},
        "S": form,
        "complete": cf.complete,
        "note": limit_note(cf, seconds),
    }
