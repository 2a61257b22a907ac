"""Domain geometry: c-segments, boundary-focused sampling of the domains, distances to them.

Used by the c-convexity checks (:mod:`costcheck.checks.target_c_convex`,
:mod:`costcheck.checks.source_c_convex`), Loeper's maximum principle
(:mod:`costcheck.checks.loeper`) and the pictures of :mod:`costcheck.plots.geometry`.
"""
