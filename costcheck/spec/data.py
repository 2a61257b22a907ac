"""The data: key of a cost file, as written: each side a density expression (parsed by the safe
expression reader) or a CSV file of points with optional weights, validated here with errors
that name the file, the field and the row.  Turning a side into a measure is the nestedness
condition's job (costcheck.conditions.nested.measures)."""

from __future__ import annotations

import csv
import io
import os
from dataclasses import dataclass
from pathlib import Path
from typing import Mapping, Sequence

import numpy as np
import sympy as sp

from ..errors import CostFileError
from .expression import parse_expression
from .reading import open_regular_file, read_capped_bytes

MAX_CSV_BYTES = 64 * 1024 * 1024

MAX_CSV_ROWS = 2_000_000

MAX_HEADER_CHARS = 4096

WEIGHT_COLUMN = "weight"


@dataclass(frozen=True)
class SideSpec:
    """One side's distribution as written: a density expression or a CSV path."""

    role: str  # "source" or "target"
    kind: str  # "density" or "points"
    density: sp.Expr | None = None
    path: Path | None = None
    written: str = ""
    #: where it came from, for error messages: the cost file's field or the command-line option
    origin: str = ""
    #: points: "sample", "grid", or None (a file whose points fill a regular grid is read as a grid)
    layout: str | None = None

    def describe(self) -> str:
        return f"density {self.written}" if self.kind == "density" else f"weighted points from {self.path}"


@dataclass(frozen=True)
class DataSpec:
    source: SideSpec | None = None
    target: SideSpec | None = None
    notes: str = ""


def parse_data_spec(raw: Mapping, x_symbols: Sequence[sp.Symbol], y_symbols: Sequence[sp.Symbol],
                    constants: Mapping[str, sp.Expr], file: str | None) -> DataSpec:
    """Meaning checks of a cost file's ``data:`` mapping (its shape was checked by the schema)."""
    sides = {}
    for role, symbols in (("source", x_symbols), ("target", y_symbols)):
        if role not in raw:
            continue
        entry = raw[role]
        field = f"data.{role}"
        if "density" in entry:
            sides[role] = density_side(role, entry["density"], symbols, constants, file, f"{field}.density")
        else:
            base = Path(file).parent if file else Path.cwd()
            names = [str(v) for v in symbols]
            path = _beside(base, entry["points"], file, f"{field}.points")
            sides[role] = points_side(role, path, file, f"{field}.points", names,
                                      layout=entry.get("layout"))
    return DataSpec(sides.get("source"), sides.get("target"), str(raw.get("notes", "")))


def _beside(base: Path, written: str, file: str | None, field: str) -> Path:
    """A data path of a cost file: relative, in the cost file's folder or below it.

    A cost file comes from a repository someone else may write to; it may name only files it
    travels with, never an arbitrary file of the machine (whose first line an error message
    would quote).  Links are followed before the test, so a link out of the folder is refused too.
    """
    if Path(written).is_absolute():
        raise CostFileError(f"{_quote(written)} is an absolute path; data files are named relative to the "
                            "cost file's folder", file=file, field=field)
    path = base / written
    try:
        inside = path.resolve().is_relative_to(base.resolve())
    except (OSError, RuntimeError):  # a link loop: the reader names it
        inside = True
    if not inside:
        raise CostFileError(f"{_quote(written)} leads out of the cost file's folder; data files must lie in "
                            "it or below it", file=file, field=field)
    return path


def _quote(text: str, limit: int = 40) -> str:
    """A value from a file, quoted (control characters as codes) and cut to ``limit`` characters."""
    quoted = repr(text)
    return quoted if len(quoted) <= limit else quoted[:limit - 1] + "…"


def density_side(role: str, text, symbols: Sequence[sp.Symbol], constants: Mapping[str, sp.Expr],
                 file: str | None, field: str) -> SideSpec:
    names = {**dict(constants), **{str(s): s for s in symbols}}
    try:
        expr = parse_expression(text, names)
    except CostFileError as exc:
        raise exc.located(file=file, field_prefix=field) from None
    stray = expr.free_symbols - set(symbols)
    if stray:
        raise CostFileError(f"the {role} density may use only the {role}'s coordinates "
                            f"({', '.join(map(str, symbols))}); it mentions {sorted(map(str, stray))}",
                            file=file, field=field)
    return SideSpec(role, "density", density=expr, written=str(text), origin=field)


