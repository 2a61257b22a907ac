"""One call from a cost and its two distributions to the nestedness verdict, the levels and the map."""

from __future__ import annotations

import time
from dataclasses import dataclass, field

import numpy as np

from ...defaults import DEFAULT_LEVELS, MAX_LEVEL_POINTS
from ...errors import CostFileError
from ...model.verdict import Verdict, not_applicable
from ...spec.data import SideSpec
from . import measures
from .applies import applicable, sides_of  # noqa: F401 - the command line reads them here
from .decide import CONDITION, find_crossings, nested_verdict
from .levels import Levels, compute_levels
from .refine import settle
from .map import LevelTable, evaluate_map, level_table, mean_surplus, pushforward_distance


@dataclass
class NestedResult:
    cost: object
    verdict: Verdict
    source: measures.Measure | None = None
    target: measures.Distribution1D | None = None
    levels: Levels | None = None
    table: LevelTable | None = None
    map_on_source: np.ndarray | None = None
    summary: dict = field(default_factory=dict)
    seconds: dict = field(default_factory=dict)


def source_measure(cost, side: SideSpec, grid: int | None = None) -> measures.Measure:
    """The source as weighted points; ``grid`` is the density's cells per axis (None: the default rule)."""
    if side.kind == "points":
        return measures.points_measure(side, cost.x_names, cost.domain.contains_x, cost.file)
    return measures.density_measure(side, cost.x_symbols, cost.domain.x, cost.domain.contains_x, cost.file,
                                    per_axis=grid)


def _refuse_oversized(cost, side: SideSpec, source: measures.Measure, levels: int) -> None:
    """The mass balance holds (level, point) arrays: bound their size before they are made."""
    if source.count * levels > MAX_LEVEL_POINTS:
        what = "quadrature nodes" if side.kind == "density" else "points"
        raise CostFileError(f"{levels} levels × {source.count:,} source {what} = {source.count * levels:,} "
                            f"(level, point) pairs, at most {MAX_LEVEL_POINTS:,} (memory); lower --levels"
                            + (" or --grid" if side.kind == "density" else ""),
                            file=cost.file if side.kind == "density" else str(side.path), field=side.origin or None)


def target_distribution(cost, side: SideSpec) -> measures.Distribution1D:
    return measures.target_distribution(side, cost.y_names[0], cost.y_symbols[0], cost.domain.y,
                                        cost.domain.contains_y, cost.file)


def analyse(cost, source_side=None, target_side=None, *, levels: int = DEFAULT_LEVELS, grid: int | None = None,
            with_map: bool = True, evaluator=None) -> NestedResult:
    source_side, target_side = sides_of(cost, source_side, target_side)
    reason = applicable(cost, source_side, target_side)
    if reason:
        return NestedResult(cost, not_applicable(CONDITION, reason))
    started = time.perf_counter()
    seconds = {}
    source = source_measure(cost, source_side, grid)
    _refuse_oversized(cost, source_side, source, levels)
    target = target_distribution(cost, target_side)
    seconds["read_data"] = time.perf_counter() - started
    evaluator = evaluator or cost.derivatives(backend="sympy", order=2)
    t0 = time.perf_counter()
    lv = compute_levels(evaluator, cost.domain, source, target, levels)
    seconds["levels"] = time.perf_counter() - t0
    t0 = time.perf_counter()
    crossings = find_crossings(lv)
    refinement = None
    if crossings.raw_crossings and not crossings.violating.any():  # within the tolerance: take a finer rule
        refinement = settle(evaluator, cost.domain, lv, source)
    verdict = nested_verdict(cost, lv, crossings, source.points, source.weights, source.description,
                             target.description, refinement)
    seconds["decide"] = time.perf_counter() - t0
    result = NestedResult(cost, verdict, source, target, lv, seconds=seconds)
    summary = {"source": source.description, "target": target.description, "source_points": source.count,
               "levels": int(lv.ys.shape[0]), "target_support": list(target.support),
               "k_range": [float(np.nanmin(lv.k)), float(np.nanmax(lv.k))],
               "convention": "s = -c (surplus maximised); X≤(y, k) = {x : ∂s/∂y(x, y) ≤ k}; "
                             "μ(X≤(y, k(y))) = ν((-∞, y]) (Chiappori–McCann–Pass 2017)"}
    if with_map and verdict.verdict == "holds":
        t0 = time.perf_counter()
        table = level_table(evaluator, cost.domain, lv, source, target)
        T, clamped = evaluate_map(evaluator, cost.domain, table, source.points)
        result.table, result.map_on_source = table, T
        summary["map"] = {
            "pushforward_kolmogorov_distance": pushforward_distance(T, source.weights, target),
            "mean_surplus": mean_surplus(evaluator, cost.domain, source.points, source.weights, T),
            "T_range": [float(np.min(T)), float(np.max(T))],
            "clamped_points": clamped,
            "meaning": "T(x) = inf{y : ∂s/∂y(x, y) ≤ k(y)}; the Kolmogorov distance between T#μ and ν and the mean "
                       "surplus ∫ s(x, T(x)) dμ are checks of the constructed map",
        }
        seconds["map"] = time.perf_counter() - t0
    elif with_map:
        summary["map"] = None
        summary["map_note"] = "no map: the model is not shown nested on the data, so the level sets do not define one"
    seconds["total"] = time.perf_counter() - started
    result.summary = summary
    return result


def map_at(result: NestedResult, points: np.ndarray, evaluator=None) -> tuple[np.ndarray, int]:
    if result.table is None:
        raise CostFileError("the map T is defined only for a nested model; this one is not shown nested")
    cost = result.cost
    evaluator = evaluator or cost.derivatives(backend="sympy", order=2)
    return evaluate_map(evaluator, cost.domain, result.table, points)
