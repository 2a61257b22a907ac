"""The conditions: one module per condition, each exposing ``CONDITION`` and ``check(ctx)``.

Each module's docstring states its condition, the paper it comes from, the sign convention it
uses and how its verdict is reached.  :mod:`.context` is what every check reads (the sample,
the derivatives there, evaluators for refinement and high precision); :mod:`.engines` holds
the search steps two conditions share.  This module imports nothing: the cached path reads
:data:`REGISTRY` without loading any numerics.
"""

#: condition name → its module under :mod:`costcheck.conditions`, in the order reports show them
REGISTRY: dict[str, str] = {
    "nondegenerate": "nondegenerate",
    "twist": "twist",
    "mtw": "mtw",
    "nncc": "nncc",
    "target_c_convex": "target_c_convex",
    "source_c_convex": "source_c_convex",
    "loeper": "loeper",
    "index_form": "index_form",
    "nested": "nested",
    # a generating function G(x, y, z) (docs/conditions.md#generating-functions)
    "z_monotone": "z_monotone",
    "g_twist": "g_twist",
    "g_dual_twist": "g_dual_twist",
    "g_nondegenerate": "g_nondegenerate",
    "g_mtw": "g_mtw",
}

#: the conditions of a generating function; a generating file is checked for these only, and an
#: ordinary cost for the others
GENERATING: tuple[str, ...] = ("z_monotone", "g_twist", "g_dual_twist", "g_nondegenerate", "g_mtw")



def conditions_for(generating: bool) -> list[str]:
    """The conditions a file is checked for, in :data:`REGISTRY` order: a generating function's
    five, or an ordinary cost's others."""
    return [name for name in REGISTRY if (name in GENERATING) == generating]


#: conditions whose check reads another's verdict from the same run (``CheckContext.verdicts``);
#: a caller that runs a subset (a sweep's bisection) includes these so the evidence is the same
READS: dict[str, tuple[str, ...]] = {"loeper": ("mtw",)}