def points_side(role: str, path: Path, file: str | None, field: str, names: Sequence[str] | None = None,
                layout: str | None = None) -> SideSpec:
    """A CSV side; its header is checked now (cheap), its rows when the points are needed."""
    if not os.path.lexists(path):
        raise CostFileError(f"no such CSV file: {path}", file=file, field=field)
    # the same door as cost files: a pipe, a device or a link loop is refused by kind
    open_regular_file(path, str(path)).close()
    if names is not None:
        try:
            with open_regular_file(path, str(path)) as raw, \
                    io.TextIOWrapper(raw, encoding="utf-8-sig", newline="") as handle:
                first = handle.readline(MAX_HEADER_CHARS + 1)
        except UnicodeDecodeError:
            raise CostFileError("not UTF-8 text", file=str(path)) from None
        if len(first) > MAX_HEADER_CHARS:
            raise CostFileError(f"the first line (the column names) is longer than {MAX_HEADER_CHARS} characters",
                                file=str(path))
        try:
            header = next(csv.reader([first]), [])
        except csv.Error as exc:
            raise CostFileError(f"unreadable CSV ({exc})", file=str(path)) from None
        _check_header([h.strip() for h in header], names, str(path))
    return SideSpec(role, "points", path=path, written=str(path), origin=field, layout=layout)


def _check_header(header: list[str], names: Sequence[str], label: str) -> None:
    if not header:
        raise CostFileError("the CSV file is empty; its first line must name the columns "
                            f"({', '.join(names)} and optionally {WEIGHT_COLUMN})", file=label)
    allowed = list(names) + [WEIGHT_COLUMN]
    for col in header:
        if col not in allowed:
            raise CostFileError(f"row 1: unknown column {_quote(col)}; the columns must be {', '.join(names)} and "
                                f"optionally {WEIGHT_COLUMN}", file=label)
    if len(set(header)) != len(header):
        raise CostFileError("row 1: a column is named twice", file=label)
    missing = [n for n in names if n not in header]
    if missing:
        raise CostFileError(f"row 1: the column '{missing[0]}' is missing (columns needed: {', '.join(names)})",
                            file=label)


def read_points(path: Path, names: Sequence[str]) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Coordinates, raw weights and CSV row numbers from a file whose header is ``names`` plus optional ``weight``."""
    label = str(path)
    raw = read_capped_bytes(path, MAX_CSV_BYTES, label, kind="data files")
    try:
        # utf-8-sig: a spreadsheet's UTF-8 export starts with a byte-order mark, which is not part of a name
        rows = list(csv.reader(io.StringIO(raw.decode("utf-8-sig"), newline="")))
    except UnicodeDecodeError:
        raise CostFileError("not UTF-8 text", file=label) from None
    except csv.Error as exc:
        raise CostFileError(f"unreadable CSV ({exc})", file=label) from None
    header = [h.strip() for h in rows[0]] if rows else []
    _check_header(header, names, label)
    body = rows[1:]
    if len(body) > MAX_CSV_ROWS:
        raise CostFileError(f"{len(body)} data rows; at most {MAX_CSV_ROWS} are read", file=label)
    order = [header.index(n) for n in names]
    wcol = header.index(WEIGHT_COLUMN) if WEIGHT_COLUMN in header else None
    coords = np.empty((len(body), len(names)))
    weights = np.ones(len(body))
    line = np.zeros(len(body), dtype=int)
    kept = 0
    for r, row in enumerate(body, start=2):
        if not row or all(not cell.strip() for cell in row):
            continue  # blank lines are allowed
        if len(row) != len(header):
            raise CostFileError(f"row {r}: {len(row)} cells, but the header has {len(header)}", file=label)
        for k, c in enumerate(order):
            coords[kept, k] = _number(row[c], label, r, header[c])
        if wcol is not None:
            w = _number(row[wcol], label, r, WEIGHT_COLUMN)
            if w < 0:
                raise CostFileError(f"row {r}, column '{WEIGHT_COLUMN}': negative weight {w:g}", file=label)
            weights[kept] = w
        line[kept] = r
        kept += 1
    if kept == 0:
        raise CostFileError("no data rows after the header", file=label)
    coords, weights = coords[:kept], weights[:kept]
    if not weights.sum() > 0:
        raise CostFileError(f"the weights sum to zero (column '{WEIGHT_COLUMN}')", file=label)
    return coords, weights, line[:kept]


def _number(cell: str, label: str, row: int, column: str) -> float:
    try:
        value = float(cell)
    except ValueError:
        raise CostFileError(f"row {row}, column '{column}': {_quote(cell.strip())} is not a number", file=label) from None
    if not np.isfinite(value):
        raise CostFileError(f"row {row}, column '{column}': {_quote(cell.strip())} is not a finite number", file=label)
    return value
