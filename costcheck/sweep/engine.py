"""Evaluate sweep points: in process, on a local process pool, or on a Dask scheduler.

Each point is evaluated by :func:`evaluate_point`, a top-level function of plain
arguments returning plain data, so that it pickles for a process pool and for
``dask.distributed.Client.map`` alike.  A cost that cannot be built at a value (for
example ``-(1/p)|x-y|^p`` at ``p = 0``, a division by zero) gets the verdict ``error``
for every condition, with the message.
"""

from __future__ import annotations

import multiprocessing
import os
import time
from concurrent.futures import ProcessPoolExecutor
from dataclasses import dataclass, field
from typing import Callable, Sequence

from ..defaults import SCHEDULER_CONNECT_SECONDS
from .boundaries import RECHECK_FACTOR, find_boundaries
from .grid import Axis, SweepSpecError, plan
from .point import evaluate_point


class Executor:
    """Maps :func:`evaluate_point` over many parameter dicts; the three back ends share this."""

    def __init__(self, path: str, budget: int, seed: int, workers: int | None = None,
                 scheduler: str | None = None, client=None, cache_dir: str | None = None, prove: bool = True):
        self.path, self.budget, self.seed, self.cache_dir = str(path), budget, seed, cache_dir
        self.prove = prove
        self.workers = workers or os.cpu_count() or 1
        self._pool = None
        self._client = client
        self._own_client = False
        if scheduler is not None and client is None:
            try:
                from dask.distributed import Client
            except ImportError:
                raise SweepSpecError("--scheduler needs dask.distributed, which is not installed "
                                     "(pip install 'dask[distributed]')") from None
            try:
                # a bounded wait: dask's own default (30 s, with retries) looked like a hang
                self._client = Client(scheduler, timeout=SCHEDULER_CONNECT_SECONDS)
            except Exception as exc:  # noqa: BLE001 - any connection problem is a usage error here
                raise SweepSpecError(f"--scheduler {scheduler!r}: cannot connect ({' '.join(str(exc).split())})") from None
            self._own_client = True
        elif self._client is None and self.workers > 1:
            # spawn, not fork: the parent may hold threads (JAX, BLAS) that fork would copy badly
            self._pool = ProcessPoolExecutor(self.workers, mp_context=multiprocessing.get_context("spawn"))

    def map(self, points: list[dict], conditions: Sequence[str] | None, budget: int | None = None) -> list[dict]:
        """Each point checked at ``budget`` (the sweep's own by default) with the sweep's seed."""
        n = len(points)
        budget = budget or self.budget
        args = ([self.path] * n, points, [budget] * n, [self.seed] * n, [conditions] * n, [self.cache_dir] * n,
                [self.prove] * n)
        if self._client is not None:
            futures = self._client.map(evaluate_point, *args, pure=False)
            return self._client.gather(futures)
        if self._pool is not None:
            return list(self._pool.map(evaluate_point, *args))
        return [evaluate_point(*a) for a in zip(*args)]

    def close(self):
        if self._pool is not None:
            self._pool.shutdown()
        if self._own_client:
            self._client.close()


@dataclass
class SweepResult:
    file: str
    axes: list[Axis]
    conditions: list[str]
    points: list[dict]                 # [{name: value}]
    results: list[dict]                # parallel to points: {condition: {...}}
    boundaries: list[dict] = field(default_factory=list)
    isolated: list[dict] = field(default_factory=list)
    #: verdict changes that did not survive the re-check at a higher budget (not boundaries)
    unstable: list[dict] = field(default_factory=list)
    options: dict = field(default_factory=dict)
    seconds: float = 0.0

    def verdict(self, index: int, condition: str) -> str:
        return self.results[index][condition]["verdict"]

    def to_json(self) -> dict:
        return {
            "file": self.file,
            "axes": [{"name": a.name, "values": list(a.values)} for a in self.axes],
            "conditions": self.conditions,
            "options": self.options,
            "points": [{"params": p, "checks": r} for p, r in zip(self.points, self.results)],
            "boundaries": self.boundaries,
            "isolated": self.isolated,
            "unstable": self.unstable,
            "seconds": round(self.seconds, 3),
        }


def run_sweep(path, axes: list[Axis], *, budget: int, seed: int, conditions: Sequence[str] | None = None,
              workers: int | None = None, scheduler: str | None = None, client=None,
              tolerance: float = 1e-3, bisect: bool = True, cache: bool = True,
              on_progress: Callable[[int, int], None] | None = None, prove: bool = True) -> SweepResult:
    """Check every grid point, then (for one axis, or along each line of a grid) bisect verdict changes.

    ``cache``: answer values already checked from the result cache (:mod:`costcheck.run.cache`).
    ``prove``: check each point as plain ``check`` does (its default proofs); False as ``check --quick``.
    """
    from ..api import load
    from ..conditions import conditions_for

    if tolerance <= 0:
        raise SweepSpecError(f"--tolerance must be positive, got {tolerance}")
    base = load(path)                      # raises CostFileError for a bad file
    names = list(conditions or conditions_for(getattr(base, "generating", None) is not None))
    for a in axes:
        if a.name not in base.params:
            known = ", ".join(base.params) or "none"
            raise SweepSpecError(f"--vary: the cost has no parameter named {a.name!r} (parameters: {known})")
    started = time.perf_counter()
    points = plan(axes)
    from ..run.cache import default_directory

    cache_dir = str(default_directory()) if cache else None
    executor = Executor(path, budget, seed, workers=workers, scheduler=scheduler, client=client, cache_dir=cache_dir,
                        prove=prove)
    try:
        results: list[dict] = []
        chunk = max(1, executor.workers * 2)
        for i in range(0, len(points), chunk):
            results.extend(executor.map(points[i:i + chunk], names))
            if on_progress:
                on_progress(len(results), len(points))
        result = SweepResult(str(path), axes, names, points, results,
                             options={"budget": budget, "seed": seed, "tolerance": tolerance,
                                      "recheck_budget": budget * RECHECK_FACTOR, "proofs": prove,
                                      "only": list(conditions) if conditions else None})
        # without bisection, grid changes and isolated values are still reported (infinite tolerance)
        result.boundaries, result.isolated, result.unstable = find_boundaries(
            result, executor, tolerance if bisect else float("inf"))
    finally:
        executor.close()
    result.seconds = time.perf_counter() - started
    return result
