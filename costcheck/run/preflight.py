"""Two ways a cost file can leave nothing to check, found before any condition runs.

An empty domain (no point satisfies the ``where`` / ``pairs`` constraints) and a cost that is
undefined at every sampled pair (``log`` of a quantity that is negative on the whole domain)
used to end with every condition "undecided" and exit status 0, so a CI job passed green on
a file that states nothing.  Both are mistakes in the file: they become a
:class:`~costcheck.errors.CostFileError` (exit status 2) saying which it is, with a point and
the reason for the second.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

from ..errors import CostFileError

if TYPE_CHECKING:
    from ..conditions.context import CheckContext

#: points of the bounding regions on which each constraint is tried alone, to name the culprit
_PROBE = 4096


def _format(names, values) -> str:
    return "(" + ", ".join(f"{n} = {v:.6g}" for n, v in zip(names, values)) + ")"


def _empty_domain(ctx: "CheckContext") -> CostFileError:
    import numpy as np

    from ..numerics.sampling import sample_side

    cost = ctx.cost
    domain = cost.domain
    box = type(domain)(domain.x, domain.y)  # the regions alone, without the constraints
    xs = sample_side(box, "x", cost.n, _PROBE, ctx.seed)
    # shuffled: two scrambled Sobol sequences side by side are correlated (in 1-D, x - y stayed
    # below 0.47 on all 4096 rows), which would hide pairs constraints such as x - y >= 0.5
    ys = np.random.default_rng(ctx.seed).permutation(sample_side(box, "y", cost.m, _PROBE, ctx.seed + 1))
    culprits = []
    for kind, constraints, points in (("where", domain.where_x, xs), ("where", domain.where_y, ys),
                                      ("pairs", domain.pairs, np.hstack([xs, ys]))):
        for c in constraints:
            if not c.satisfied(points).any():
                culprits.append(f"'{c.inequality.text}' ({kind})")
    drawn = f" (none of {ctx.sample.drawn} quasi-random draws in the regions satisfied them)" if ctx.sample.drawn else ""
    if culprits:
        what = ("the constraint " + culprits[0] + " holds") if len(culprits) == 1 else \
            ("the constraints " + ", ".join(culprits[:3]) + " hold")
        return CostFileError(f"the domain is empty: {what} at none of {_PROBE} sampled "
                             f"points of the regions{drawn}", file=cost.file, field="domain")
    return CostFileError(f"the domain is empty: no sampled point satisfies all of its where/pairs constraints "
                         f"together{drawn}", file=cost.file, field="domain")


def _undefined_everywhere(ctx: "CheckContext") -> CostFileError:
    from ..spec.expression import locate_undefined

    cost = ctx.cost
    sample = ctx.sample
    x, y = sample.xs[0], sample.ys[0]
    where = f"x = {_format(cost.x_names, x)}, y = {_format(cost.y_names, y)}"
    found = None
    if cost.written_expr is not None:
        point = {**dict(zip(cost.x_symbols, x)), **dict(zip(cost.y_symbols, y))}
        found = locate_undefined(cost.expr, point)
    reason = f"{found[0]} is {found[1]}" if found else "its derivatives are not finite there"
    return CostFileError(f"the cost is undefined at all {sample.count} sampled pairs of the domain; e.g. at "
                         f"{where}: {reason}", file=cost.file, field="expr")


def refuse_nothing_to_check(ctx: "CheckContext") -> None:
    """Raise :class:`CostFileError` if the domain is empty or the cost is undefined on all of it."""
    if ctx.sample.count == 0:
        raise _empty_domain(ctx)
    if not ctx.defined.any():
        raise _undefined_everywhere(ctx)
