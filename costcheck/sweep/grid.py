"""Parse ``--vary`` options into sweep axes.

``NAME=start:stop:count`` is an inclusive linspace (``p=-4:3:71`` has step 0.1);
``NAME=v1,v2,...`` is an explicit list.  Values are snapped to round decimals
(:func:`snap`) so that a grid such as ``-4:3:71`` contains exactly ``-2.0``, ``1.0`` and
``2.0`` — exceptional parameter values of a family are then hit exactly.
"""

from __future__ import annotations

import itertools
import math
import re
from dataclasses import dataclass

from ..defaults import MAX_SWEEP_POINTS
from ..errors import CostcheckError

#: decimals kept when snapping a grid value
SNAP_DIGITS = 12
MAX_COUNT = MAX_SWEEP_POINTS
_NAME = re.compile(r"^[A-Za-z_][A-Za-z0-9_]*$")


class SweepSpecError(CostcheckError):
    """A bad ``--vary`` (or other sweep option); the message names the option."""


def snap(value: float) -> float:
    """Round to :data:`SNAP_DIGITS` decimals (and turn ``-0.0`` into ``0.0``)."""
    out = round(float(value), SNAP_DIGITS)
    return 0.0 if out == 0 else out


@dataclass(frozen=True)
class Axis:
    name: str
    values: tuple[float, ...]


def _number(text: str, spec: str) -> float:
    try:
        value = float(text)
    except ValueError:
        raise SweepSpecError(f"--vary {spec!r}: {text.strip()!r} is not a number "
                             "(expected NAME=start:stop:count or NAME=v1,v2,...)") from None
    if not math.isfinite(value):
        raise SweepSpecError(f"--vary {spec!r}: {text.strip()!r} is not a finite number")
    return value


def parse_vary(spec: str) -> Axis:
    """One ``--vary`` value → an :class:`Axis` (raises :class:`SweepSpecError`)."""
    if "=" not in spec:
        raise SweepSpecError(f"--vary {spec!r}: expected NAME=start:stop:count or NAME=v1,v2,...")
    name, _, body = spec.partition("=")
    name = name.strip()
    if not _NAME.match(name):
        raise SweepSpecError(f"--vary {spec!r}: {name!r} is not a parameter name")
    body = body.strip()
    if not body:
        raise SweepSpecError(f"--vary {spec!r}: no values after '='")
    if ":" in body:
        parts = body.split(":")
        if len(parts) != 3:
            raise SweepSpecError(f"--vary {spec!r}: a range is start:stop:count (three fields), got {len(parts)}")
        start, stop = _number(parts[0], spec), _number(parts[1], spec)
        try:
            count = int(parts[2])
        except ValueError:
            raise SweepSpecError(f"--vary {spec!r}: the count {parts[2].strip()!r} is not a whole number") from None
        if count < 1 or count > MAX_COUNT:
            raise SweepSpecError(f"--vary {spec!r}: the count must be between 1 and {MAX_COUNT}, got {count}")
        if count == 1:
            if start != stop:
                raise SweepSpecError(f"--vary {spec!r}: a count of 1 needs start == stop")
            values = [start]
        else:
            step = (stop - start) / (count - 1)
            values = [start + i * step for i in range(count)]
            values[-1] = stop
    else:
        values = [_number(t, spec) for t in body.split(",")]
    values = [snap(v) for v in values]
    if len(set(values)) != len(values):
        raise SweepSpecError(f"--vary {spec!r}: repeated values")
    if values != sorted(values) and values != sorted(values, reverse=True):
        values = sorted(values)
    return Axis(name, tuple(sorted(values)))


def parse_axes(specs, params: dict | None = None) -> list[Axis]:
    """Several ``--vary`` values; at most two axes, distinct names, known parameters."""
    if not specs:
        raise SweepSpecError("--vary: give at least one, e.g. --vary p=-4:3:71")
    axes = [parse_vary(s) for s in specs]
    names = [a.name for a in axes]
    if len(set(names)) != len(names):
        raise SweepSpecError(f"--vary: the parameter {names[0]!r} is given twice")
    if len(axes) > 2:
        raise SweepSpecError("--vary: at most two parameters (a line or a grid)")
    total = math.prod(len(a.values) for a in axes)
    if total > MAX_SWEEP_POINTS:
        sizes = " x ".join(str(len(a.values)) for a in axes)
        raise SweepSpecError(f"--vary: the sweep has {sizes} = {total} points; at most {MAX_SWEEP_POINTS} "
                             "are checked (each point is a whole check)")
    if params is not None:
        for a in axes:
            if a.name not in params:
                known = ", ".join(params) or "none"
                raise SweepSpecError(f"--vary: the cost has no parameter named {a.name!r} (parameters: {known})")
    return axes


def plan(axes: list[Axis]) -> list[dict[str, float]]:
    """Every grid point as ``{name: value}``, first axis slowest."""
    return [dict(zip([a.name for a in axes], combo)) for combo in itertools.product(*[a.values for a in axes])]
