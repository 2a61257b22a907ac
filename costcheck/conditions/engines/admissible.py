"""Where a witness may stand: segments that stay inside the domain where the cost is defined, and
points that close in on a strict constraint's excluded boundary (a zero there is the
boundary's, not the domain's).  Both read the check's context: its domain and its sample."""

from __future__ import annotations

import numpy as np

from ...numerics.search import constraint_values, strict_constraints, usable


def segment_is_usable(ctx, ev, z0: np.ndarray, z1: np.ndarray, count: int = 65) -> bool:
    """``count`` equally spaced points of the segment ``z0 -> z1`` are in the domain and defined."""
    n = ctx.cost.n
    t = np.linspace(0.0, 1.0, count)[:, None]
    z = (1 - t) * z0 + t * z1
    d = ev(z[:, :n], z[:, n:])
    return bool(usable(ctx.cost.domain, d, z[:, :n], z[:, n:]).all())


def near_open_boundary(ctx, x, y, relative: float = 1e-10) -> bool:
    """True when ``(x, y)`` is within ``relative`` (of a typical value) of a strict constraint's boundary.

    A strict constraint ``g > 0`` leaves its boundary out of the domain, so a "zero" found by
    refinement that closes in on ``g = 0`` (``det M = 2|x - y|²`` approaching the excluded
    diagonal, say) is the boundary's, not the domain's, and must not be reported as a witness.
    """
    xs, ys = np.atleast_2d(np.asarray(x, float)), np.atleast_2d(np.asarray(y, float))
    sample = ctx.sample
    for constraint, side in strict_constraints(ctx.cost.domain):
        typical = constraint_values(constraint, side, sample.xs, sample.ys)
        typical = typical[np.isfinite(typical)]
        scale = float(np.median(np.abs(typical))) if typical.size else 1.0
        g = constraint_values(constraint, side, xs, ys)
        if not np.all(np.isfinite(g)) or np.min(g) <= relative * max(scale, 1e-300):
            return True
    return False
