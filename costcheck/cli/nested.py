"""``costcheck nested FILE``: decide nestedness on the file's (or the command line's) data, build the map, write it."""

from __future__ import annotations

from pathlib import Path

from .. import __version__
from ..conditions.nested.analysis import analyse, applicable, map_at, sides_of
from ..conditions.nested.map import write_json, write_levels_csv, write_map_csv
from ..errors import EXIT_EXPECTATION_FAILED, EXIT_OK, CostFileError, UsageError
from ..render.json_out import clean_json
from ..spec.data import points_side, read_points


def _side_from_option(role: str, path: str | None, option: str, names):
    if path is None:
        return None
    return points_side(role, Path(path), None, option, names)


def _write_out(out: Path, document: dict, cost, result, at_values) -> list[str]:
    """nested.json, levels.csv and the map as CSV into ``out``; the files written."""
    from .check import refuse_unread_pipe

    out.mkdir(parents=True, exist_ok=True)
    for name in ("nested.json", "levels.csv", "map-on-source.csv", "map-at.csv"):
        refuse_unread_pipe(out / name, "--out")
    write_json(out / "nested.json", clean_json(document))
    written = [str(out / "nested.json")]
    if result.levels is not None:
        write_levels_csv(out / "levels.csv", cost.y_names[0], result.levels)
        written.append(str(out / "levels.csv"))
    if result.map_on_source is not None:
        # T at every source point, or at every node of a source density's midpoint rule, with the
        # (normalised) mass each carries: the map docs/usage.md promises, with or without --at
        write_map_csv(out / "map-on-source.csv", cost.x_names, cost.y_names[0], result.source.points,
                      result.map_on_source, weights=result.source.weights)
        written.append(str(out / "map-on-source.csv"))
    if at_values is not None:
        write_map_csv(out / "map-at.csv", cost.x_names, cost.y_names[0], *at_values)
        written.append(str(out / "map-at.csv"))
    return written


def run(args) -> tuple[dict, object, list[str]]:
    """Run the analysis for parsed arguments: ``(document, result, written files)``."""
    from ..spec.loader import load_cost

    cost = load_cost(args.file)
    source = _side_from_option("source", args.source, "--source", cost.x_names)
    target = _side_from_option("target", args.target, "--target", cost.y_names)
    # the command asks for this one analysis: a file it cannot be run on is a usage mistake (exit 2,
    # saying what is missing), not a "not applicable" result with exit 0
    reason = applicable(cost, *sides_of(cost, source, target))
    if reason:
        raise CostFileError(f"the nested command cannot run: {reason}", file=cost.file,
                            field="y" if cost.m != 1 else "data")
    result = analyse(cost, source, target, levels=args.levels, grid=args.grid)
    verdict = result.verdict
    check = verdict.to_json(cost.x_names, cost.y_names)
    check["summary"] = result.summary
    check["seconds"] = {k: round(v, 4) for k, v in result.seconds.items()}
    document = {"tool": "costcheck", "version": __version__, "id": cost.id, "file": cost.file, "n": cost.n,
                "m": cost.m, "sense": cost.sense, "checks": {"nested": check}}
    lv = result.levels
    if lv is not None:
        document["levels"] = {cost.y_names[0]: lv.ys.tolist(), "G": lv.G.tolist(), "k": lv.k.tolist(),
                              "k_minus": lv.k_minus.tolist(), "k_plus": lv.k_plus.tolist(),
                              "k_lo": lv.k_lo.tolist(), "k_hi": lv.k_hi.tolist()}
    at_values = None
    if args.at:
        points, _, _ = read_points(Path(args.at), cost.x_names)
        T, clamped = map_at(result, points)
        at_values = (points, T)
        document["at"] = {"file": args.at, "points": int(points.shape[0]), "clamped_points": clamped,
                          "values": [{"x": dict(zip(cost.x_names, map(float, p))), cost.y_names[0]: float(t)}
                                     for p, t in zip(points, T)]}
    written: list[str] = []
    if args.out:
        try:
            written += _write_out(Path(args.out), document, cost, result, at_values)
        except OSError as exc:  # a folder that cannot be made or written: the option's fault, not a bug
            raise UsageError(f"cannot write into {args.out}: {exc.strerror or exc} (option --out)") from None
    if args.plots and result.levels is not None:
        from ..render.plots.nested import nested_figures

        try:
            for fig in nested_figures(result, Path(args.plots)):
                written += [str(fig.png), str(fig.svg)]
        except OSError as exc:
            raise UsageError(f"cannot write pictures into {args.plots}: {exc.strerror or exc} (option --plots)") from None
    expected = cost.expect.get("nested")
    code = EXIT_EXPECTATION_FAILED if expected and expected != verdict.verdict else EXIT_OK
    document["expect"] = expected
    document["exit_code"] = code
    document["written"] = written
    return clean_json(document), result, written


def render(console, document: dict, result) -> None:
    from ..render.terminal import verdict_style, format_witness

    cost = result.cost
    check = document["checks"]["nested"]
    console.print(f"[bold]{cost.id}[/] — {cost.title}  [dim]({cost.file})[/]")
    console.print(f"nested: [{verdict_style(check['verdict'])}]{check['verdict']}[/] {check['code']} "
                  f"({check['evidence']['kind']})")
    console.print(check["evidence"]["summary"], markup=False)
    if result.verdict.witness is not None:
        console.print("witness: " + format_witness(result.verdict.witness, cost.x_names, cost.y_names), markup=False)
    for note in check["notes"]:
        console.print(f"note: {note}", markup=False)
    summary = check.get("summary") or {}
    if summary.get("map"):
        mp = summary["map"]
        console.print(f"map T: {cost.y_names[0]} ∈ [{mp['T_range'][0]:.6g}, {mp['T_range'][1]:.6g}], mean surplus "
                      f"{mp['mean_surplus']:.6g}, Kolmogorov distance of T#μ to ν {mp['pushforward_kolmogorov_distance']:.3g}",
                      markup=False)
    elif summary.get("map_note"):
        console.print(summary["map_note"], markup=False)
    if "at" in document:
        at = document["at"]
        console.print(f"T evaluated at {at['points']} points of {at['file']}", markup=False)
        for row in at["values"][:10]:
            xs = ", ".join(f"{k}={v:.6g}" for k, v in row["x"].items())
            console.print(f"  T({xs}) = {row[cost.y_names[0]]:.6g}", markup=False)
        if at["points"] > 10:
            console.print(f"  … ({at['points'] - 10} more; --out DIR writes them all)", markup=False)
    secs = check.get("seconds") or {}
    if secs:
        console.print("seconds: " + ", ".join(f"{k} {v:.3g}" for k, v in secs.items()), markup=False)
    for path in document.get("written", []):
        console.print(f"wrote {path}", markup=False)

