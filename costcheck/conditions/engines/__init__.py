"""Search steps that two conditions share: :mod:`.cconvex` (both c-convexity checks),
:mod:`.curvature_search` (MTW and NNCC), :mod:`.index_symbolic` (the index form's symbolic
route).  They read a :class:`~costcheck.conditions.context.CheckContext` and return verdict
parts; the numbers themselves come from :mod:`costcheck.numerics`."""
