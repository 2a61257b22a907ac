"""``costcheck tensor``: the MTW tensor and the form ``S(ξ, η)`` on orthogonal pairs, tidied.

    S(ξ, η) = Σ T_{ijkl} ξ_i ξ_j η'_k η'_l,   η' = M⁻¹ η,   ξ · η = 0

(Ma–Trudinger–Wang, ARMA 177, 2005; ``η`` a covector, docs/conditions.md#mtw).  For ``n = 2``
the orthogonal covector is fixed by ``ξ`` up to scale: with ``ξ = (cos θ, sin θ)`` and
``η = (−sin θ, cos θ)``, ``S(θ) = Σ_p a_p cos^{4−p}θ sin^pθ`` is a quartic form in
``(cos θ, sin θ)`` whose coefficients ``a_p(x, y)`` are printed.  For ``n ≥ 3``,
``S(ξ, η) = Σ B_{ijkl} ξ_i ξ_j η_k η_l`` with ``B_{ijkl} = Σ_{r,s} T_{ijrs} c^{r,k} c^{s,l}``
(``M⁻¹`` taken into the tensor), to be read on ``ξ · η = 0``.

When the first non-zero component of ``T`` depends on ``x − y`` only (a cost of the
difference, such as ``|x − y|^p``), everything is written in ``d_i = x_i − y_i``: the same
expressions, substituted exactly, and much shorter once factored.  All tidying shares one
time limit in a child process (:func:`.symbolic.stream_bounded`); what did not finish is
shown as formed, marked so.
"""

from __future__ import annotations

import itertools
from dataclasses import dataclass

import sympy as sp

from ...model.cost import Cost
from .symbolic import (SIMPLIFY_SECONDS, FormedTensor, TensorComponent, compose, determinant_and_inverse, form_tensor,
                       singular, stream_bounded, tidy)

THETA = sp.Symbol("theta", real=True)


@dataclass(frozen=True)
class Coefficient:
    label: str  # "a_2" (of cos²θ sin²θ) or "B_1223"
    expr: sp.Expr


@dataclass(frozen=True)
class ClosedForm:
    cost_id: str
    n: int
    components: list[TensorComponent]
    #: ``d_i`` when the expressions are written in ``d_i = x_i − y_i``, else ``()``
    differences: tuple
    #: ``S(θ)`` (n = 2) or ``S(ξ, η)`` (n ≥ 3), tidied; None for n = 1 (no orthogonal pair is
    #: non-zero there) and when its coefficients were not all tidied in time
    form: sp.Expr | None
    #: the tidied coefficients of the form (all of them when ``form`` is given)
    coefficients: list[Coefficient]
    #: ``M⁻¹``, tidied if ``inverse_tidied``
    inverse: sp.Matrix
    inverse_tidied: bool
    xs: tuple
    ys: tuple

    @property
    def complete(self) -> bool:
        return all(c.simplified for c in self.components) and (self.form is not None or self.n == 1)

    def substitution(self, x, y) -> dict:
        """Values of every symbol the expressions may contain, at the pair ``(x, y)``."""
        values = dict(zip(self.xs, x)) | dict(zip(self.ys, y))
        values.update({d: xi - yi for d, xi, yi in zip(self.differences, x, y)})
        return values


def _difference_symbols(cost: Cost) -> tuple:
    taken = {s.name for s in (*cost.x_symbols, *cost.y_symbols)}
    for stem in ("d", "w", "delta"):
        names = [f"{stem}{i + 1}" for i in range(cost.n)]
        if not taken & set(names):
            return tuple(sp.Symbol(name, real=True) for name in names)
    raise AssertionError("unreachable: three disjoint families of names")  # pragma: no cover


def _linear_product(*forms):
    """Coefficients (by power of the second variable) of a product of linear forms ``(a, b)``."""
    out = [sp.S.One]
    for a, b in forms:
        out = [(out[p] if p < len(out) else 0) * a + (out[p - 1] if p > 0 else 0) * b for p in range(len(out) + 1)]
    return out


def angle_coefficients(T: FormedTensor, inverse: sp.Matrix) -> list[sp.Expr]:
    """``a_0 … a_4`` of ``S(θ)`` (n = 2): ``ξ = (c, s)``, ``η' = M⁻¹(−s, c)``, both linear in ``(c, s)``."""
    xi = [(sp.S.One, sp.S.Zero), (sp.S.Zero, sp.S.One)]
    eta = [(inverse[k, 1], -inverse[k, 0]) for k in range(2)]
    total = [sp.S.Zero] * 5
    for i, j, k, l in itertools.product(range(2), repeat=4):
        entry = T.entry(i, j, k, l)
        if entry == 0:
            continue
        for p, c in enumerate(_linear_product(xi[i], xi[j], eta[k], eta[l])):
            if c != 0:
                total[p] += entry * c
    return total


def covector_coefficients(T: FormedTensor, inverse: sp.Matrix) -> dict:
    """``B_{ijkl} = Σ_{r,s} T_{ijrs} c^{r,k} c^{s,l}`` for ``i <= j``, ``k <= l``."""
    n = T.n
    return {(i, j, k, l): sum(T.entry(i, j, r, s) * inverse[r, k] * inverse[s, l]
                              for r in range(n) for s in range(n))
            for (i, j, k, l) in T.components}


def _coefficients(T: FormedTensor, inverse: sp.Matrix) -> dict:
    if T.n == 1:
        return {}
    if T.n == 2:
        return {f"a_{p}": a for p, a in enumerate(angle_coefficients(T, inverse))}
    return {"B_" + "".join(str(i + 1) for i in idx): b for idx, b in covector_coefficients(T, inverse).items()}


