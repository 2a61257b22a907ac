"""The ``generating:`` key of a cost file: a generating function ``G(x, y, z)`` instead of ``expr``.

A generating function (Trudinger, "On the local theory of prescribed Jacobian equations",
Discrete Contin. Dyn. Syst. 34 (2014) 1663–1681 — cited from memory) gives the supporting
functions ``u = G(·, y, z)`` of a generated Jacobian equation.  The file writes its expression in
the coordinate names, the name of the third variable ``z`` and ``z``'s range; the convention
(docs/cost-files.md#generating-functions) is Trudinger's: ``G`` is *decreasing* in ``z``, and an
ordinary cost ``c`` to minimise is ``G(x, y, z) = −c(x, y) − z``.

Everything goes through :mod:`costcheck.spec.expression`, like ``expr``: nothing is executed.
The pipeline then sees ``z`` as one more coordinate of the target side, ``(y, z)`` in
``Y × [low, high]``; the conditions of :mod:`costcheck.conditions.generating` read it so.
"""

from __future__ import annotations

from typing import Callable, Mapping

import sympy as sp

from ..errors import CostFileError
from ..model.cost import GeneratingSpec
from ..model.domain import Box
from .expression import parse_expression


def z_symbol(data: Mapping) -> sp.Symbol | None:
    """The third variable's symbol, or None for an ordinary cost."""
    spec = data.get("generating")
    return None if spec is None else sp.Symbol(spec["z"], real=True)


def check_sense(data: Mapping, file: str | None) -> None:
    if "generating" in data and data.get("sense", "cost") != "cost":
        raise CostFileError("a generating function has its own sign convention (G decreasing in z); "
                            "'sense: surplus' does not apply to it: remove 'sense'", file=file, field="sense")


def parse_generating(data: Mapping, names: Mapping[str, sp.Expr], constant: Callable,
                     file: str | None) -> tuple[sp.Expr, GeneratingSpec]:
    """``(G, spec)``: the expression (helpers and parameters substituted) and its third variable's range."""
    spec = data["generating"]
    try:
        G = parse_expression(spec["expr"], names)
    except CostFileError as exc:
        raise exc.located(file=file, field_prefix="generating.expr") from None
    if G.has(sp.zoo, sp.nan, sp.oo, -sp.oo):
        raise CostFileError("the generating function is undefined (a division by zero, log(0) or similar "
                            "between constants)", file=file, field="generating.expr")
    z = names[spec["z"]]
    # every condition divides by G_z (the level set G = u gives z as a function of (x, y, u)): a G
    # that does not vary with z is a cost written in the wrong key, not a generating function
    if not G.has(z) or sp.diff(G, z) == 0:
        raise CostFileError(f"the generating function does not depend on its third variable '{z}' (G_z = 0 "
                            "everywhere): write it with z, or give an ordinary cost as 'expr'", file=file,
                            field="generating.expr")
    low = float(constant(spec["range"][0], "generating.range[0]"))
    high = float(constant(spec["range"][1], "generating.range[1]"))
    if not low < high:
        kind = "empty (low equals high)" if low == high else "inverted (low above high)"
        raise CostFileError(f"the range [{low:g}, {high:g}] of '{spec['z']}' is {kind}", file=file,
                            field="generating.range")
    return G, GeneratingSpec(z=spec["z"], low=low, high=high)


def extended_target(region_y, spec: GeneratingSpec, file: str | None) -> Box:
    """The target side ``Y × [low, high]`` on which the checks sample ``(y, z)``."""
    if not isinstance(region_y, Box):
        raise CostFileError("with a generating function the y-domain must be a box (a ball is not supported "
                            "yet): write 'box:'", file=file, field="domain.y")
    return Box(tuple(region_y.lower) + (spec.low,), tuple(region_y.upper) + (spec.high,))
