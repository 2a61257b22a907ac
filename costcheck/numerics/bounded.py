"""Run one symbolic computation with a time limit (sympy has none of its own).

The work runs in a forked child process and its result comes back through a queue; when the
time is up the child is terminated and the caller is told so, to report honestly that the
computation gave up rather than hang.
"""

from __future__ import annotations

import multiprocessing
import queue as queue_module
from typing import Any, Callable


def _worker(fn, args, out):
    try:
        out.put(("ok", fn(*args)))
    except Exception as exc:  # noqa: BLE001 - reported to the caller as text
        out.put(("error", f"{type(exc).__name__}: {exc}"))


def run_with_time_limit(fn: Callable, args: tuple, seconds: float) -> tuple[str, Any]:
    """``("ok", result)``, ``("error", text)`` or ``("timeout", None)``; ``result`` must pickle."""
    if seconds <= 0:
        return "timeout", None
    # fork, as symbolic_tensor does: a fork server or spawn would re-import the caller's main module
    # (breaking scripts without a main guard); the child runs only sympy, never JAX
    ctx = multiprocessing.get_context("fork")
    out = ctx.Queue()
    proc = ctx.Process(target=_worker, args=(fn, args, out), daemon=True)
    proc.start()
    try:
        status, value = out.get(timeout=seconds)
    except queue_module.Empty:
        status, value = "timeout", None
    if proc.is_alive():
        proc.terminate()
    proc.join()
    return status, value
