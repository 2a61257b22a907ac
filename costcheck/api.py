"""The Python API: three ways to get a :class:`~costcheck.model.cost.Cost`.

>>> import costcheck
>>> cost = costcheck.from_expression("(x - y)**2 / 2", x=["x"], y=["y"],
...                                  domain={"x": {"box": [[0, 1]]}, "y": {"box": [[0, 1]]}})
>>> d = cost.derivatives()([[0.2]], [[0.7]])
>>> float(d.dxy[0, 0, 0])
-1.0
"""

from __future__ import annotations

from pathlib import Path
from typing import Callable, Mapping, Sequence

import jsonschema

from .model.cost import Cost
from .model.domain import Domain
from .errors import CostFileError
from .spec.loader import region, build_cost, load_cost
from .spec.schema import SIDE_DOMAIN_SCHEMA


def load(path: str | Path, **param_overrides: float) -> Cost:
    """Read a cost file; keyword arguments override its ``params``."""
    return load_cost(path, param_overrides=param_overrides or None)


def from_expression(
    expr: str,
    *,
    x: Sequence[str],
    y: Sequence[str],
    domain: Mapping,
    params: Mapping | None = None,
    define: Mapping | None = None,
    sense: str = "cost",
    id: str = "expression",
    title: str = "",
) -> Cost:
    """Build a cost from an expression string in the cost-file language (same validation)."""
    data = {"id": id, "x": list(x), "y": list(y), "expr": expr, "domain": dict(domain), "sense": sense}
    if title:
        data["title"] = title
    if params:
        data["params"] = dict(params)
    if define:
        data["define"] = dict(define)
    return build_cost(data, file=None)


def from_function(
    function: Callable,
    *,
    n: int,
    m: int,
    domain: Mapping,
    sense: str = "cost",
    id: str = "function",
    title: str = "",
) -> Cost:
    """Build a cost from a JAX-traceable ``function(x, y)`` of 1-D arrays of lengths ``n`` and ``m``.

    Only the ``jax`` derivative backend is available for such a cost (it has no
    symbolic form); :func:`check` chooses it.  ``domain`` takes the cost-file form ``{"x": {"box": ...}, "y": ...}``;
    constraints (``where``/``pairs``) need names and are not available here.
    """
    if sense not in ("cost", "surplus"):
        raise CostFileError(f"sense must be 'cost' or 'surplus', got {sense!r}", field="sense")
    for key in ("x", "y"):
        if key not in domain:
            raise CostFileError("a domain needs both 'x' and 'y'", field=f"domain.{key}")
    extra = set(domain) - {"x", "y"}
    if extra:
        raise CostFileError(f"constraints need coordinate names; {sorted(extra)} are not available for a "
                            "Python-function cost (use from_expression)", field="domain")
    for key in ("x", "y"):
        error = jsonschema.exceptions.best_match(jsonschema.Draft202012Validator(SIDE_DOMAIN_SCHEMA)
                                                 .iter_errors(domain[key]))
        if error is not None:
            raise CostFileError(f"{error.message} (expected {{'box': [[low, high], ...]}} or "
                                f"{{'ball': {{'center': [...], 'radius': r}}}})", field=f"domain.{key}")
    region_x = region(domain["x"], n, "x", {}, None)
    region_y = region(domain["y"], m, "y", {}, None)
    if sense == "surplus":
        def minimised(x_, y_, _s=function):
            return -_s(x_, y_)
    else:
        minimised = function
    return Cost(
        id=id,
        title=title,
        sense=sense,
        x_names=tuple(f"x{i + 1}" for i in range(n)),
        y_names=tuple(f"y{k + 1}" for k in range(m)),
        domain=Domain(region_x, region_y),
        expr=None,
        function=minimised,
    )


def backend_for(cost: Cost) -> str:
    """The derivative backend a cost can use: sympy for an expression, JAX for a Python function."""
    return "jax" if cost.expr is None else "sympy"


def check(cost: Cost, *, budget: int | None = None, seed: int | None = None, backend: str | None = None,
          conditions: Sequence[str] | None = None, prove: bool | dict = True):
    """Run the condition checks on ``cost``; returns a :class:`~costcheck.model.report.CostReport`.

    ``backend`` (``"sympy"`` or ``"jax"``) defaults to the one the cost allows
    (:func:`backend_for`): a cost from :func:`from_function` has no symbolic form and is
    differentiated by JAX.  ``repr(report)`` is a short table, a notebook shows it as HTML and
    ``report.to_dict()`` is the cost's entry of ``costcheck check --json``.

    Each sampled verdict is also put to a proof on the whole domain, within a few seconds per
    condition (``prove=True``, the default, as ``costcheck check`` does); a dict of
    :class:`~costcheck.certify.ProofOptions` fields such as ``{"seconds": 60}`` sets the budget and
    ``prove=False`` samples only (as ``--quick``).

    ``report.verdicts[name]`` is a :class:`~costcheck.model.verdict.Verdict` (verdict word, evidence,
    worst value, witness); ``report.mismatches`` lists expectations of a file that were not met.
    """
    from .defaults import DEFAULT_BUDGET, DEFAULT_SEED
    from .run.runner import run_checks

    options = None
    if prove:
        from .certify import ProofOptions
        options = ProofOptions(**prove) if isinstance(prove, dict) else ProofOptions()
    return run_checks(cost, budget=budget or DEFAULT_BUDGET, seed=DEFAULT_SEED if seed is None else seed,
                      backend=backend or backend_for(cost), conditions=conditions, prove=options)


def mtw_tensor(cost: Cost, simplify_seconds: float = 10.0):
    """The MTW tensor ``T_ijkl`` in closed form: a list of components ``(index, sympy expression, simplified)``."""
    from .numerics.curvature.symbolic import mtw_tensor_symbolic

    return mtw_tensor_symbolic(cost, simplify_seconds=simplify_seconds)
