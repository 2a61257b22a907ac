"""One parameter value of a sweep: load the family at that value, run the checks, keep what the
table needs.  A top-level function, so process pools and Dask can pickle it by its module path."""

from __future__ import annotations

from typing import Sequence

ERROR = "error"


def evaluate_point(path: str, params: dict, budget: int, seed: int, conditions: Sequence[str] | None,
                   cache_dir: str | None = None) -> dict:
    """Check the cost at ``params``; ``{condition: {verdict, code, kind, value, witness, summary}}``.

    With ``cache_dir`` the result cache there answers values already checked (the key holds
    the parameter values, as :func:`costcheck.run.batch.check_one` normalises them).
    """
    from ..conditions import REGISTRY
    from ..errors import CostcheckError
    from ..run.batch import check_one
    from ..run.cache import ResultCache
    from ..spec.reading import read_cost_data

    names = list(conditions or REGISTRY)
    try:
        cache = ResultCache(cache_dir) if cache_dir is not None else None
        options = {"budget": budget, "seed": seed, "backend": "sympy", "conditions": names}
        report, _ = check_one(read_cost_data(path), str(path), options, cache=cache, param_overrides=params)
        cost = report.cost
    except CostcheckError as exc:
        message = " ".join(str(exc).split())
        return {n: {"verdict": ERROR, "code": None, "kind": ERROR, "value": None, "witness": None,
                    "summary": message} for n in names}
    out = {}
    for name, v in report.verdicts.items():
        out[name] = {"verdict": v.verdict, "code": v.code, "kind": v.evidence.kind,
                     "value": None if v.value is None else float(v.value),
                     "witness": None if v.witness is None else v.witness.to_json(cost.x_names, cost.y_names),
                     "summary": v.evidence.summary}
    return out
