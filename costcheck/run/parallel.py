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


def expected_work(data: Mapping) -> tuple[int, int]:
    """A rough, file-only guess of how long a cost takes, for ordering only: the dimension of the
    pairs first (a 3-D cost's searches and proofs take several times a 2-D one's), then the length of
    its formula (a chart's long expression has long derivatives)."""
    dimension = len(data.get("x") or ()) + len(data.get("y") or ())
    text = str(data.get("expr") or "") + "".join(str(v) for v in (data.get("define") or {}).values())
    return dimension, len(text)


def check_concurrently(
    jobs: Sequence[tuple[Mapping, str | None]], run_options: Mapping, workers: int,
) -> Iterator[tuple[int, object]]:
    """``(index, outcome of checked_in_worker)`` for each ``(data, file)`` job, in job order.

    Work starts on every job at once, the longest expected first (:func:`expected_work`: a long
    job started last would leave the other workers idle at the end); the answers are handed out in
    job order, so what the caller prints does not depend on which worker finished first.
    """
    context = multiprocessing.get_context("spawn")
    with ProcessPoolExecutor(max_workers=workers, mp_context=context) as pool:
        # the pool starts jobs in the order they are submitted; sorted() is stable, so ties keep file order
        order = sorted(range(len(jobs)), key=lambda i: expected_work(jobs[i][0]), reverse=True)
        futures: dict[int, Future] = {i: pool.submit(checked_in_worker, jobs[i][0], jobs[i][1], dict(run_options))
                                      for i in order}
        try:
            for index in range(len(jobs)):
                yield index, futures[index].result()
        finally:
            for future in futures.values():
                future.cancel()
