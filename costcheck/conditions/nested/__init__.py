"""Nestedness of multi-to-one-dimensional matching models (``m = 1``), and the map it gives.

Convention (exactly as Chiappori–McCann–Pass, Comm. Pure Appl. Math. 70, 2017, state it, for a
surplus ``s`` that is maximised; costcheck stores the cost ``c = -s`` it minimises, so here
``∂s/∂y = -∂c/∂y``; a file written with ``sense: cost`` has ``s = -c``):

- for ``y`` in ``Y ⊂ R`` and a level ``k``, ``X≤(y, k) = {x : ∂s/∂y(x, y) ≤ k}`` and
  ``X<(y, k) = {x : ∂s/∂y(x, y) < k}``;
- ``k(y)`` solves the mass balance ``μ(X≤(y, k(y))) = ν((-∞, y])``; the left side is
  non-decreasing in ``k``, and where the source has gaps the solutions form an interval
  ``[k-(y), k+(y)]``;
- the model is **nested** when ``y < y'`` with ``ν((y, y']) > 0`` implies
  ``X≤(y, k+(y)) ⊂ X<(y', k-(y'))``.  Then ``T(x) = y`` on the level set
  ``{∂s/∂y(x, y) = k(y)}`` is well defined μ-almost everywhere, pushes ``μ`` to ``ν`` and is
  the unique optimal map (CMP 2017, their main theorem on nested models; recalled; docs/conditions.md#nested).  A witness of
  non-nestedness is ``y < y'`` and a source point in ``X≤(y, k+(y))`` but not in
  ``X<(y', k-(y'))``: the level curves cross.

Inside ``costcheck check`` the condition runs when the file carries ``data:`` (without both
distributions it is ``not-applicable``), on the same grid of levels as ``costcheck nested``
(``--levels``, ``--grid`` for a source density; the defaults in :mod:`costcheck.defaults`) but
without building the map; the verdict's evidence says how many levels were used.

Modules: :mod:`.data` (the two distributions), :mod:`.levels` (``k±(y)`` on a grid),
:mod:`.decide` (the verdict and its witness), :mod:`.map` (``T`` and the files it writes),
:mod:`.analysis` (one call that runs them).
"""

from __future__ import annotations

CONDITION = "nested"


def check(ctx):
    """The nestedness verdict of ``ctx.cost`` on its data (no map), on ``ctx.levels`` and ``ctx.grid``."""
    from .applies import applicable, sides_of

    reason = applicable(ctx.cost, *sides_of(ctx.cost))
    if reason:  # the same verdict analyse() gives, without importing its numerics
        from ...model.verdict import not_applicable

        return not_applicable(CONDITION, reason)
    from .analysis import analyse  # numpy and the levels only when the condition runs

    return analyse(ctx.cost, levels=ctx.levels, grid=ctx.grid, with_map=False, evaluator=ctx.evaluator(2)).verdict
