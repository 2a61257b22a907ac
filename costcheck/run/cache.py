"""Result cache: an unchanged cost file checked with unchanged options is not recomputed.

The key
-------
``sha256`` of one canonical JSON document (sorted keys, no whitespace) holding

- the *normalised cost*: the file's content after YAML reading and schema validation, so
  comments, whitespace, quoting style and key order do not change it (cost files refer to
  no other files today; a future field that names one must add that file's bytes in
  :func:`referenced_files`);
- the *check options*: every option that reaches the checks, passed as one mapping, so an
  option added later (a proof mode, say) enters the key without touching this module;
- the *tool*: its version, a digest of its own source files (a change to a check between
  releases must not serve old verdicts) and the versions of the numerical libraries the
  verdicts depend on.

The store
---------
One JSON file per key, ``<dir>/<key[:2]>/<key>.json``, under ``$COSTCHECK_CACHE_DIR`` or
else ``$XDG_CACHE_HOME/costcheck/results`` (``~/.cache/costcheck/results``).  Writes go to a
temporary file in the same folder and are moved into place with ``os.replace``, which is
atomic, so concurrent runs (pre-commit splits files across processes) never see half an
entry.  An entry is trusted only if it parses, carries the very key it is stored under,
and rebuilds into verdicts; anything else (truncated, corrupt, hand-edited, another
format) is ignored, recomputed and overwritten.

Import cost: this module, :mod:`costcheck.spec.reading` and the renderers import no sympy,
SciPy or JAX, so a run answered entirely from the cache starts and ends in well under a
second per catalog.
"""

from __future__ import annotations

import hashlib
import json
import os
import tempfile
from dataclasses import dataclass
from functools import lru_cache
from importlib import metadata
from pathlib import Path
from typing import Mapping, Sequence

from .. import __version__
from ..model.header import CostHeader  # noqa: F401 - re-exported: cached reports carry one
from ..model.verdict import Verdict

#: bump when the entry layout changes; older entries are then simply not found
ENTRY_FORMAT = 1

#: distributions whose version can change a verdict (numerics, symbolic algebra, precision)
_NUMERIC_DISTRIBUTIONS = ("sympy", "numpy", "scipy", "mpmath", "jax", "jaxlib")


def default_directory() -> Path:
    explicit = os.environ.get("COSTCHECK_CACHE_DIR")
    if explicit:
        return Path(explicit)
    base = os.environ.get("XDG_CACHE_HOME") or os.path.join(os.path.expanduser("~"), ".cache")
    return Path(base) / "costcheck" / "results"


@lru_cache(maxsize=1)
def tool_fingerprint() -> dict:
    """The tool's version, a digest of its own source and its numerical libraries' versions."""
    digest = hashlib.sha256()
    # the whole costcheck package (this file is in costcheck/run/): since the layout by pipeline
    # step, ``.parent`` alone hashed only run/, so a changed loader or condition kept old results
    package = Path(__file__).resolve().parent.parent
    for path in sorted(package.rglob("*.py")):
        digest.update(path.relative_to(package).as_posix().encode())
        digest.update(b"\0")
        digest.update(path.read_bytes())
        digest.update(b"\0")
    libraries = {}
    for name in _NUMERIC_DISTRIBUTIONS:
        try:
            libraries[name] = metadata.version(name)
        except metadata.PackageNotFoundError:
            libraries[name] = None
    return {"version": __version__, "source_sha256": digest.hexdigest(), "libraries": libraries}


def referenced_files(data: Mapping) -> dict[str, str]:
    """sha256 of every file a cost file refers to, by the name it uses.  None do today."""
    return {}


def _canonical(value) -> str:
    # allow_nan: a file may say `.nan` or `.inf` where a number goes; the loader refuses it later,
    # with a message naming the field, and the key must not crash first
    return json.dumps(value, sort_keys=True, separators=(",", ":"), ensure_ascii=False, allow_nan=True)


def cache_key(data: Mapping, options: Mapping) -> str:
    """The key of checking the validated cost-file content ``data`` with ``options``."""
    document = {"cost": data, "files": referenced_files(data), "options": options, "tool": tool_fingerprint()}
    return hashlib.sha256(_canonical(document).encode("utf-8")).hexdigest()


@dataclass(frozen=True)
class CachedResult:
    verdicts: dict[str, Verdict]
    seconds: float
    options: dict


class ResultCache:
    """Entries under one directory; see the module docstring for the guarantees."""

    def __init__(self, directory: str | os.PathLike | None = None):
        self.directory = Path(directory) if directory is not None else default_directory()

    def path_for(self, key: str) -> Path:
        return self.directory / key[:2] / f"{key}.json"

    def get(self, key: str, x_names: Sequence[str], y_names: Sequence[str]) -> CachedResult | None:
        """The stored result for ``key``, or ``None`` when there is none that can be trusted."""
        try:
            entry = json.loads(self.path_for(key).read_text(encoding="utf-8"))
            if not isinstance(entry, dict) or entry.get("format") != ENTRY_FORMAT or entry.get("key") != key:
                return None
            if entry["x"] != list(x_names) or entry["y"] != list(y_names):
                return None
            verdicts = {name: Verdict.from_json(name, doc, x_names, y_names) for name, doc in entry["verdicts"].items()}
            return CachedResult(verdicts, float(entry["seconds"]), dict(entry["options"]))
        except (OSError, ValueError, KeyError, TypeError, AttributeError):
            # missing, unreadable, truncated, not JSON, or not an entry of ours: recompute
            return None

    def put(self, key: str, report) -> bool:
        """Store a :class:`~costcheck.run.runner.CostReport` under ``key``; ``False`` if it cannot be."""
        cost = report.cost
        entry = {
            "format": ENTRY_FORMAT, "key": key, "x": list(cost.x_names), "y": list(cost.y_names),
            "seconds": report.seconds, "options": report.options,
            "verdicts": {name: v.to_json(cost.x_names, cost.y_names) for name, v in report.verdicts.items()},
        }
        path = self.path_for(key)
        try:
            # NaN and infinities are written as JSON's common extension so they come back exactly
            text = json.dumps(entry, ensure_ascii=False, allow_nan=True)
            path.parent.mkdir(parents=True, exist_ok=True)
            fd, temporary = tempfile.mkstemp(dir=path.parent, prefix=".", suffix=".tmp")
            try:
                with os.fdopen(fd, "w", encoding="utf-8") as handle:
                    handle.write(text)
                os.replace(temporary, path)
            except BaseException:
                os.unlink(temporary)
                raise
            return True
        except (OSError, TypeError, ValueError):
            # a read-only or full disk, or a verdict with a value JSON cannot hold: run uncached
            return False
