"""Whether nestedness can be decided for a cost, and on which two distributions.

Light on purpose (no numerics): a check of a cost with m > 1, or without data, answers
"not applicable" from here without loading the quadrature and level machinery.
"""

from __future__ import annotations

from ...spec.data import DataSpec, SideSpec


def sides_of(cost, source: SideSpec | None = None, target: SideSpec | None = None):
    """The two sides to use: command-line ones first, then the file's ``data:``."""
    spec = cost.data or DataSpec()
    return source or spec.source, target or spec.target


def applicable(cost, source, target) -> str | None:
    """Why nestedness cannot be decided here, or None."""
    if cost.m != 1:
        return f"nestedness is defined here for a one-dimensional target (m = 1); this cost has m = {cost.m}"
    missing = [name for name, side in (("source", source), ("target", target)) if side is None]
    if missing:
        return (f"nestedness depends on the two distributions, and the {' and '.join(missing)} "
                f"{'is' if len(missing) == 1 else 'are'} not given (a 'data:' key in the cost file, or --source / "
                "--target CSV files)")
    return None
