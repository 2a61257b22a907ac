"""The map of a nested model: ``T(x)`` is the ``y`` whose level set ``{∂s/∂y(x, y) = k(y)}`` holds ``x``.

Nestedness makes ``h(x, y) = ∂s/∂y(x, y) − k(y)`` change sign once along ``y`` for μ-almost
every ``x``: ``x ∈ X≤(y, k(y))`` exactly for ``y ≥ T(x)`` (Chiappori–McCann–Pass, CPAM 70,
2017).  So ``T(x) = inf{y : h(x, y) ≤ 0}``, found on the grid of levels extended by the two
ends of the target's support (where ``k`` is the least, resp. largest, ``∂s/∂y`` over the
source, so every source point changes sign somewhere) and refined by linear interpolation of
``h`` between the two bracketing levels.  ``T`` is reported with two checks of its own: the
Kolmogorov distance between ``T#μ`` and ``ν`` (it should be of the order of the grid's mass
step and the sampling band) and the mean surplus ``∫ s(x, T(x)) dμ``.
"""

from __future__ import annotations

import csv
import json
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from .measures import Distribution1D, Measure
from .levels import Levels, surplus_y


@dataclass(frozen=True)
class LevelTable:
    """The levels the map uses: ``y`` nodes with their ``k``, ends of the support included."""

    ys: np.ndarray
    k: np.ndarray


def level_table(evaluator, domain, levels: Levels, source: Measure, target: Distribution1D) -> LevelTable:
    lo, hi = target.support
    ends, _, _ = surplus_y(evaluator, domain, source.points, np.array([lo, hi]))
    k_lo_end, k_hi_end = float(np.nanmin(ends[0])), float(np.nanmax(ends[1]))
    ys, k = levels.ys, levels.k
    keep = (ys > lo) & (ys < hi)
    return LevelTable(np.concatenate([[lo], ys[keep], [hi]]), np.concatenate([[k_lo_end], k[keep], [k_hi_end]]))


def evaluate_map(evaluator, domain, table: LevelTable, points: np.ndarray) -> tuple[np.ndarray, int]:
    """``T`` at each row of ``points`` and how many were clamped to an end (no sign change of ``h``)."""
    phi, _, _ = surplus_y(evaluator, domain, points, table.ys)
    h = phi - table.k[:, None]
    with np.errstate(invalid="ignore"):
        below = h <= 0
    K = table.ys.shape[0]
    has = below.any(axis=0)
    j = np.where(has, np.argmax(below, axis=0), K - 1)
    cols = np.arange(points.shape[0])
    jm = np.maximum(j - 1, 0)
    h0, h1 = h[jm, cols], h[j, cols]
    with np.errstate(all="ignore"):
        frac = np.where((j > 0) & (h0 > h1), h0 / (h0 - h1), 1.0)
    T = table.ys[jm] + np.clip(frac, 0.0, 1.0) * (table.ys[j] - table.ys[jm])
    T = np.where(j == 0, table.ys[0], T)
    clamped = int(np.sum(~has) + np.sum(np.isnan(h).all(axis=0)))
    return T, clamped


def pushforward_distance(T: np.ndarray, weights: np.ndarray, target: Distribution1D) -> float:
    """Kolmogorov distance ``sup_y |μ(T ≤ y) − ν((-∞, y])|`` at the jumps of the first."""
    order = np.argsort(T, kind="stable")
    t, w = T[order], weights[order]
    cum = np.cumsum(w)
    G = target.G(t)
    before = np.concatenate([[0.0], cum[:-1]])
    return float(max(np.max(np.abs(cum - G)), np.max(np.abs(before - target.G(np.nextafter(t, -np.inf))))))


def mean_surplus(evaluator, domain, points: np.ndarray, weights: np.ndarray, T: np.ndarray) -> float:
    d = evaluator(points, T[:, None])
    return float(np.sum(weights * (-d.value)))


def write_levels_csv(path: Path, y_name: str, levels: Levels) -> None:
    with Path(path).open("w", newline="") as handle:
        out = csv.writer(handle)
        out.writerow([y_name, "G", "k", "k_minus", "k_plus", "k_lo", "k_hi", "band"])
        for row in zip(levels.ys, levels.G, levels.k, levels.k_minus, levels.k_plus, levels.k_lo, levels.k_hi,
                       levels.band):
            out.writerow([repr(float(v)) for v in row])


def write_map_csv(path: Path, x_names, y_name: str, points: np.ndarray, T: np.ndarray,
                  weights: np.ndarray | None = None) -> None:
    """``x names, y name`` per row (``T`` at the point), and the point's mass in a ``weight`` column if given."""
    with Path(path).open("w", newline="") as handle:
        out = csv.writer(handle)
        out.writerow(list(x_names) + [y_name] + (["weight"] if weights is not None else []))
        for i, (p, t) in enumerate(zip(points, T)):
            out.writerow([repr(float(v)) for v in p] + [repr(float(t))]
                         + ([repr(float(weights[i]))] if weights is not None else []))


def write_json(path: Path, document: dict) -> None:
    Path(path).write_text(json.dumps(document, indent=2, ensure_ascii=False) + "\n")
