"""Re-checking a Loeper witness with the cost's own values, no c-segment code (shared by tests)."""

from __future__ import annotations

import numpy as np


def assert_violates_the_maximum_principle(report) -> None:
    """``f(t) = c(x, y_t) − c(x', y_t)`` exceeds ``max(f(0), f(1))`` (the definition, Loeper 2009),
    and ``y_t`` lies on the c-segment: ``−D_x c(x, y_t)`` is on the line through ``p0`` and ``p1``."""
    w = report.verdicts["loeper"].witness
    ev = report.cost.derivatives(order=1)
    ys = np.array([w.vectors["y0"], w.y, w.vectors["y1"]])
    f = ev(np.repeat([w.x], 3, axis=0), ys).value - ev(np.repeat([w.vectors["x_prime"]], 3, axis=0), ys).value
    assert f[1] > max(f[0], f[2])
    p = -ev(np.repeat([w.x], 3, axis=0), ys).dx
    d1, d2 = p[1] - p[0], p[2] - p[0]
    assert abs(d1[0] * d2[1] - d1[1] * d2[0]) < 1e-9 * np.linalg.norm(d2) ** 2
