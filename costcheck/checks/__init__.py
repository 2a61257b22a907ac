"""Condition checks: one module per condition, each exposing ``CONDITION`` and ``check(ctx)``.

Shared steps live in their own modules: :mod:`.sampler` (where to look),
:mod:`.context` (derivatives at the sample, evaluators for refinement), and
:mod:`.runner` (runs them all and compares with a file's expectations).
"""
