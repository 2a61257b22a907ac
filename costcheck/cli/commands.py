"""The smaller commands: ``schema``, ``new``, ``show``, ``tensor`` and ``sweep``."""

from __future__ import annotations

import json
import sys

from rich.console import Console

from ..errors import EXIT_BAD_INPUT, EXIT_OK, CostcheckError
from .check import error_line
from .progress import Progress


def cmd_schema(args) -> int:
    """The cost-file schema, or with ``--results`` the schema of ``check --json``'s document."""
    if args.results:
        from ..render.results_schema import results_schema_json as text
    else:
        from ..spec.schema import schema_json as text
    sys.stdout.write(text())
    return EXIT_OK


def cmd_new(args, out: Console) -> int:
    from ..spec.template import write_template

    path = write_template(args.name)
    out.print(f"wrote {path}; edit it, then run: costcheck check {path}", markup=False)
    return EXIT_OK


def cmd_show(args, out: Console) -> int:
    from ..spec.loader import load_cost
    from ..derivatives.sympy_backend import symbolic_derivatives
    import sympy as sp

    cost = load_cost(args.file)
    order = 4 if cost.n == cost.m else 2
    derivs = bounded(cost.file, "the derivatives", symbolic_derivatives, cost.expr, cost.x_symbols, cost.y_symbols, order)
    sizes = {}
    for name, entries in derivs.items():
        flat = sp.flatten(entries) if isinstance(entries, list) else [entries]
        sizes[name] = {"entries": len(flat), "operations": int(sum(sp.count_ops(e) for e in flat))}
    domain = {"x": cost.domain.x.to_json(), "y": cost.domain.y.to_json(), **cost.domain.constraint_texts()}
    info = {
        "id": cost.id, "file": cost.file, "title": cost.title, "sense": cost.sense,
        "x": list(cost.x_names), "y": list(cost.y_names),
        "params": {k: str(v) for k, v in cost.params.items()},
        "cost_minimised": str(cost.expr),
        "domain": domain, "derivative_sizes": sizes,
        "expect": dict(cost.expect), "source": cost.source,
        "data": None if cost.data is None else {
            role: side.describe() for role, side in (("source", cost.data.source), ("target", cost.data.target))
            if side is not None},
    }
    if args.json:
        print(json.dumps(info, indent=2, ensure_ascii=False))
        return EXIT_OK
    out.print(f"[bold]{cost.id}[/] — {cost.title}  [dim]({cost.file})[/]")
    out.print(f"sense: {cost.sense}" + ("  (checked as the cost c = -s)" if cost.sense == "surplus" else ""))
    out.print(f"x = ({', '.join(cost.x_names)}), y = ({', '.join(cost.y_names)}), n = {cost.n}, m = {cost.m}")
    if cost.params:
        out.print("params: " + ", ".join(f"{k} = {v}" for k, v in cost.params.items()), markup=False)
    out.print(f"cost (minimised): {cost.expr}", markup=False, highlight=False)
    out.print(f"domain x: {cost.domain.x.describe(cost.x_names)}", markup=False)
    out.print(f"domain y: {cost.domain.y.describe(cost.y_names)}", markup=False)
    for key, texts in cost.domain.constraint_texts().items():
        for t in texts:
            out.print(f"{key}: {t}", markup=False)
    out.print("derivatives (entries, sympy operations):")
    for name, s in sizes.items():
        out.print(f"  {name:6s} {s['entries']:4d} entries, {s['operations']} operations")
    for role, text in (info["data"] or {}).items():
        out.print(f"data {role}: {text}", markup=False)
    if cost.expect:
        out.print("expected: " + ", ".join(f"{k}: {v}" for k, v in cost.expect.items()))
    if cost.source:
        out.print(f"source: {cost.source}", markup=False)
    return EXIT_OK


def bounded(file, stage: str, fn, *args, extra: float = 0.0, **kwargs):
    """``fn(*args, **kwargs)`` within the derivative stage's wall-time bound, or a one-line error."""
    from ..defaults import DERIVATIVE_SECONDS
    from ..errors import CostFileError
    from ..numerics.bounded import within

    status, value = within(DERIVATIVE_SECONDS + extra, stage, fn, *args, **kwargs)
    if status == "timeout":
        raise CostFileError(f"{stage} did not finish within {DERIVATIVE_SECONDS + extra:g} s (the bound on the symbolic "
                         "work a cost file can ask for); the expression is too large for this command", file=file, field="expr")
    return value


def cmd_tensor(args, out: Console) -> int:
    from ..spec.loader import load_cost
    from ..numerics.curvature.closed_form import mtw_closed_form
    from ..render.tensor import tensor_json, tensor_lines

    cost = load_cost(args.file)
    # forming the tensor is bounded here; the tidying has its own limit (--simplify-seconds) in a
    # child process that is terminated when the limit is reached, and what was not tidied is said so
    closed = bounded(cost.file, "forming the MTW tensor", mtw_closed_form, cost, args.simplify_seconds,
                     extra=args.simplify_seconds)
    if args.json:
        print(json.dumps(tensor_json(closed, cost.file, args.simplify_seconds), indent=2, ensure_ascii=False))
        return EXIT_OK
    for line in tensor_lines(closed, args.simplify_seconds, latex=args.latex):
        out.print(line, markup=False, highlight=False, soft_wrap=True)
    return EXIT_OK


def cmd_sweep(args, out: Console, err: Console) -> int:
    from ..spec.loader import load_cost
    from ..sweep import report
    from ..sweep.engine import run_sweep
    from ..sweep.grid import SweepSpecError, parse_axes

    try:
        cost = load_cost(args.file)
        axes = parse_axes(args.vary, dict(cost.params))
        if not args.tolerance > 0:
            raise SweepSpecError(f"--tolerance must be positive, got {args.tolerance}")
    except CostcheckError as exc:
        error_line(exc)
        return EXIT_BAD_INPUT
    total = 1
    for a in axes:
        total *= len(a.values)
    with Progress(err, total, quiet=args.quiet, what="sweeping") as progress:
        progress.running(f"{total} parameter values")
        def on_progress(done, _total):
            progress.advance_to(done)
            if done >= _total and not args.no_bisect:
                progress.running("bisecting verdict boundaries")
        result = run_sweep(args.file, axes, budget=args.budget, seed=args.seed, conditions=args.only,
                           workers=args.workers, scheduler=args.scheduler, tolerance=args.tolerance,
                           bisect=not args.no_bisect, cache=not args.no_cache, on_progress=on_progress,
                           prove=not args.quick)
    if args.plots:
        from ..sweep.plots import write_plots
        files = write_plots(result, args.plots)
        if not args.json:
            err.print(f"wrote {len(files)} pictures into {args.plots}", markup=False)
    # a sweep where no value could be checked at all is broken input (exit 2), not a result
    status = EXIT_BAD_INPUT if every_value_failed(result) else EXIT_OK
    if args.json:
        print(report.to_json(result, status))
    else:
        report.render(out, result)
    if status == EXIT_BAD_INPUT:
        first = next(iter(result.results[0].values()))["summary"]
        error_line(f"{args.file}: no parameter value could be checked ({len(result.points)} tried); "
                   f"at {', '.join(f'{k} = {v:g}' for k, v in result.points[0].items())}: {first}")
    return status


def every_value_failed(result) -> bool:
    """True when every condition at every sweep point is an ``error`` (the cost could not be built)."""
    from ..sweep.point import ERROR

    return bool(result.results) and all(entry["verdict"] == ERROR for point in result.results
                                        for entry in point.values())
