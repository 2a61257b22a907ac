"""One parameter value of a sweep: the cost file with that value written into its ``params``,
checked exactly as ``costcheck check`` checks a file (same loader, same derivatives, same search,
budget and seed, hence the same verdict and the same cache entry).  A top-level function, so
process pools and Dask can pickle it by its module path.

Why not the family's shared evaluator: evaluating the derivatives of the template with the
parameter as a symbol rounds differently from the expression with the number substituted, and
where a verdict rests on a margin near a singular set (``exp(q|x - y|²)/q`` near
``1 + 2q|x - y|² = 0``) that alone flipped sweep verdicts against ``check`` (issue 18).
"""

from __future__ import annotations

from typing import Sequence

ERROR = "error"


def where(verdict) -> dict | None:
    """Where the verdict's quantity was decided: its witness, else the extreme point its search recorded."""
    if verdict.witness is not None:
        return {"x": [float(v) for v in verdict.witness.x], "y": [float(v) for v in verdict.witness.y]}
    details = verdict.evidence.details or {}
    for key in ("smallest_at", "worst"):
        spot = details.get(key)
        if isinstance(spot, dict) and "x" in spot and ("y" in spot or "y_t" in spot):
            return {"x": [float(v) for v in spot["x"]], "y": [float(v) for v in spot.get("y", spot.get("y_t"))]}
    return None


def evaluate_point(path: str, params: dict, budget: int, seed: int, conditions: Sequence[str] | None,
                   cache_dir: str | None = None, prove: bool = True) -> dict:
    """Check the cost at ``params``; ``{condition: {verdict, code, kind, value, witness, where, summary}}``.

    With ``cache_dir`` the result cache there answers values already checked (the key is that of
    ``check`` on a file with these parameter values).  ``prove=False`` checks the point as
    ``check --quick`` does (sampling only); by default as plain ``check`` (its default proof budget).
    """
    from ..conditions import conditions_for
    from ..defaults import DEFAULT_PROOF_CELLS, DEFAULT_PROOF_SECONDS
    from ..errors import CostcheckError, CostFileError
    from ..run.batch import check_one
    from ..run.cache import ResultCache
    from ..spec.reading import read_cost_data

    names = list(conditions or conditions_for(False))  # what an error is reported for
    try:
        cache = ResultCache(cache_dir) if cache_dir is not None else None
        data = read_cost_data(path)
        names = list(conditions or conditions_for("generating" in data))
        unknown = sorted(set(params) - set(data.get("params") or {}))
        if unknown:
            raise CostFileError(f"no parameter named '{unknown[0]}' (parameters: "
                                f"{', '.join(data.get('params') or {}) or 'none'})", file=str(path), field="params")
        data = {**data, "params": {**(data.get("params") or {}), **params}}
        # the evidence of `check`: the same proof attempt too (its default budget), or of `check --quick`
        # conditions as `check` passes them (None: all of the file's kind), so the cache key is check's
        options = {"budget": budget, "seed": seed, "backend": "sympy",
                   "conditions": list(conditions) if conditions else None,
                   "prove": {"seconds": DEFAULT_PROOF_SECONDS, "cells": DEFAULT_PROOF_CELLS} if prove else None}
        report, _ = check_one(data, str(path), options, cache=cache)
        cost = report.cost
    except CostcheckError as exc:
        message = " ".join(str(exc).split())
        return {n: {"verdict": ERROR, "code": None, "kind": ERROR, "value": None, "witness": None, "where": None,
                    "summary": message} for n in names}
    out = {}
    for name, v in report.verdicts.items():
        out[name] = {"verdict": v.verdict, "code": v.code, "kind": v.evidence.kind,
                     "value": None if v.value is None else float(v.value),
                     "witness": None if v.witness is None else v.witness.to_json(cost.x_names, cost.y_names),
                     "where": where(v), "summary": v.evidence.summary}
    return out
