"""Run command lines of ``costcheck`` each in a forked child with a time and a memory limit.

    python tests/hostile/harness.py < cases.json > results.json

``cases.json`` is a list of ``{"name", "argv", "cwd"}`` (and optionally ``"bounds"``: values
for :mod:`costcheck.defaults`' stage bounds in that child); each result adds ``status`` (the exit
status, or ``None`` if a signal ended the child), ``signal``, ``stdout``, ``stderr``,
``seconds`` (wall time) and ``peak_mb`` (the child's peak resident memory, as the kernel counts it: pages it
inherited count once it touches them).

The parent imports costcheck's reading, loading and checking machinery once (a second or
two), so each case costs only its own work.  A child gets ``alarm(TIME_LIMIT)`` (a read that
blocks for ever is ended too) and an address-space limit ``MEMORY_LIMIT_MB`` above the
parent's, so a case that runs away is stopped and reported instead of taking the machine.
"""

from __future__ import annotations

import json
import os
import resource
import signal
import sys
import tempfile
import time

TIME_LIMIT = 20  # seconds of wall time for one case, then SIGALRM ends it
MEMORY_LIMIT_MB = 1500  # address space a case may add to what it inherits


def _vm_kb(field: str) -> int:
    with open("/proc/self/status", encoding="ascii") as handle:
        for line in handle:
            if line.startswith(field + ":"):
                return int(line.split()[1])
    return 0


def _child(argv: list[str], cwd: str, out_path: str, err_path: str, bounds: dict) -> None:
    os.chdir(cwd)
    out = os.open(out_path, os.O_WRONLY | os.O_TRUNC)
    err = os.open(err_path, os.O_WRONLY | os.O_TRUNC)
    os.dup2(out, 1)
    os.dup2(err, 2)
    sys.stdout = os.fdopen(1, "w", closefd=False)
    sys.stderr = os.fdopen(2, "w", closefd=False)
    limit = (_vm_kb("VmSize") * 1024) + MEMORY_LIMIT_MB * 1024 * 1024
    resource.setrlimit(resource.RLIMIT_AS, (limit, limit))
    signal.signal(signal.SIGALRM, signal.SIG_DFL)
    signal.alarm(TIME_LIMIT)
    code = 99
    try:
        import costcheck.defaults
        from costcheck.cli import main

        for name, value in bounds.items():  # smaller stage bounds, to see one reached in seconds
            setattr(costcheck.defaults, name, value)

        code = main(argv)
    except SystemExit as exc:
        code = exc.code if isinstance(exc.code, int) else 2
    except BaseException:  # noqa: BLE001 - the guard in main should make this unreachable
        import traceback

        traceback.print_exc()
        code = 98
    finally:
        try:
            sys.stdout.flush()
            sys.stderr.flush()
        finally:
            os._exit(code)


#: children at once: the machine's cores (each case is one process on one core)
PARALLEL = max(1, min(2, os.cpu_count() or 1))


def _start(case: dict, scratch: str, index: int) -> tuple[int, dict]:
    out_path, err_path = (os.path.join(scratch, f"{index}.{kind}") for kind in ("out", "err"))
    for path in (out_path, err_path):
        open(path, "w").close()
    sys.stdout.flush()
    sys.stderr.flush()
    started = time.perf_counter()
    pid = os.fork()
    if pid == 0:
        _child(case["argv"], case.get("cwd", "."), out_path, err_path, case.get("bounds", {}))
    return pid, {"case": case, "out": out_path, "err": err_path, "started": started}


def _result(job: dict, status: int, usage) -> dict:
    with open(job["out"], encoding="utf-8", errors="replace") as handle:
        stdout = handle.read()
    with open(job["err"], encoding="utf-8", errors="replace") as handle:
        stderr = handle.read()
    return {
        "name": job["case"]["name"],
        "status": os.waitstatus_to_exitcode(status) if os.WIFEXITED(status) else None,
        "signal": os.WTERMSIG(status) if os.WIFSIGNALED(status) else None,
        "stdout": stdout[-4000:],
        "stderr": stderr[-4000:],
        "seconds": round(time.perf_counter() - job["started"], 3),
        "peak_mb": round(usage.ru_maxrss / 1024, 1),
    }


def run(cases: list[dict]) -> list[dict]:
    """Every case in its own forked child, :data:`PARALLEL` at a time; results in the cases' order."""
    # what every child uses, loaded once here (not JAX: it starts threads a fork would copy badly)
    import costcheck.cli  # noqa: F401
    import costcheck.conditions.context  # noqa: F401
    import costcheck.derivatives.sympy_backend  # noqa: F401
    import costcheck.run.runner  # noqa: F401
    import costcheck.spec.loader  # noqa: F401

    results: dict[str, dict] = {}
    running: dict[int, dict] = {}
    pending = list(enumerate(cases))
    with tempfile.TemporaryDirectory(prefix="costcheck-hostile-") as scratch:
        while pending or running:
            while pending and len(running) < PARALLEL:
                index, case = pending.pop(0)
                pid, job = _start(case, scratch, index)
                running[pid] = job
            pid, status, usage = os.wait4(-1, 0)
            job = running.pop(pid)
            results[job["case"]["name"]] = _result(job, status, usage)
    return [results[case["name"]] for case in cases]


if __name__ == "__main__":
    json.dump(run(json.load(sys.stdin)), sys.stdout)
