"""Run one computation with a time limit (sympy has none of its own).

:func:`run_with_time_limit` runs the work in a forked child process and its result comes back
through a queue; when the time is up the child is terminated and the caller is told so, to
report honestly that the computation gave up rather than hang.  :func:`within` bounds work in
this process (for results that do not pickle, such as compiled evaluators).
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


class StageTimeout(BaseException):
    """A stage ran past its wall-time bound.

    A ``BaseException``, so that a library's ``except Exception`` around the interrupted work
    (sympy has several) cannot swallow it and carry on past the bound.
    """

    def __init__(self, stage: str, seconds: float, token: object):
        super().__init__(f"{stage} did not finish within {seconds:g} s")
        self.stage = stage
        self.seconds = seconds
        self.token = token


def within(seconds: float | None, stage: str, fn: Callable, *args, **kwargs) -> tuple[str, Any]:
    """``("ok", fn(*args, **kwargs))``, or ``("timeout", None)`` once ``seconds`` of wall time pass.

    In-process, with ``SIGALRM`` (so the result need not pickle, unlike
    :func:`run_with_time_limit`): the interrupt lands between two Python steps, which bounds
    sympy's pure-Python work (differentiation, expansion, determinants) but not one long call
    into compiled code.  Outside the main thread, where Python delivers no signals, ``fn``
    runs without a bound.  An enclosing bound that ends sooner stays in charge, and its
    timeout passes through to its own caller.
    """
    import signal
    import threading
    import time

    if (seconds is None or not hasattr(signal, "setitimer")
            or threading.current_thread() is not threading.main_thread()):
        return "ok", fn(*args, **kwargs)
    outer_left, _ = signal.getitimer(signal.ITIMER_REAL)
    if outer_left and outer_left <= seconds:
        return "ok", fn(*args, **kwargs)
    token = object()

    def expire(signum, frame):
        raise StageTimeout(stage, seconds, token)

    previous = signal.signal(signal.SIGALRM, expire)
    started = time.monotonic()
    signal.setitimer(signal.ITIMER_REAL, max(seconds, 1e-3))
    try:
        return "ok", fn(*args, **kwargs)
    except StageTimeout as exc:
        if exc.token is not token:
            raise
        return "timeout", None
    finally:
        signal.setitimer(signal.ITIMER_REAL, 0)
        signal.signal(signal.SIGALRM, previous)
        if outer_left:
            signal.setitimer(signal.ITIMER_REAL, max(outer_left - (time.monotonic() - started), 1e-3))
