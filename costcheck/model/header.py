"""The parts of a cost that outputs read by name: what a cached result carries instead of a
:class:`~costcheck.model.cost.Cost` (no expression, so no sympy)."""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Mapping


class CostLabels:
    """Dimensions and label, from ``id``, ``file``, ``x_names``, ``y_names`` (shared by ``Cost``)."""

    @property
    def n(self) -> int:
        return len(self.x_names)

    @property
    def m(self) -> int:
        return len(self.y_names)

    @property
    def label(self) -> str:
        return f"{self.id} ({self.file})" if self.file else self.id


@dataclass(frozen=True)
class CostHeader(CostLabels):
    """What renderers read about a cost, for a result that comes from the cache.

    It has the attributes of :class:`~costcheck.model.cost.Cost` that the terminal, JSON and
    JUnit outputs use (names, labels, expectations) and none of the mathematics, which
    is what lets a cached run skip sympy entirely.
    """

    id: str
    x_names: tuple[str, ...]
    y_names: tuple[str, ...]
    title: str = ""
    sense: str = "cost"
    expect: Mapping[str, str] = field(default_factory=dict)
    source: str | None = None
    file: str | None = None

    @classmethod
    def from_data(cls, data: Mapping, file: str | None) -> "CostHeader":
        return cls(id=data["id"], x_names=tuple(data["x"]), y_names=tuple(data["y"]), title=data.get("title", ""),
                   sense=data.get("sense", "cost"), expect=dict(data.get("expect") or {}),
                   source=data.get("source"), file=file)
