"""Small cost files shared by the workflow tests (cache, JUnit, pre-commit).

``line_quadratic``: ``|x - y|²/2`` on ``[-1, 1]``: twist and non-degeneracy hold, since
``c_xy = -1`` (elementary calculus); ``expect`` is written as the test needs it (a wrong
expectation makes a test's failing case).
"""

from __future__ import annotations


def line_quadratic(cost_id: str = "quad-1d", *, title: str = "Squared distance on a line",
                   expect: str = "{twist: holds, nondegenerate: holds}") -> str:
    return (f"id: {cost_id}\ntitle: {title}\nx: [a]\ny: [b]\nexpr: (a - b)**2 / 2\n"
            "domain:\n  x: {box: [[-1, 1]]}\n  y: {box: [[-1, 1]]}\n"
            f"expect: {expect}\n")
