"""Check several cost files at once, one worker process per core, answers in file order.

Why processes: the checks are CPU-bound Python, NumPy and sympy work, which threads cannot
run side by side, and each cost's run is independent of the others (its seed is an option).

What crosses between processes is what the result cache stores: the validated file mapping
goes out, each verdict's JSON form (:meth:`~costcheck.model.verdict.Verdict.to_json`) comes
back and is rebuilt with :meth:`~costcheck.model.verdict.Verdict.from_json` — the round trip
a cached result takes, which the suite checks renders exactly as a fresh one.  A result that
has no JSON form comes back as ``None`` and the caller checks that file in its own process.

Workers are *spawned* (a fresh interpreter), not forked: a forked copy of a process that has
started JAX's or BLAS's threads can deadlock.  Spawning costs each worker its imports (about a
second or two), so :func:`worth_parallel` asks for at least :data:`MIN_FILES_PER_WORKER`
uncached files per worker.
"""

from __future__ import annotations

import multiprocessing
import os
from concurrent.futures import Future, ProcessPoolExecutor
from typing import Iterator, Mapping, Sequence

from ..errors import CostFileError

#: fewer uncached files than this per worker do not repay starting the workers
MIN_FILES_PER_WORKER = 2


def available_cores() -> int:
    """Cores this process may run on (its CPU affinity where the system reports one)."""
    try:
        return len(os.sched_getaffinity(0))
    except (AttributeError, OSError):
        return os.cpu_count() or 1


def worker_count(asked: int | None, files: int) -> int:
    """How many workers to start for ``files`` uncached files: at most ``asked`` (None: one per core)."""
    cores = asked or available_cores()
    return max(1, min(cores, files // MIN_FILES_PER_WORKER))


def checked_in_worker(data: Mapping, file: str | None, run_options: Mapping):
    """One cost file, in a worker: ``("report", verdicts JSON, seconds, options)``, ``("refused", …)``.

    Module-level, so a spawned worker can find it by name.
    """
    from ..spec.loader import build_cost
    from .memory import memory_bound_mb, out_of_memory_message
    from .runner import run_checks

    try:
        cost = build_cost(data, file)
        report = run_checks(cost, **run_options)
    except CostFileError as exc:
        # an exception with keyword fields does not survive pickling: send its parts
        return ("refused", exc.message, exc.file, exc.field)
    except MemoryError:  # past the bound the worker inherited (run.memory)
        return ("refused", out_of_memory_message(memory_bound_mb()), file, None)
    try:
        verdicts = {name: v.to_json(cost.x_names, cost.y_names) for name, v in report.verdicts.items()}
    except (TypeError, ValueError):
        return None  # no JSON form: the caller recomputes this one itself
    return ("report", verdicts, report.seconds, report.options)


def check_concurrently(
    jobs: Sequence[tuple[Mapping, str | None]], run_options: Mapping, workers: int,
) -> Iterator[tuple[int, object]]:
    """``(index, outcome of checked_in_worker)`` for each ``(data, file)`` job, in job order.

    Work starts on every job at once; the answers are handed out in order, so what the
    caller prints does not depend on which worker finished first.
    """
    context = multiprocessing.get_context("spawn")
    with ProcessPoolExecutor(max_workers=workers, mp_context=context) as pool:
        futures: list[Future] = [pool.submit(checked_in_worker, data, file, dict(run_options))
                                 for data, file in jobs]
        try:
            for index, future in enumerate(futures):
                yield index, future.result()
        finally:
            for future in futures:
                future.cancel()