def _tidied_fields(d: dict, n: int, rewrite) -> dict:
    """The derivative fields ``T`` is made of, each entry rewritten and tidied once (the copies
    that symmetry makes equal are shared): ``M``, ``c_{ij,r}``, ``c_{s,kl}``, ``c_{ij,kl}``."""
    R = range(n)
    pairs = list(itertools.combinations_with_replacement(R, 2))
    t = lambda e: tidy(rewrite(e))  # noqa: E731
    xxy = {(i, j, r): t(d["dxxy"][i][j][r]) for i, j in pairs for r in R}
    xyy = {(s, k, l): t(d["dxyy"][s][k][l]) for s in R for k, l in pairs}
    xxyy = {(i, j, k, l): t(d["dxxyy"][i][j][k][l]) for i, j in pairs for k, l in pairs}
    o = lambda a, b: (min(a, b), max(a, b))  # noqa: E731
    return {"dxy": [[t(d["dxy"][r][s]) for s in R] for r in R],
            "dxxy": [[[xxy[(*o(i, j), r)] for r in R] for j in R] for i in R],
            "dxyy": [[[xyy[(s, *o(k, l))] for l in R] for k in R] for s in R],
            "dxxyy": [[[[xxyy[(*o(i, j), *o(k, l))] for l in R] for k in R] for j in R] for i in R]}


def _free_of(fields: dict, ys: frozenset) -> bool:
    return not any(e.free_symbols & ys for e in sp.flatten(list(fields.values())))


def _tidy_everything(formed: FormedTensor, sub: dict, ys: frozenset):
    """The child's work, streamed: whether ``det M ≡ 0``, the writing chosen, ``M⁻¹``, ``T`` and
    the form's coefficients.  ``T`` is composed from the tidied derivatives and the tidied ``M⁻¹``
    and then tidied, which is several times faster than tidying the composed expression (a
    product of a dozen radicals per term on a power cost).  The difference writing is chosen when
    every derivative involved depends on ``x − y`` only."""
    n = formed.n
    fields = _tidied_fields(formed.derivatives, n, lambda e: e.xreplace(sub))
    differences = _free_of(fields, ys)
    if not differences:
        fields = _tidied_fields(formed.derivatives, n, lambda e: e)
    det, inverse = determinant_and_inverse(sp.Matrix(fields["dxy"]))
    det = tidy(det)
    yield ("det",), det == 0
    if det == 0:
        return
    yield ("mode",), differences
    inverse = inverse.applyfunc(tidy)
    yield ("inverse",), inverse
    tidied = {}
    for index, expr in compose(n, fields, inverse).items():
        tidied[index] = tidy(expr)
        yield ("T", index), tidied[index]
    for label, expr in _coefficients(FormedTensor(n, tidied, inverse, det), inverse).items():
        yield ("S", label), tidy(expr)


def coefficient_labels(n: int) -> list[str]:
    if n == 1:
        return []
    if n == 2:
        return [f"a_{p}" for p in range(5)]
    pairs = list(itertools.combinations_with_replacement(range(1, n + 1), 2))
    return [f"B_{i}{j}{k}{l}" for (i, j) in pairs for (k, l) in pairs]


def _assemble_form(n: int, coefficients: dict) -> sp.Expr | None:
    if n == 1:
        return None
    if n == 2:
        c, s = sp.cos(THETA), sp.sin(THETA)
        return sp.Add(*[a * c ** (4 - p) * s ** p for p, a in enumerate(coefficients.values())])
    xi, eta = sp.symbols(f"xi1:{n + 1}", real=True), sp.symbols(f"eta1:{n + 1}", real=True)
    terms = []
    for label, b in coefficients.items():
        i, j, k, l = (int(ch) - 1 for ch in label[2:])
        weight = (1 if i == j else 2) * (1 if k == l else 2)
        terms.append(weight * b * xi[i] * xi[j] * eta[k] * eta[l])
    return sp.Add(*terms)


def mtw_closed_form(cost: Cost, seconds: float = SIMPLIFY_SECONDS) -> ClosedForm:
    """The tensor and ``S`` of a cost with ``n == m``, tidied within ``seconds`` in all.

    A component not tidied in time is given as formed; ``S`` is given only once all its
    coefficients are tidied (formed, they run to megabytes of text on a 3-D power cost), and
    otherwise left as ``Σ T ξ ξ η' η'`` with the ``T`` and ``M⁻¹`` given.
    """
    formed = form_tensor(cost)
    deltas = _difference_symbols(cost)
    sub = {x: y + d for x, y, d in zip(cost.x_symbols, cost.y_symbols, deltas)}
    labels = coefficient_labels(cost.n)
    expected = 3 + len(formed.components) + len(labels)  # det, mode, inverse, T, S
    done = stream_bounded(_tidy_everything, (formed, sub, frozenset(cost.y_symbols)), expected, seconds)
    if done.get(("det",)) is True:
        raise singular(cost)
    differences = done.get(("mode",), False)
    rewrite = (lambda e: e.xreplace(sub)) if differences else (lambda e: e)
    # a component formed as a plain number (0 for a bilinear term) is as tidy as it gets
    components = [TensorComponent(index, done[("T", index)], True) if ("T", index) in done
                  else TensorComponent(index, rewrite(expr), expr.is_Number) for index, expr in formed.components.items()]
    coefficients = [Coefficient(label, done[("S", label)]) for label in labels if ("S", label) in done]
    form = None
    if len(coefficients) == len(labels):
        form = _assemble_form(cost.n, {c.label: c.expr for c in coefficients})
    inverse = done.get(("inverse",))
    return ClosedForm(cost.id, cost.n, components, deltas if differences else (), form, coefficients,
                      inverse if inverse is not None else formed.inverse.applyfunc(rewrite), inverse is not None,
                      tuple(cost.x_symbols), tuple(cost.y_symbols))
