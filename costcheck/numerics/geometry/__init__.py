"""Domain geometry: c-segments, boundary-focused sampling of the domains, distances to them.

Used by the c-convexity checks (:mod:`costcheck.conditions.target_c_convex`,
:mod:`costcheck.conditions.source_c_convex`), Loeper's maximum principle
(:mod:`costcheck.conditions.loeper`) and the pictures of :mod:`costcheck.render.plots.geometry`.
"""
