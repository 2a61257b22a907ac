"""``k±(y)`` on a grid of ``y``: monotone root finding on the mass balance, vectorised.

With the source as weighted points (data points, or quadrature nodes of a density), the mass
``F_y(k) = μ({x : ∂s/∂y(x, y) ≤ k})`` is a step function of ``k``: sorting ``∂s/∂y(x_i, y)``
and accumulating the weights gives it exactly, and the root of ``F_y(k) = t`` is read off the
monotone accumulated weights (the number of them below ``t``, which is what a bisection would
find; ``k-(t) = inf{k : F ≥ t}``,
``k+(t) = sup{k : F ≤ t}``; the two differ exactly where the source has a gap).  One sort per
grid value of ``y``, all in numpy.

Sampling tolerance: the levels that decide inclusions are taken at ``t ∓ ε``.
- Weighted points read as a sample of the source: the Dvoretzky–Kiefer–Wolfowitz inequality
  with Massart's constant (Ann. Probab. 18, 1990), ``P(sup|F̂ − F| > ε) ≤ 2 exp(−2 N ε²)``,
  with ``N`` Kish's effective sample size and a Bonferroni split of ``α = 10⁻³`` over the
  grid, so ``ε = sqrt(ln(2K/α) / (2N))``.  (For unequal weights the effective size is a
  common-practice approximation, not a theorem.)
- Quadrature nodes of a density: ``ε(y)`` is the mass of the cells the level curve can cross,
  ``|∂s/∂y(x_i, y) − k(y)| ≤ |∇_x ∂s/∂y(x_i, y)| · (half the cell diagonal)`` (first order in the
  cell size).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .measures import Distribution1D, Measure

ALPHA = 1e-3
#: pairs evaluated per call of the derivative evaluator (bounds memory)
CHUNK = 400_000
_TIE = 1e-12


@dataclass(frozen=True)
class Levels:
    ys: np.ndarray  # (K,) strictly increasing grid of y inside the target's support
    G: np.ndarray  # (K,) ν((-∞, y_j])
    phi: np.ndarray  # (K, N) ∂s/∂y(x_i, y_j), NaN where undefined
    k_minus: np.ndarray  # (K,)
    k_plus: np.ndarray  # (K,)
    band: np.ndarray  # (K,) mass tolerance ε_j
    k_lo: np.ndarray  # (K,) k-(G - ε): points at or below are inside X≤(y, k(y)) beyond the tolerance
    k_hi: np.ndarray  # (K,) k+(G + ε): points at or above are outside X<(y, k(y)) beyond the tolerance
    spread: np.ndarray  # (K,) interquartile range of ∂s/∂y(·, y_j) under μ: the scale of margins
    band_rule: str
    undefined: int

    @property
    def k(self) -> np.ndarray:
        """The level used for the map: the middle of ``[k-, k+]`` (they agree without gaps)."""
        return np.where(np.isfinite(self.k_plus), 0.5 * (self.k_minus + self.k_plus), self.k_minus)


def surplus_y(evaluator, domain, X: np.ndarray, ys: np.ndarray, want_grad: bool = False, want_value: bool = False):
    """``∂s/∂y(x_i, y_j)`` as a (K, N) array (``s = -c``); optionally ``|∇_x ∂s/∂y|`` and ``s``."""
    N, K = X.shape[0], ys.shape[0]
    phi = np.empty((K, N))
    grad = np.empty((K, N)) if want_grad else None
    value = np.empty((K, N)) if want_value else None
    rows = max(1, CHUNK // max(N, 1))
    for a in range(0, K, rows):
        b = min(K, a + rows)
        xs = np.tile(X, (b - a, 1))
        yy = np.repeat(ys[a:b], N)[:, None]
        d = evaluator(xs, yy)
        ok = domain.contains_pairs(xs, yy) & np.isfinite(d.dy[:, 0])
        phi[a:b] = np.where(ok, -d.dy[:, 0], np.nan).reshape(b - a, N)
        if want_grad:
            grad[a:b] = np.linalg.norm(d.dxy[:, :, 0], axis=1).reshape(b - a, N)
        if want_value:
            value[a:b] = np.where(ok, -d.value, np.nan).reshape(b - a, N)
    return phi, grad, value


def sorted_masses(phi: np.ndarray, weights: np.ndarray):
    """Per row: the sorted values and the accumulated weights (NaN sorted last, with no weight)."""
    order = np.argsort(phi, axis=1, kind="stable")
    values = np.take_along_axis(phi, order, axis=1)
    w = np.where(np.isnan(values), 0.0, weights[order])
    return values, np.cumsum(w, axis=1)


def quantile_interval(values: np.ndarray, cum: np.ndarray, t: np.ndarray):
    """``k-(t) = inf{k : F(k) ≥ t}`` and ``k+(t) = sup{k : F(k) ≤ t}`` per row, vectorised."""
    K, N = values.shape
    t = np.asarray(t, float)
    lo_idx = np.sum(cum < (t - _TIE)[:, None], axis=1)
    hi_idx = np.sum(cum <= (t + _TIE)[:, None], axis=1)
    rows = np.arange(K)
    k_minus = np.where(t <= _TIE, -np.inf, values[rows, np.minimum(lo_idx, N - 1)])
    k_plus = np.where(hi_idx >= N, np.inf, values[rows, np.minimum(hi_idx, N - 1)])
    k_plus = np.where(np.isnan(k_plus), np.inf, k_plus)
    return k_minus, k_plus


def y_grid(target: Distribution1D, count: int) -> tuple[np.ndarray, np.ndarray]:
    """Interior levels ``t_j = (j + ½)/K`` mapped through the target's quantile, duplicates merged."""
    t = (np.arange(count) + 0.5) / count
    ys = np.unique(target.quantile(t))
    return ys, target.G(ys)


