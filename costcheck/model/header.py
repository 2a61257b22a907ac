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
class GeneratingLabel:
    """What outputs read of a generating function's third variable: its name."""

    z: str


def coordinate_names(data: Mapping) -> tuple[tuple[str, ...], tuple[str, ...]]:
    """The x and y names of a validated file as its checked cost has them (a generating
    function's third variable ends the y names: the target side is ``(y, z)``)."""
    generating = data.get("generating")
    z = (str(generating["z"]),) if isinstance(generating, Mapping) and "z" in generating else ()
    return tuple(data["x"]), tuple(data["y"]) + z


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
    generating: GeneratingLabel | None = None

    @classmethod
    def from_data(cls, data: Mapping, file: str | None) -> "CostHeader":
        x_names, y_names = coordinate_names(data)
        generating = GeneratingLabel(y_names[-1]) if len(y_names) > len(data["y"]) else None
        return cls(id=data["id"], x_names=x_names, y_names=y_names, title=data.get("title", ""),
                   sense=data.get("sense", "cost"), expect=dict(data.get("expect") or {}),
                   source=data.get("source"), file=file, generating=generating)
