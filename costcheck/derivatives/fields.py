"""The derivative fields every backend fills and every check reads: which arrays each order
adds, the :class:`Derivatives` that holds them and the :class:`Evaluator` that computes them."""

from __future__ import annotations

from dataclasses import dataclass, fields
from typing import Callable, Optional

import numpy as np

from ..errors import UsageError

#: Which fields each derivative order adds.
ORDER_FIELDS = {
    0: ("value",),
    1: ("dx", "dy"),
    2: ("dxy",),
    3: ("dxxy", "dxyy"),
    4: ("dxxyy",),
}


def fields_up_to(order: int) -> tuple[str, ...]:
    return tuple(name for k in range(order + 1) for name in ORDER_FIELDS[k])


@dataclass(frozen=True)
class Derivatives:
    """Arrays of derivative values at ``N`` pairs; higher orders are ``None`` if not asked for."""

    value: np.ndarray
    dx: Optional[np.ndarray] = None
    dy: Optional[np.ndarray] = None
    dxy: Optional[np.ndarray] = None
    dxxy: Optional[np.ndarray] = None
    dxyy: Optional[np.ndarray] = None
    dxxyy: Optional[np.ndarray] = None

    @property
    def defined(self) -> np.ndarray:
        """True at pairs where every computed quantity is finite (inside the cost's domain)."""
        ok = np.ones(self.value.shape[0], dtype=bool)
        for f in fields(self):
            arr = getattr(self, f.name)
            if arr is not None:
                ok &= np.isfinite(arr).reshape(arr.shape[0], -1).all(axis=1) if arr.size else ok
        return ok

    def take(self, index) -> "Derivatives":
        """The same derivatives at a subset of the pairs."""
        return Derivatives(**{f.name: (None if getattr(self, f.name) is None else getattr(self, f.name)[index])
                              for f in fields(self)})


@dataclass(frozen=True)
class Evaluator:
    """``evaluator(xs, ys)`` → :class:`Derivatives`, for arrays of shape ``(N, n)`` and ``(N, m)``."""

    n: int
    m: int
    order: int
    backend: str
    _fn: Callable

    def __call__(self, xs, ys) -> Derivatives:
        xs = np.atleast_2d(np.asarray(xs, dtype=float))
        ys = np.atleast_2d(np.asarray(ys, dtype=float))
        # ndim check: an (N, n, k) array used to pass the shape test and then fail deep
        # inside a backend with a TypeError/ValueError instead of a UsageError
        if (xs.ndim != 2 or ys.ndim != 2
                or xs.shape[1] != self.n or ys.shape[1] != self.m or xs.shape[0] != ys.shape[0]):
            raise UsageError(f"expected x of shape (N, {self.n}) and y of shape (N, {self.m}); "
                             f"got {xs.shape} and {ys.shape}")
        if xs.shape[0] == 0:
            return self._empty()
        with np.errstate(all="ignore"):
            return self._fn(xs, ys)

    def _empty(self) -> Derivatives:
        n, m = self.n, self.m
        shapes = {"value": (), "dx": (n,), "dy": (m,), "dxy": (n, m), "dxxy": (n, n, m),
                  "dxyy": (n, m, m), "dxxyy": (n, n, m, m)}
        return Derivatives(**{name: np.empty((0,) + shapes[name]) for name in fields_up_to(self.order)})
