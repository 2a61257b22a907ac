"""A bound on the memory one costcheck process may take, so a cost cannot exhaust the machine.

A cost file decides how much memory its checks need (an expression whose derivatives grow
without end, a huge ``--budget``).  The bound is the operating system's limit on a process's
data segment (``RLIMIT_DATA``: on Linux since 4.7 every private writable mapping, so NumPy's
arrays, sympy's trees and JAX's buffers alike, but not shared libraries).  Past it an allocation
fails with :class:`MemoryError`, which :mod:`costcheck.run.batch` turns into an error naming the
file instead of a machine driven into swap.  The limit is inherited by worker and child processes.

Measured (2026-12, this project's 2-core machine): the data segment after importing sympy,
NumPy, SciPy and JAX and compiling one function is ~0.36 GB; a 2-D check at the largest
``--budget`` peaks near 0.9 GB resident.  The default leaves ample room above both.
"""

from __future__ import annotations

import os

#: the default bound in MB; ``COSTCHECK_MEMORY_MB`` overrides it (0: no bound of ours)
DEFAULT_MEMORY_MB = 8192


def memory_bound_mb() -> int:
    """The bound asked for: ``COSTCHECK_MEMORY_MB`` if set to a whole number, else the default."""
    text = os.environ.get("COSTCHECK_MEMORY_MB", "").strip()
    return int(text) if text.isdigit() else DEFAULT_MEMORY_MB


def bound_memory(megabytes: int | None = None) -> int | None:
    """Lower this process's data-segment limit to ``megabytes``; the bound set (MB) or None.

    Never raises the limit above the one the process was given, and does nothing where the
    system has no such limit.
    """
    megabytes = memory_bound_mb() if megabytes is None else megabytes
    if megabytes <= 0:
        return None
    try:
        import resource
    except ImportError:  # not a POSIX system
        return None
    wanted = megabytes * 2**20
    try:
        soft, hard = resource.getrlimit(resource.RLIMIT_DATA)
        if hard != resource.RLIM_INFINITY:
            wanted = min(wanted, hard)
        if soft != resource.RLIM_INFINITY and soft <= wanted:
            return soft // 2**20  # already at or below the bound
        resource.setrlimit(resource.RLIMIT_DATA, (wanted, hard))
    except (ValueError, OSError, AttributeError):
        return None
    return wanted // 2**20


def out_of_memory_message(megabytes: int | None) -> str:
    """What a file is told when its check ran out of the bound."""
    bound = f"the bound of {megabytes:,} MB" if megabytes else "the memory available"
    return (f"checking this cost needed more memory than {bound} (an expression whose derivatives grow "
            f"too large, or too large a --budget); simplify it or lower --budget "
            f"(COSTCHECK_MEMORY_MB sets the bound)")
