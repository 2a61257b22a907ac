"""Per-pair compiled kernels (numba): the options every kernel shares, and why.

The ``n = 3`` margin is a long chain of small dependent steps per pair (a 3 × 3 algebra, then
Newton iterations on SO(3)).  Written on ``N``-long numpy columns each step is a pass over
memory (about 1 ns per element-operation), and under ``jax.jit`` XLA recomputes shared work
for every output of a loop body; compiled per pair, the chain stays in registers.

* ``cache``: the machine code is kept on disk (:func:`cache_directory`), so only the first run
  on a machine compiles (about 12 s for the ``n = 3`` margin);
* ``nogil=True``: callers run blocks of pairs on several threads (:mod:`.space_margin`);
* ``error_model="numpy"``: a division by zero gives ``inf``/``nan`` as in numpy, never an
  exception from inside a kernel;
* ``fastmath={"contract"}``: fused multiply-adds only (about 5–10 % on the Newton loop); NaN,
  infinity and signed-zero semantics are kept, so the kernels' finiteness tests stay exact.

:func:`inline` marks the small helpers that a kernel calls in its inner loop: inlined at
numba's level they become one function that LLVM keeps in registers (called, each returned
its tuple through memory).
"""

from __future__ import annotations

import hashlib
import os
from functools import lru_cache
from pathlib import Path

import numba
from numba import njit

#: the modules whose functions are compiled here: a change to any of them must reach every
#: kernel, and numba checks only the stamp of the file a cached function is defined in (a
#: kernel that inlined a helper from another file would otherwise keep the old helper)
KERNEL_MODULES = ("compiled.py", "small3.py", "biquadratic.py", "space_margin.py")

_OPTIONS = {"nogil": True, "error_model": "numpy", "fastmath": {"contract"}}


@lru_cache(maxsize=1)
def cache_directory() -> str | None:
    """Where compiled kernels persist: a folder named by a digest of :data:`KERNEL_MODULES` and
    numba's version under ``$COSTCHECK_NUMBA_CACHE`` if set (``0`` or empty: no cache, compile in
    every process), else under ``$XDG_CACHE_HOME/costcheck/numba`` (``~/.cache/costcheck/numba``);
    ``None`` where that folder cannot be written."""
    chosen = os.environ.get("COSTCHECK_NUMBA_CACHE")
    if chosen is not None and chosen.strip() in ("", "0"):
        return None
    base = chosen or os.path.join(os.environ.get("XDG_CACHE_HOME") or os.path.join(os.path.expanduser("~"), ".cache"),
                                  "costcheck", "numba")
    digest = hashlib.sha256(numba.__version__.encode())
    here = Path(__file__).resolve().parent
    for name in KERNEL_MODULES:
        digest.update(name.encode() + b"\0" + (here / name).read_bytes() + b"\0")
    path = os.path.join(base, digest.hexdigest()[:16])
    try:
        os.makedirs(path, exist_ok=True)
    except OSError:
        return None
    return path if os.access(path, os.W_OK) else None


def _compile(function, **options):
    directory = cache_directory()
    if directory is None:
        return njit(**_OPTIONS, **options)(function)
    # numba picks a function's cache folder when it is decorated, from this setting
    previous = numba.config.CACHE_DIR
    numba.config.CACHE_DIR = directory
    try:
        return njit(cache=True, **_OPTIONS, **options)(function)
    finally:
        numba.config.CACHE_DIR = previous


def kernel(function):
    """A compiled entry point (called from Python on arrays, or from another kernel)."""
    return _compile(function)


def inline(function):
    """A compiled helper, inlined into the kernels that call it (still callable from Python)."""
    return _compile(function, inline="always")
