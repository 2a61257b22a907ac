"""Strong MTW over a chart's normal forms (:mod:`.charts`), with the quartic built once in sympy.

At the normal-form pair of parameter ``s`` the quartic ``S(cos θ, sin θ)`` of
:func:`.quantities.orthogonal_quartic` is built symbolically (:func:`.radial.circle_coefficients`:
the derivatives rewritten into ``s`` and through the identities of :mod:`.range_identities`, the
mixed Hessian inverted by its adjugate) and simplified within a time bound: by exact cancellation
in ``Q(s, atan(s), …)`` (:mod:`.rational_forms`) when the fields are rational there (the sphere's
squared distance, once ``acos((1 − s²)/(1 + s²)) = 2·atan(s)``), else by ``sympy.simplify`` (the
reflector cost).  On the sphere's charts the five coefficients become a few operations each, which
removes the dependency problem of enclosing the tensor entry by entry.

A simplified expression equals the original wherever the original is defined; so a cell is
proved only when, besides the coefficients' enclosures giving a positive minimum on the circle
(:func:`.quantities.circle_lower_bound`), every derivative field of the cost at the normal forms
of the cell has a finite enclosure and ``det D²_xy c`` excludes 0 there: the original quartic is
then defined on the cell and equal to the simplified one.
"""

from __future__ import annotations

import dataclasses

import sympy as sp

from ..numerics.bounded import within
from . import balls, quantities, radial
from .arb_eval import compile_exprs
from .branch_bound import Budget, Outcome, branch_and_bound
from .enclosures import TENSOR_FIELDS, flat_fields
from .rational_forms import RationalForms
from .space import ProofSpace, RadialFrame

#: the route is taken only when the derivative fields at the normal forms are a program of at most this
#: many operations and sympy's general simplification is needed (the sphere's reflector cost: 146);
#: a size test, not a clock, so the verdict does not depend on the machine's load
MAX_OPERATIONS = 200
#: the same bound when every field is rational in s and its transcendental atoms (the sphere's squared
#: distance after :mod:`.range_identities`: 291), where exact polynomial arithmetic does the work in seconds
MAX_RATIONAL_OPERATIONS = 1000
#: a safety bound on sympy's wall seconds for building and simplifying the quartic (about 9 s here)
SYMBOLIC_SECONDS = 120.0


def rational_frame(cost, frame: RadialFrame, fields=None):
    """``(frame whose rewrite also reduces each field in Q(s, atoms), the forms)``, or None when a field is not
    rational there (:mod:`.rational_forms`).  ``fields``: the distinct tensor-field entries already rewritten
    into the frame (a chart space's :attr:`~.enclosures.FieldEnclosures.entries`), else formed here."""
    if fields is None:
        fields, _, _ = flat_fields(cost, TENSOR_FIELDS, frame.to_axis, frame.rewrite, frame.composed)
    forms = RationalForms(frame.r, fields)
    if not all(forms.reduce(e) is not None for e in fields):
        return None
    return dataclasses.replace(frame, rewrite=lambda e: forms.reduce(frame.rewrite(e))), forms


def _simplified(cost, frame: RadialFrame, may_simplify: bool, fields=None):
    """The quartic's coefficients in ``s``: by exact cancellation in ``Q(s, atoms)`` when every field is rational
    there (:mod:`.rational_forms`), else by ``sympy.simplify`` if allowed; None when neither applies.
    ``fields`` as for :func:`rational_frame`."""
    built = rational_frame(cost, frame, fields)
    if built is not None:
        reduced, forms = built
        coefficients = radial.circle_coefficients(cost, reduced)
        if coefficients is not None:
            out = [forms.reduce(c, factor=True) for c in coefficients]
            if all(c is not None for c in out):
                return out
    if not may_simplify:
        return None
    coefficients = radial.circle_coefficients(cost, frame)
    return None if coefficients is None else [sp.simplify(c) for c in coefficients]


def fields_defined(fields, a, b) -> bool:
    """Every derivative field at the normal forms of the cell ``[a, b]`` is enclosed and ``det D²_xy c`` excludes 0
    there: the original expressions are defined on the cell, so reduced forms equal them."""
    at_cell = fields.at_balls([balls.from_bounds(a[0], b[0])])  # None unless every field is enclosed
    return at_cell is not None and balls.excludes_zero(quantities.det(at_cell["dxy"]))


def _tensor_entries(space: ProofSpace):
    """The space's rewritten entries when it encloses exactly the tensor fields (in their order), else None."""
    enclosures = space.enclosures
    return enclosures.entries if tuple(enclosures.fields) == tuple(TENSOR_FIELDS) else None


def chart_strong(cost, space: ProofSpace, budget: Budget) -> Outcome | None:
    """Branch and bound over ``s``; None when the fields are too large for the route or sympy fails."""
    s, to_normal, rewrite = space.normal_form
    operations = space.enclosures.function.operations
    if operations > MAX_RATIONAL_OPERATIONS:
        return None
    frame = RadialFrame(s, to_normal, space.lo, space.hi, space.classify, space.description, rewrite,
                        composed=space.enclosures.composed)
    status, coefficients = within(SYMBOLIC_SECONDS, "the chart's quartic", _simplified, cost, frame,
                                  operations <= MAX_OPERATIONS, _tensor_entries(space))
    if status != "ok" or coefficients is None or any(e.free_symbols - {s} for e in coefficients):
        return None
    function = compile_exprs(tuple(coefficients), (s,))
    fields = space.enclosures

    def decide(a, b):
        duals, _, _ = function.duals_over_box(a, b)
        values = [d.value for d in duals]
        if not all(v.is_finite() for v in values):
            return None
        bound = quantities.circle_lower_bound(values)
        # last: the costliest test, needed only on a cell the quartic proves
        return bound if bound is not None and fields_defined(fields, a, b) else None

    outcome = branch_and_bound(space.lo, space.hi, space.classify, decide, budget)
    outcome.space, outcome.names = space.description, space.names
    outcome.what = ("S(ξ, η) on orthogonal unit pairs (at the normal forms, its quartic built and simplified once in "
                    "sympy, with every derivative field enclosed and det D²_xy c away from 0 on each cell) is "
                    "enclosed above a positive κ on every cell of a cover of the normal forms")
    return outcome
