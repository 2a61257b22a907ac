"""Cost file → validated spec → :class:`~costcheck.model.cost.Cost`.

Three stages, each with errors that name the file and the field:

1. YAML, read with a *safe* loader that also refuses duplicate keys (PyYAML would
   silently keep the last one) and aliases (which can blow a small file up in memory);
2. the JSON Schema of :mod:`costcheck.spec.schema` (shape and types) — these two stages are
   :mod:`costcheck.spec.reading`, which imports no mathematics;
3. meaning: names defined once, helpers without cycles, expressions in the safe
   language, dimensions that match, boxes that are not empty or inverted.
"""

from __future__ import annotations

import keyword
from graphlib import CycleError, TopologicalSorter
from pathlib import Path
from typing import Any, Mapping

import sympy as sp

from ..errors import CostFileError
from ..model.cost import Cost
from ..model.domain import Ball, Box, Constraint, Domain, Inequality
from .generating import check_sense, extended_target, parse_generating, z_symbol
from .expression import RESERVED_NAMES, parse_expression, parse_inequalities, referenced_names
# the first stages (file, YAML, schema) live in .reading, which needs no sympy; re-exported here
from .reading import (
    COST_FILE_SUFFIXES,
    MAX_FILE_BYTES,
    find_cost_files,
    read_cost_data,
    read_cost_text,
    read_yaml,
    validate_shape,
)

# --------------------------------------------------------------------------- meaning

def _check_name(name: str, field: str, file: str | None) -> None:
    if name in RESERVED_NAMES or keyword.iskeyword(name):
        raise CostFileError(f"'{name}' is reserved and cannot be used as a name", file=file, field=field)


def _constant(value: Any, names: Mapping[str, sp.Expr], field: str, file: str | None) -> sp.Expr:
    """A number, or an expression that must reduce to a real number."""
    try:
        expr = parse_expression(value, names)
    except CostFileError as exc:
        raise exc.located(file=file, field_prefix=field) from None
    if expr.free_symbols:
        raise CostFileError(f"{value!r} must be a constant (it mentions {sorted(map(str, expr.free_symbols))})",
                            file=file, field=field)
    number = complex(sp.N(expr))
    if abs(number.imag) > 0 or number.real != number.real or abs(number.real) == float("inf"):
        raise CostFileError(f"{value!r} is not a finite real number", file=file, field=field)
    return expr


def region(spec: Mapping, dim: int, side: str, names: Mapping[str, sp.Expr], file: str | None):
    field = f"domain.{side}"
    if "box" in spec:
        rows = spec["box"]
        if len(rows) != dim:
            raise CostFileError(
                f"the box has {len(rows)} intervals but '{side}' has {dim} coordinates", file=file, field=f"{field}.box"
            )
        lower, upper = [], []
        for i, (lo, hi) in enumerate(rows):
            where = f"{field}.box[{i}]"
            a = float(_constant(lo, names, where, file))
            b = float(_constant(hi, names, where, file))
            if not a < b:
                kind = "empty (low equals high)" if a == b else "inverted (low above high)"
                raise CostFileError(f"the interval [{a:g}, {b:g}] is {kind}", file=file, field=where)
            lower.append(a)
            upper.append(b)
        return Box(tuple(lower), tuple(upper))
    ball = spec["ball"]
    if len(ball["center"]) != dim:
        raise CostFileError(
            f"the ball's center has {len(ball['center'])} coordinates but '{side}' has {dim}",
            file=file, field=f"{field}.ball.center",
        )
    center = tuple(float(_constant(v, names, f"{field}.ball.center[{i}]", file)) for i, v in enumerate(ball["center"]))
    radius = float(_constant(ball["radius"], names, f"{field}.ball.radius", file))
    if not radius > 0:
        raise CostFileError(f"the radius must be positive, got {radius:g}", file=file, field=f"{field}.ball.radius")
    return Ball(center, radius)


def _helpers(define: Mapping[str, Any], base: Mapping[str, sp.Expr], file: str | None) -> dict[str, sp.Expr]:
    """Expand ``define`` in dependency order, refusing cycles."""
    graph = {}
    for name, text in define.items():
        try:
            graph[name] = {n for n in referenced_names(text) if n in define}
        except CostFileError as exc:
            raise exc.located(file=file, field_prefix=f"define.{name}") from None
    try:
        order = list(TopologicalSorter(graph).static_order())
    except CycleError as exc:
        cycle = " -> ".join(exc.args[1])
        raise CostFileError(f"helper definitions refer to each other in a cycle: {cycle}", file=file, field="define") from None
    names = dict(base)
    for name in order:
        try:
            names[name] = parse_expression(define[name], names)
        except CostFileError as exc:
            raise exc.located(file=file, field_prefix=f"define.{name}") from None
    return {name: names[name] for name in define}


def _constraints(texts, names, field, file) -> list[Inequality]:
    out: list[Inequality] = []
    for i, text in enumerate(texts):
        try:
            out.extend(parse_inequalities(text, names))
        except CostFileError as exc:
            raise exc.located(file=file, field_prefix=f"{field}[{i}]") from None
    return out