def compute_levels(evaluator, domain, source: Measure, target: Distribution1D, count: int) -> Levels:
    ys, G = y_grid(target, count)
    K = ys.shape[0]
    quadrature = source.kind == "quadrature"
    phi, grad, _ = surplus_y(evaluator, domain, source.points, ys, want_grad=quadrature)
    undefined = int(np.isnan(phi).sum())
    values, cum = sorted_masses(phi, source.weights)
    k_minus, k_plus = quantile_interval(values, cum, G)
    q1, q3 = quantile_interval(values, cum, np.full(K, 0.25))[0], quantile_interval(values, cum, np.full(K, 0.75))[0]
    spread = np.where(q3 - q1 > 0, q3 - q1, np.maximum(np.nanmax(np.abs(phi), axis=1), 1e-300))
    if quadrature:
        half_diag = 0.5 * float(np.linalg.norm(source.cell))
        k_mid = np.where(np.isfinite(k_plus), 0.5 * (k_minus + k_plus), k_minus)
        near = np.abs(phi - k_mid[:, None]) <= grad * half_diag
        band = np.sum(np.where(near, source.weights[None, :], 0.0), axis=1) + 1e-9
        rule = ("quadrature: mass of the cells the level curve can cross (|∂s/∂y − k| ≤ |∇_x ∂s/∂y| × half the "
                f"cell diagonal {half_diag:.3g})")
    else:
        n_eff = source.effective_size
        eps = float(np.sqrt(np.log(2 * K / ALPHA) / (2 * n_eff)))
        band = np.full(K, eps)
        rule = (f"sampling: DKW band ε = sqrt(ln(2K/α)/(2N)) = {eps:.3g} with N = {n_eff:.0f} effective points, "
                f"K = {K} levels, α = {ALPHA:g} (if the points are an independent sample of the source)")
    k_lo = quantile_interval(values, cum, G - band)[0]
    k_hi = quantile_interval(values, cum, G + band)[1]
    return Levels(ys, G, phi, k_minus, k_plus, band, k_lo, k_hi, spread, rule, undefined)
