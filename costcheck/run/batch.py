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
from ..model.header import CostHeader, coordinate_names
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
    workers: int | None = 1,
) -> BatchResult:
    """Check ``files``; reports and errors are handed out in file order.  Ids must be unique.

    ``full_costs`` makes every report carry the full :class:`~costcheck.model.cost.Cost` even on a
    cache hit (a design-review report needs the formula and draws from it); otherwise a hit
    carries a :class:`~costcheck.model.header.CostHeader`.  ``progress(cost_id)`` is entered around
    each computed (not cached) cost and yields a callback for the condition names, or ``None``.
    ``workers`` (``None``: one per CPU) is how many worker processes may check uncached files at once
    (see :mod:`costcheck.run.parallel`); the output does not depend on it.
    """
    from .parallel import worker_count

    result = BatchResult()
    slots = read_all(files, run_options, cache=cache, full_costs=full_costs)
    waiting = [(slot[1], slot[0]) for slot in slots if isinstance(slot[1], Mapping)]
    workers = worker_count(workers, len(waiting))
    answers = None
    if workers > 1:
        from .parallel import check_concurrently
        answers = check_concurrently(waiting, run_options, workers)
    for file, found in slots:
        try:
            if isinstance(found, CostFileError):
                raise found
            if isinstance(found, CostReport):
                report, cached = found, True
            elif answers is not None:
                with progress(found["id"]) if progress else nullcontext():
                    report = from_worker(next(answers)[1], found, file, run_options,
                                         cache=cache, full_cost=full_costs)
                cached = False
            else:
                report, cached = check_one(found, file, run_options, cache=cache, full_cost=full_costs,
                                           progress=progress)
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


def read_all(files: Sequence[Path], run_options: Mapping, *, cache: ResultCache | None,
             full_costs: bool) -> list[tuple[str, object]]:
    """``(file, what is known)`` per file: its refusal, its cached report, or its data to check."""
    slots: list[tuple[str, object]] = []
    seen_ids: dict[str, str] = {}
    for path in files:
        file = str(path)
        try:
            data = read_cost_data(path)
            if data["id"] in seen_ids:
                raise CostFileError(f"the id '{data['id']}' is already used by {seen_ids[data['id']]}",
                                    file=file, field="id")
            seen_ids[data["id"]] = file
            hit = cached_report(data, file, run_options, cache=cache, full_cost=full_costs)
            slots.append((file, hit or data))
        except CostFileError as exc:
            slots.append((file, exc))
    return slots


def from_worker(answer, data: Mapping, file: str, run_options: Mapping, *, cache: ResultCache | None,
                full_cost: bool) -> CostReport:
    """The report of a worker's ``answer`` (see :func:`~costcheck.run.parallel.checked_in_worker`)."""
    if answer is None:  # the verdicts had no JSON form: check this file here
        return check_one(data, file, run_options, cache=cache, full_cost=full_cost)[0]
    if answer[0] == "refused":
        raise CostFileError(answer[1], file=answer[2], field=answer[3])
    from ..model.verdict import Verdict

    _, documents, seconds, options = answer
    x_names, y_names = coordinate_names(data)
    verdicts = {name: Verdict.from_json(name, doc, x_names, y_names) for name, doc in documents.items()}
    report = CostReport(build_full_cost(data, file) if full_cost else CostHeader.from_data(data, file),
                        verdicts, seconds, options)
    if cache is not None:
        cache.put(cache_key(data, key_options(run_options)), report)
    return report


def build_full_cost(data: Mapping, file: str | None, param_overrides: Mapping[str, float] | None = None):
    from ..spec.loader import build_cost  # sympy is imported here, only when needed
    # the loader applies the overrides itself (and refuses a parameter the file lacks)
    return build_cost(data, file, param_overrides=param_overrides or None)


def normalised_data(data: Mapping, param_overrides: Mapping[str, float] | None) -> Mapping:
    """``data`` with a sweep's values in its parameters: part of the normalised cost, hence of the key."""
    if not param_overrides:
        return data
    return {**data, "params": {**(data.get("params") or {}), **param_overrides}}


def cached_report(data: Mapping, file: str | None, run_options: Mapping, *, cache: ResultCache | None,
                  full_cost: bool = False, param_overrides: Mapping[str, float] | None = None
                  ) -> CostReport | None:
    """The cached report of ``data`` under ``run_options``, or ``None`` (no cache, or a miss)."""
    if cache is None:
        return None
    hit = cache.get(cache_key(normalised_data(data, param_overrides), key_options(run_options)),
                    *coordinate_names(data))
    if hit is None:
        return None
    cost = build_full_cost(data, file, param_overrides) if full_cost else CostHeader.from_data(data, file)
    return CostReport(cost, hit.verdicts, hit.seconds, hit.options)


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
    hit = cached_report(data, file, run_options, cache=cache, full_cost=full_cost, param_overrides=param_overrides)
    if hit is not None:
        return hit, True
    from .memory import memory_bound_mb, out_of_memory_message
    from .runner import run_checks
    try:
        cost = build_full_cost(data, file, param_overrides)
        with progress(cost.id) if progress else nullcontext() as on_progress:
            report = run_checks(cost, **run_options, on_progress=on_progress)
    except MemoryError:  # past the process's bound (run.memory): this file, not the whole run
        raise CostFileError(out_of_memory_message(memory_bound_mb()), file=file) from None
    if cache is not None:
        cache.put(cache_key(normalised_data(data, param_overrides), key_options(run_options)), report)
    return report, False
