"""Domains of a cost: a box or a ball on each side, plus inequality constraints.

Constraints are stored as ``g >= 0`` (or ``g > 0``) in sympy and evaluated with numpy;
a point where a constraint cannot be evaluated (NaN) counts as outside.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Callable, Sequence

import numpy as np
import sympy as sp


@dataclass(frozen=True)
class Box:
    """The product of intervals ``[lower_i, upper_i]``."""

    lower: tuple[float, ...]
    upper: tuple[float, ...]

    @property
    def dim(self) -> int:
        return len(self.lower)

    def bounds(self) -> tuple[np.ndarray, np.ndarray]:
        return np.asarray(self.lower, float), np.asarray(self.upper, float)

    def contains(self, points: np.ndarray) -> np.ndarray:
        lo, hi = self.bounds()
        return np.all((points >= lo) & (points <= hi), axis=-1)

    def describe(self, names: Sequence[str]) -> str:
        return " × ".join(f"{n} ∈ [{a:g}, {b:g}]" for n, a, b in zip(names, self.lower, self.upper))

    def to_json(self) -> dict:
        return {"box": [[a, b] for a, b in zip(self.lower, self.upper)]}


@dataclass(frozen=True)
class Ball:
    """The closed Euclidean ball ``|p - center| <= radius``."""

    center: tuple[float, ...]
    radius: float

    @property
    def dim(self) -> int:
        return len(self.center)

    def bounds(self) -> tuple[np.ndarray, np.ndarray]:
        c = np.asarray(self.center, float)
        return c - self.radius, c + self.radius

    def contains(self, points: np.ndarray) -> np.ndarray:
        c = np.asarray(self.center, float)
        return np.sum((points - c) ** 2, axis=-1) <= self.radius**2 * (1 + 1e-12)

    def describe(self, names: Sequence[str]) -> str:
        centre = ", ".join(f"{v:g}" for v in self.center)
        return f"|({', '.join(names)}) - ({centre})| ≤ {self.radius:g}"

    def to_json(self) -> dict:
        return {"ball": {"center": list(self.center), "radius": self.radius}}


Region = Box | Ball


@dataclass(frozen=True)
class Inequality:
    """A constraint ``g >= 0`` (or ``g > 0`` when ``strict``) with its source text."""

    g: sp.Expr
    strict: bool
    text: str


@dataclass(frozen=True)
class Constraint:
    """One inequality with its numeric evaluator over the listed symbols."""

    inequality: Inequality
    symbols: tuple[sp.Symbol, ...]
    _evaluate: Callable = field(repr=False, compare=False)

    @classmethod
    def build(cls, inequality: Inequality, symbols: Sequence[sp.Symbol]) -> "Constraint":
        fn = sp.lambdify(list(symbols), inequality.g, modules="numpy", dummify=True)
        return cls(inequality, tuple(symbols), fn)

    def satisfied(self, points: np.ndarray) -> np.ndarray:
        """Boolean mask over the rows of ``points`` (columns in ``symbols`` order)."""
        with np.errstate(all="ignore"):
            g = np.asarray(self._evaluate(*points.T), dtype=float)
        g = np.broadcast_to(g, points.shape[:1])
        ok = g > 0 if self.inequality.strict else g >= 0
        return ok & np.isfinite(g)


@dataclass(frozen=True)
class Domain:
    """Source region, target region, and the constraints that cut them down."""

    x: Region
    y: Region
    where_x: tuple[Constraint, ...] = ()
    where_y: tuple[Constraint, ...] = ()
    pairs: tuple[Constraint, ...] = ()

    def contains_x(self, xs: np.ndarray) -> np.ndarray:
        ok = self.x.contains(xs)
        for c in self.where_x:
            ok &= c.satisfied(xs)
        return ok

    def contains_y(self, ys: np.ndarray) -> np.ndarray:
        ok = self.y.contains(ys)
        for c in self.where_y:
            ok &= c.satisfied(ys)
        return ok

    def contains_pairs(self, xs: np.ndarray, ys: np.ndarray) -> np.ndarray:
        ok = self.contains_x(xs) & self.contains_y(ys)
        joint = np.concatenate([xs, ys], axis=1)
        for c in self.pairs:
            ok &= c.satisfied(joint)
        return ok

    def constraint_texts(self) -> dict[str, list[str]]:
        texts = lambda cs: sorted({c.inequality.text for c in cs})  # noqa: E731
        return {"where": texts(self.where_x + self.where_y), "pairs": texts(self.pairs)}
