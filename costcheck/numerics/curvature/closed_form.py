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
from .symbolic import (SIMPLIFY_SECONDS, FormedTensor, TensorComponent, form_tensor, singular, stream_bounded,
                       tidy)

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


def _tidy_everything(formed: FormedTensor, sub: dict, ys: frozenset):
    """The child's work, streamed: whether ``det M ≡ 0``, the writing chosen, then ``T``,
    ``M⁻¹`` and the form's coefficients (formed from the tidied ``T`` and ``M⁻¹``)."""
    yield ("det",), tidy(formed.det) == 0
    first = next((e for e in formed.components.values() if e != 0), None)
    shifted = tidy(first.xreplace(sub)) if first is not None else None
    differences = first is not None and not (shifted.free_symbols & ys)
    yield ("mode",), differences
    rewrite = (lambda e: e.xreplace(sub)) if differences else (lambda e: e)
    tidied = {}
    for index, expr in formed.components.items():
        tidied[index] = shifted if (differences and expr is first) else tidy(rewrite(expr))
        yield ("T", index), tidied[index]
    inverse = formed.inverse.applyfunc(lambda e: tidy(rewrite(e)))
    yield ("inverse",), inverse
    for label, expr in _coefficients(FormedTensor(formed.n, tidied, inverse, formed.det), inverse).items():
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
    expected = 4 + len(formed.components) + len(labels)
    done = stream_bounded(_tidy_everything, (formed, sub, frozenset(cost.y_symbols)), expected, seconds)
    if done.get(("det",)) is True:
        raise singular(cost)
    differences = done.get(("mode",), False)
    rewrite = (lambda e: e.xreplace(sub)) if differences else (lambda e: e)
    components = [TensorComponent(index, done[("T", index)], True) if ("T", index) in done
                  else TensorComponent(index, rewrite(expr), False) for index, expr in formed.components.items()]
    coefficients = [Coefficient(label, done[("S", label)]) for label in labels if ("S", label) in done]
    form = None
    if len(coefficients) == len(labels):
        form = _assemble_form(cost.n, {c.label: c.expr for c in coefficients})
    inverse = done.get(("inverse",))
    return ClosedForm(cost.id, cost.n, components, deltas if differences else (), form, coefficients,
                      inverse if inverse is not None else formed.inverse.applyfunc(rewrite), inverse is not None,
                      tuple(cost.x_symbols), tuple(cost.y_symbols))
