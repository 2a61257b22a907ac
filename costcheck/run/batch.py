"""Check many cost files, answering from the result cache where it can.

Shared by ``costcheck check`` and ``costcheck report``.  ``run_options`` are passed to
:func:`~costcheck.run.runner.run_checks` unchanged *and* make up the options part of
the cache key, so an option that changes what the checks do cannot be forgotten in the
key.  A cache hit imports nothing but YAML, jsonschema and the verdict model.
"""

from __future__ import annotations

from contextlib import nullcontext
from dataclasses import dataclass, field
from pathlib import Path
from typing import Callable, ContextManager, Mapping, Sequence

from .cache import ResultCache, cache_key
from ..model.header import CostHeader
from ..conditions import REGISTRY
from ..model.report import CostReport
from ..errors import CostFileError
from ..spec.reading import read_cost_data


@dataclass
class BatchResult:
    reports: list[CostReport] = field(default_factory=list)
    errors: list[CostFileError] = field(default_factory=list)
    #: how many reports came from the cache
    cached: int = 0


def key_options(run_options: Mapping) -> dict:
    """``run_options`` as hashed: "all conditions" spelled out, since the list can grow."""
    options = dict(run_options)
    options["conditions"] = list(options.get("conditions") or REGISTRY)
    return options


def check_files(
    files: Sequence[Path],
    run_options: Mapping,
    *,
    cache: ResultCache | None,
    full_costs: bool = False,
    progress: Callable[[str], ContextManager] | None = None,
    on_report: Callable[[CostReport], None] | None = None,
    on_error: Callable[[CostFileError], None] | None = None,
) -> BatchResult:
    """Check ``files`` in order.  Bad files become errors; ids must be unique across them.

    ``full_costs`` makes every report carry the full :class:`~costcheck.model.cost.Cost` even on a
    cache hit (a design-review report needs the formula and draws from it); otherwise a hit
    carries a :class:`~costcheck.model.header.CostHeader`.  ``progress(cost_id)`` is entered around
    each computed (not cached) cost and yields a callback for the condition names, or ``None``.
    """
    result = BatchResult()
    seen_ids: dict[str, str] = {}
    for path in files:
        file = str(path)
        try:
            data = read_cost_data(path)
            if data["id"] in seen_ids:
                raise CostFileError(f"the id '{data['id']}' is already used by {seen_ids[data['id']]}",
                                    file=file, field="id")
            report, cached = check_one(data, file, run_options, cache=cache, full_cost=full_costs,
                                       progress=progress)
            seen_ids[data["id"]] = file
        except CostFileError as exc:
            result.errors.append(exc)
            if on_error:
                on_error(exc)
            continue
        result.cached += cached
        result.reports.append(report)
        if on_report:
            on_report(report)
    return result


def check_one(
    data: Mapping,
    file: str | None,
    run_options: Mapping,
    *,
    cache: ResultCache | None,
    full_cost: bool = False,
    param_overrides: Mapping[str, float] | None = None,
    progress: Callable[[str], ContextManager] | None = None,
) -> tuple[CostReport, bool]:
    """Check one validated cost-file mapping; ``(report, whether it came from the cache)``.

    ``param_overrides`` (a sweep's values) are part of the normalised cost, hence of the key.
    Raises :class:`CostFileError` for a file the loader refuses.
    """
    normalised = data
    if param_overrides:
        normalised = {**data, "params": {**(data.get("params") or {}), **param_overrides}}
    key = cache_key(normalised, key_options(run_options)) if cache is not None else None
    hit = cache.get(key, data["x"], data["y"]) if cache is not None else None
    cost = None
    if hit is None or full_cost:
        from ..spec.loader import build_cost  # sympy is imported here, only when needed
        # the loader applies the overrides itself (and refuses a parameter the file lacks)
        cost = build_cost(data, file, param_overrides=param_overrides or None)
    if hit is not None:
        return CostReport(cost or CostHeader.from_data(data, file), hit.verdicts, hit.seconds, hit.options), True
    from .runner import run_checks
    with progress(cost.id) if progress else nullcontext() as on_progress:
        report = run_checks(cost, **run_options, on_progress=on_progress)
    if cache is not None:
        cache.put(key, report)
    return report, False
