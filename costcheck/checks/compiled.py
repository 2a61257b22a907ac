"""Per-pair compiled kernels (numba): the options every kernel shares, and why.

The ``n = 3`` margin is a long chain of small dependent steps per pair (a 3 × 3 algebra, then
Newton iterations on SO(3)).  Written on ``N``-long numpy columns each step is a pass over
memory (about 1 ns per element-operation), and under ``jax.jit`` XLA recomputes shared work
for every output of a loop body; compiled per pair, the chain stays in registers.

* ``cache=True``: the machine code is kept on disk beside the module (or in numba's user-wide
  cache where that folder is read-only), so only the first run on a machine compiles;
* ``nogil=True``: callers run blocks of pairs on several threads (:mod:`.space_margin`);
* ``error_model="numpy"``: a division by zero gives ``inf``/``nan`` as in numpy, never an
  exception from inside a kernel;
* ``fastmath={"contract"}``: fused multiply-adds only (about 5–10 % on the Newton loop); NaN,
  infinity and signed-zero semantics are kept, so the kernels' finiteness tests stay exact.

:func:`inline` marks the small helpers that a kernel calls in its inner loop: inlined at
numba's level they become one function that LLVM keeps in registers (called, each returned
its tuple through memory, and the Newton loop ran 1.6× slower).
"""

from __future__ import annotations

from numba import njit

_OPTIONS = {"cache": True, "nogil": True, "error_model": "numpy", "fastmath": {"contract"}}


def kernel(function):
    """A compiled entry point (called from Python on arrays)."""
    return njit(**_OPTIONS)(function)


def inline(function):
    """A compiled helper, inlined into the kernels that call it (still callable from Python)."""
    return njit(inline="always", **_OPTIONS)(function)
