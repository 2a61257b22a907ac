"""SciPy's scrambled Sobol points, kept on disk once drawn, so a check need not import ``scipy.stats``.

Every sample of the checks is ``qmc.Sobol(d, scramble=True, seed=rng).random_base2(m)`` from SciPy,
and stays so.  Importing ``scipy.stats.qmc`` loads the whole of ``scipy.stats`` (about a second,
a third of a small check's wall time from the shell), while the draw itself is deterministic:
the points depend only on ``d``, ``m``, the state of the generator ``rng`` that scrambles them and
SciPy's version.  So the first draw for such a key stores the points and the generator's state
after the scrambling in a file; a later draw with the same key reads them back and puts ``rng``
in that state — the same numbers, and the same stream for whatever draws from ``rng`` next.

The store is a computation cache like a compiler's, not the result cache: it holds no verdict,
and ``--no-cache`` does not bypass it.  Files go under ``$COSTCHECK_POINTS_DIR``, else
``$COSTCHECK_CACHE_DIR/points``, else ``$XDG_CACHE_HOME/costcheck/points``
(``~/.cache/costcheck/points``); a file is trusted only if it carries the key it is stored under
and points of the right shape in ``[0, 1)``, anything else is drawn afresh and overwritten; a
store that cannot be written is simply not used.
"""

from __future__ import annotations

import hashlib
import json
import os
import tempfile
from functools import lru_cache
from pathlib import Path

import numpy as np

#: bump when the file layout changes; older files are then simply not found
FORMAT = 1


def points_directory() -> Path:
    explicit = os.environ.get("COSTCHECK_POINTS_DIR")
    if explicit:
        return Path(explicit)
    results = os.environ.get("COSTCHECK_CACHE_DIR")
    if results:
        return Path(results) / "points"
    base = os.environ.get("XDG_CACHE_HOME") or os.path.join(os.path.expanduser("~"), ".cache")
    return Path(base) / "costcheck" / "points"


@lru_cache(maxsize=1)
def _scipy_version() -> str:
    from importlib import metadata

    return metadata.version("scipy")


def _key(d: int, exponent: int, state: dict) -> str:
    document = {"format": FORMAT, "scipy": _scipy_version(), "d": d, "m": exponent, "scramble": True,
                "state": state}
    return hashlib.sha256(json.dumps(document, sort_keys=True, separators=(",", ":")).encode()).hexdigest()


def _read(path: Path, key: str, d: int, exponent: int):
    """``(unit points, generator state after)`` from the file, or None if it is missing or not trusted."""
    try:
        with np.load(path, allow_pickle=False) as stored:
            if str(stored["key"]) != key:
                return None
            unit = np.array(stored["unit"], dtype=np.float64)
            after = json.loads(str(stored["after"]))
    except (OSError, ValueError, KeyError, EOFError, json.JSONDecodeError):
        return None
    good = (unit.shape == (2 ** exponent, d) and np.all(np.isfinite(unit)) and np.all(unit >= 0)
            and np.all(unit < 1) and isinstance(after, dict))
    return (unit, after) if good else None


def _write(path: Path, key: str, unit: np.ndarray, after: dict) -> None:
    try:
        path.parent.mkdir(parents=True, exist_ok=True)
        fd, temporary = tempfile.mkstemp(dir=path.parent, prefix=".", suffix=".npz")
        with os.fdopen(fd, "wb") as handle:
            np.savez(handle, key=np.array(key), unit=unit, after=np.array(json.dumps(after)))
        os.replace(temporary, path)  # atomic: a concurrent reader sees the old file or the new one
    except OSError:
        pass  # a read-only or full disk: the points were drawn, only not kept


def unit_points(d: int, exponent: int, rng: np.random.Generator) -> np.ndarray:
    """``qmc.Sobol(d, scramble=True, seed=rng).random_base2(exponent)``, leaving ``rng`` as that call does."""
    if not isinstance(rng, np.random.Generator):  # an integer seed: nothing to key a stored draw on reliably
        from scipy.stats import qmc

        return qmc.Sobol(d=d, scramble=True, seed=rng).random_base2(exponent)
    state = rng.bit_generator.state
    key = _key(d, exponent, state)
    path = points_directory() / key[:2] / f"{key}.npz"
    found = _read(path, key, d, exponent)
    if found is not None:
        unit, after = found
        try:
            rng.bit_generator.state = after
            return unit
        except (TypeError, ValueError, KeyError):
            rng.bit_generator.state = state  # not a state of this generator: draw afresh
    from scipy.stats import qmc  # the whole of scipy.stats: only when the points are not stored

    unit = qmc.Sobol(d=d, scramble=True, seed=rng).random_base2(exponent)
    _write(path, key, unit, rng.bit_generator.state)
    return unit


def scaled(unit: np.ndarray, lower, upper) -> np.ndarray:
    """``qmc.scale(unit, lower, upper)`` for points already in the unit cube: the same arithmetic; bounds it
    would refuse are handed to it, so its error is the one raised."""
    if unit.ndim != 2 or not np.all(np.broadcast_to(lower, unit.shape[1]) < np.broadcast_to(upper, unit.shape[1])):
        from scipy.stats import qmc

        return qmc.scale(unit, lower, upper)
    lo, hi = np.broadcast_to(lower, unit.shape[1]), np.broadcast_to(upper, unit.shape[1])
    return unit * (hi - lo) + lo
