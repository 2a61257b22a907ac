"""What the proofs of one cost share: each proof space built once during that cost's run.

Non-degeneracy, MTW and NNCC each ask for a proof space, and on a chart cost (:mod:`.charts`)
the parts of one are expensive: the pairing ``σ`` enclosed over tens of thousands of cells,
the fourth derivatives rewritten into the normal forms.  Built per condition, the sphere's
charts spent most of a default check there.  A :class:`ProofPreparation` keeps what was built,
keyed by what it depends on (the fields asked for), so the second condition reuses the first's.

It is owned by the run of one cost (:attr:`costcheck.conditions.context.CheckContext.proof_preparation`)
and dropped with it: nothing is carried from one file to the next, and a run without one
(``prep=None`` in :mod:`.proofs`) builds everything afresh, exactly as before.
"""

from __future__ import annotations

from typing import Callable, Sequence


class ProofPreparation:
    """``once(key, build)``: ``build()`` the first time ``key`` is asked for, the same object after."""

    def __init__(self, cost):
        self.cost = cost
        self._built: dict = {}

    def once(self, key, build: Callable):
        if key not in self._built:
            self._built[key] = build()  # an interrupted build (a time bound) stores nothing
        return self._built[key]

    def chart_space(self, fields: Sequence[str]):
        """:func:`.charts.chart_space` of the cost for ``fields``, built once."""
        from .charts import chart_space

        return self.once(("chart space", tuple(fields)), lambda: chart_space(self.cost, fields, self))

    def normal_forms(self):
        """:func:`.charts.normal_forms` of the cost, built once (the chart proofs all start from it)."""
        from .charts import normal_forms

        return self.once(("normal forms",), lambda: normal_forms(self.cost))

    def space_for(self, fields: Sequence[str]):
        """:func:`.space.space_for` of the cost for ``fields``, built once."""
        from .space import space_for

        return self.once(("space", tuple(fields)), lambda: space_for(self.cost, fields))


def chart_space_of(cost, fields: Sequence[str], prep: ProofPreparation | None):
    """The chart space through ``prep`` when there is one, else built afresh."""
    if prep is None:
        from .charts import chart_space

        return chart_space(cost, fields)
    return prep.chart_space(fields)


def normal_forms_of(cost, prep: ProofPreparation | None):
    """The chart's normal forms through ``prep`` when there is one, else built afresh."""
    if prep is None:
        from .charts import normal_forms

        return normal_forms(cost)
    return prep.normal_forms()


def space_of(cost, fields: Sequence[str], prep: ProofPreparation | None):
    """:func:`.space.space_for` through ``prep`` when there is one, else built afresh."""
    if prep is None:
        from .space import space_for

        return space_for(cost, fields)
    return prep.space_for(fields)
