"""Nestedness (``m = 1``) as a condition of ``costcheck check``: runs when the file carries ``data:``.

The mathematics and the convention are in :mod:`costcheck.nested` (Chiappori–McCann–Pass,
Comm. Pure Appl. Math. 70, 2017): nestedness depends on the cost *and* on the two
distributions, so without both it is ``not-applicable``.  Here the decision runs on a
coarser grid of levels than ``costcheck nested`` (which also builds the map), to keep a
catalog check fast; the verdict's evidence says how many levels were used.
"""

from __future__ import annotations

from ..nested.analysis import analyse
from ..verdict import Verdict

CONDITION = "nested"
#: levels of y in the catalog check (the nested command uses more)
CHECK_LEVELS = 48


def check(ctx) -> Verdict:
    return analyse(ctx.cost, levels=CHECK_LEVELS, with_map=False, evaluator=ctx.evaluator(2)).verdict