def build_cost(data: Mapping, file: str | None = None, *, param_overrides: Mapping[str, float] | None = None) -> Cost:
    """Turn a parsed cost-file mapping into a :class:`Cost`, or raise :class:`CostFileError`."""
    validate_shape(data, file)
    x_names, y_names = list(data["x"]), list(data["y"])
    params_in = dict(data.get("params") or {})
    define = dict(data.get("define") or {})

    # every name is defined exactly once across coordinates, parameters and helpers
    owners: dict[str, str] = {}
    z_sym = z_symbol(data)
    z_group = [z_sym.name] if z_sym is not None else []
    for group, names in (("x", x_names), ("y", y_names), ("generating", z_group), ("params", list(params_in)),
                         ("define", list(define))):
        for name in names:
            field = group if group in ("x", "y") else ("generating.z" if group == "generating" else f"{group}.{name}")
            _check_name(name, field, file)
            if name in owners:
                raise CostFileError(f"the name '{name}' is defined twice (in '{owners[name]}' and '{group}')",
                                    file=file, field=field)
            owners[name] = group

    x_syms = [sp.Symbol(n, real=True) for n in x_names]
    y_syms = [sp.Symbol(n, real=True) for n in y_names]

    params: dict[str, sp.Expr] = {}
    for name, value in params_in.items():
        if param_overrides and name in param_overrides:
            value = param_overrides[name]
        params[name] = _constant(value, params, f"params.{name}", file)
    if param_overrides:
        unknown = sorted(set(param_overrides) - set(params_in))
        if unknown:
            raise CostFileError(f"no parameter named '{unknown[0]}' (parameters: {', '.join(params_in) or 'none'})",
                                file=file, field="params")

    base: dict[str, sp.Expr] = {**params, **dict(zip(x_names, x_syms)), **dict(zip(y_names, y_syms))}
    if z_sym is not None:
        base[z_sym.name] = z_sym
    names = {**base, **_helpers(define, base, file)}

    check_sense(data, file)
    gen_spec, expr_field = None, "expr" if z_sym is None else "generating.expr"
    if z_sym is None:
        try:
            written = parse_expression(data["expr"], names)
        except CostFileError as exc:
            raise exc.located(file=file, field_prefix="expr") from None
    else:
        written, gen_spec = parse_generating(data, names, lambda v, f: _constant(v, params, f, file), file)
        y_names, y_syms = y_names + [z_sym.name], y_syms + [z_sym]
    if written.has(sp.zoo, sp.nan, sp.oo, -sp.oo):
        raise CostFileError("the expression is undefined (a division by zero, log(0) or similar "
                            "between constants)", file=file, field="expr")
    sense = data.get("sense", "cost")
    expr = -written if sense == "surplus" else written
    x_set, y_set = set(x_syms), set(y_syms)
    stray = expr.free_symbols - x_set - y_set
    if stray:
        raise CostFileError(f"the expression has unresolved symbols {sorted(map(str, stray))}", file=file,
                            field=expr_field)

    dom = data["domain"]
    constants = dict(params)
    region_x = region(dom["x"], len(x_names), "x", constants, file)
    region_y = region(dom["y"], len(y_names) - (z_sym is not None), "y", constants, file)
    if gen_spec is not None:
        region_y = extended_target(region_y, gen_spec, file)

    where_x, where_y = [], []
    for i, text in enumerate(dom.get("where") or []):
        for ineq in _constraints([text], names, "domain.where", file):
            used = ineq.g.free_symbols
            field = f"domain.where[{i}]"
            if not used:
                raise CostFileError(f"the constraint {text!r} mentions no coordinate", file=file, field=field)
            if used & x_set and used & y_set:
                raise CostFileError(f"the constraint {text!r} mentions both x and y names; put it under 'pairs'",
                                    file=file, field=field)
            if used <= x_set:
                where_x.append(Constraint.build(ineq, x_syms))
            else:
                where_y.append(Constraint.build(ineq, y_syms))
    pairs = []
    for i, text in enumerate(dom.get("pairs") or []):
        for ineq in _constraints([text], names, "domain.pairs", file):
            if not ineq.g.free_symbols:
                raise CostFileError(f"the constraint {text!r} mentions no coordinate", file=file, field=f"domain.pairs[{i}]")
            pairs.append(Constraint.build(ineq, x_syms + y_syms))

    family = None if gen_spec is not None else _family(data, params, param_overrides, x_names, x_syms, y_names, y_syms, define, file)

    spec = None
    if data.get("data"):
        from .data import parse_data_spec

        spec = parse_data_spec(data["data"], x_syms, y_syms, constants, file)

    return Cost(
        id=data["id"],
        title=data.get("title", ""),
        sense=sense,
        x_names=tuple(x_names),
        y_names=tuple(y_names),
        params=params,
        expr=expr,
        written_expr=written,
        domain=Domain(region_x, region_y, tuple(where_x), tuple(where_y), tuple(pairs)),
        expect=dict(data.get("expect") or {}),
        source=data.get("source"),
        file=file,
        raw=data,
        data=spec,
        family=family,
        generating=gen_spec,
    )


def _family(data, params, overrides, x_names, x_syms, y_names, y_syms, define, file):
    """The cost with the overridden (swept) parameters left as symbols, or None.

    Built from the same text through the same parser; the checks still use the substituted
    ``expr`` everywhere, only the float derivative evaluator is shared across the family.
    """
    if not overrides:
        return None
    # a name no file can write ("param:p"), the same at every value so compiled derivatives are shared
    symbols = {name: sp.Symbol(f"param:{name}", real=True) for name in overrides}
    base = {**params, **symbols, **dict(zip(x_names, x_syms)), **dict(zip(y_names, y_syms))}
    try:
        written = parse_expression(data["expr"], {**base, **_helpers(define, base, file)})
    except CostFileError:
        return None
    template = -written if data.get("sense", "cost") == "surplus" else written
    # exact values (a decimal as written), so high precision sees the parameter itself
    values = tuple((symbols[name], params[name]) for name in sorted(overrides))
    return template, values


def load_cost(path: str | Path, *, param_overrides: Mapping[str, float] | None = None) -> Cost:
    """Read and validate one cost file."""
    return build_cost(read_yaml(read_cost_text(path), str(path)), str(Path(path)), param_overrides=param_overrides)
