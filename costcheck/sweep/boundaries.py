"""Verdict boundaries along a parameter: neighbouring changes, bisected to a tolerance.

For each condition and each pair of neighbouring grid values with different verdicts, the
parameter is bisected (all active bisections advance together, one batch of evaluations per
round, so a pool or a Dask cluster stays busy) until the interval ``[a, b]`` is no wider
than the tolerance; both sides' verdicts, margins (``value``) and witnesses are reported.

Bisection assumes one change inside the interval.  An *isolated* value — a verdict that
holds at a single parameter value only, such as the quadratic cost ``p = 2`` in the family
``-(1/p)|x-y|^p`` (weak MTW, ``S ≡ 0``; MTW 2005) between failing values on both sides
(Loeper 2009) — is invisible unless a grid point hits it.  When a grid point's verdict differs
from both neighbours' it is reported as isolated in addition (the bisections on its two sides
then close in on the point itself).  Any verdict is treated this way, not only 'weak':
``undecided`` at a degenerate value and ``error`` where the cost cannot be built are
verdicts of their own.  Intervals with an ``error`` side are not bisected (the error is at
an exact value).  A third verdict met inside an interval splits it in two bisections.

A bracket is a *boundary* only if it survives a re-check: both sides are checked again with
:data:`RECHECK_FACTOR` times the budget (same seed) and must keep their verdicts.  A sampled
verdict can change with the sample (a margin of -0.4 found by some samples near a singular set
and missed by others): a bracket whose side changes verdict at the higher budget is reported as
*unstable*, with both budgets' verdicts, never as a boundary.  Each side carries ``where``, the
``(x, y)`` at which its verdict was decided (the witness, or the extreme point its search found).
"""

from __future__ import annotations

from ..conditions import READS
from .grid import snap
from .point import ERROR

KEY = ("verdict", "kind", "value", "witness", "code", "where")

#: the re-check of a bracket's two sides uses this many times the sweep's budget
RECHECK_FACTOR = 4


def with_inputs(conditions, among) -> list[str]:
    """``conditions`` and those of ``among`` (the sweep's conditions) their checks read (Loeper reads
    MTW's witness), so that a subset is checked with the same evidence as the sweep's points."""
    out = set(conditions)
    for c in conditions:
        out.update(r for r in READS.get(c, ()) if r in among)
    return sorted(out)


def _side(value: float, entry: dict) -> dict:
    return {"param": value, **{k: entry.get(k) for k in KEY}}


def _lines(result):
    """Index lists along each line of the grid: (axis name, fixed params, [point indices])."""
    axes = result.axes
    if len(axes) == 1:
        return [(axes[0].name, {}, list(range(len(result.points))))]
    a0, a1 = axes
    n1 = len(a1.values)
    lines = []
    for i, v0 in enumerate(a0.values):          # vary the second axis, first fixed
        lines.append((a1.name, {a0.name: v0}, [i * n1 + j for j in range(n1)]))
    for j, v1 in enumerate(a1.values):          # vary the first axis, second fixed
        lines.append((a0.name, {a1.name: v1}, [i * n1 + j for i in range(len(a0.values))]))
    return lines


def find_boundaries(result, executor, tolerance: float):
    boundaries, isolated, active = [], [], []
    for name, fixed, idx in _lines(result):
        for cond in result.conditions:
            verdicts = [result.verdict(i, cond) for i in idx]
            for k in range(len(idx) - 1):
                if verdicts[k] != verdicts[k + 1]:
                    lo, hi = idx[k], idx[k + 1]
                    active.append({
                        "condition": cond, "parameter": name, "fixed": fixed,
                        "a": result.points[lo][name], "b": result.points[hi][name],
                        "left": _side(result.points[lo][name], result.results[lo][cond]),
                        "right": _side(result.points[hi][name], result.results[hi][cond]),
                        "grid": [result.points[lo][name], result.points[hi][name]],
                    })
            for k in range(1, len(idx) - 1):
                if verdicts[k] != verdicts[k - 1] and verdicts[k] != verdicts[k + 1]:
                    i = idx[k]
                    isolated.append({
                        "condition": cond, "parameter": name, "fixed": fixed,
                        "value": result.points[i][name], "verdict": verdicts[k],
                        "neighbours": [verdicts[k - 1], verdicts[k + 1]],
                        "entry": _side(result.points[i][name], result.results[i][cond]),
                    })
    for b in active:
        # a cost that cannot be built fails at an exact value (p = 0 in -(1/p)|x-y|^p): nothing to bisect
        if ERROR in (b["left"]["verdict"], b["right"]["verdict"]):
            b["skip"] = True
    cache: dict = {}
    while True:
        todo = [b for b in active if b["b"] - b["a"] > tolerance and not b.get("skip")]
        spawned = []
        if not todo:
            break
        requests: dict = {}
        for b in todo:
            b["mid"] = snap((b["a"] + b["b"]) / 2)
            params = {**b["fixed"], b["parameter"]: b["mid"]}
            key = tuple(sorted(params.items()))
            if key not in cache:
                requests.setdefault(key, (params, set()))[1].add(b["condition"])
        if requests:
            keys = list(requests)
            # evaluate every condition being bisected anywhere, so shared midpoints are reused
            conds = with_inputs({c for _, cs in requests.values() for c in cs} | {b["condition"] for b in todo},
                                result.conditions)
            outs = executor.map([requests[k][0] for k in keys], conds)
            for k, out in zip(keys, outs):
                cache[k] = out
        for b in todo:
            params = {**b["fixed"], b["parameter"]: b.pop("mid")}
            entry = cache[tuple(sorted(params.items()))].get(b["condition"])
            if entry is None:            # computed before this condition joined: evaluate alone
                entry = executor.map([params], with_inputs([b["condition"]], result.conditions))[0][b["condition"]]
                cache[tuple(sorted(params.items()))][b["condition"]] = entry
            value = params[b["parameter"]]
            if entry["verdict"] == b["left"]["verdict"]:
                b["a"], b["left"] = value, _side(value, entry)
            elif entry["verdict"] == b["right"]["verdict"]:
                b["b"], b["right"] = value, _side(value, entry)
            else:
                # a third verdict inside: two changes; bisect both halves
                spawned.append({**b, "a": value, "left": _side(value, entry)})
                b["b"], b["right"] = value, _side(value, entry)
        active.extend(spawned)
    rechecked = _recheck(active, isolated, executor, result.conditions)
    unstable, kept = [], []
    for iso in isolated:  # a verdict seen at one value only must survive the re-check too
        params = {**iso["fixed"], iso["parameter"]: iso["value"]}
        e = rechecked.get(tuple(sorted(params.items())), {}).get(iso["condition"])
        iso["recheck"] = {"budget": executor.budget * RECHECK_FACTOR,
                          "entry": None if e is None else _side(iso["value"], e)}
        if e is not None and e["verdict"] != iso["verdict"]:
            unstable.append({**iso, "kind": "point"})
        else:
            kept.append(iso)
    isolated = kept
    for b in active:
        row = {"condition": b["condition"], "parameter": b["parameter"], "fixed": b["fixed"],
               "interval": [b["a"], b["b"]], "grid_interval": b["grid"],
               "from": b["left"]["verdict"], "to": b["right"]["verdict"],
               "bisected": not b.get("skip") and tolerance != float("inf"),
               "left": b["left"], "right": b["right"]}
        again = {side: rechecked.get(_key(b, side), {}).get(b["condition"]) for side in ("left", "right")}
        row["recheck"] = {"budget": executor.budget * RECHECK_FACTOR,
                          **{side: None if e is None else _side(b[side]["param"], e) for side, e in again.items()}}
        changed = [side for side, e in again.items() if e is not None and e["verdict"] != b[side]["verdict"]]
        if changed:
            row["unstable_sides"] = changed
            unstable.append({**row, "kind": "bracket"})
        else:
            boundaries.append(row)
    return boundaries, isolated, unstable


def _key(b, side):
    return tuple(sorted({**b["fixed"], b["parameter"]: b[side]["param"]}.items()))


def _recheck(active, isolated, executor, among) -> dict:
    """Every non-error side of every bracket and every isolated value, checked at RECHECK_FACTOR times
    the budget: {params key: entry}."""
    requests: dict = {}
    for b in active:
        for side in ("left", "right"):
            if b[side]["verdict"] != ERROR:
                requests.setdefault(_key(b, side), dict(_key(b, side)))
    for iso in isolated:
        if iso["verdict"] != ERROR:
            key = tuple(sorted({**iso["fixed"], iso["parameter"]: iso["value"]}.items()))
            requests.setdefault(key, dict(key))
    if not requests:
        return {}
    conds = with_inputs({b["condition"] for b in active} | {i["condition"] for i in isolated}, among)
    keys = list(requests)
    outs = executor.map([requests[k] for k in keys], conds, budget=executor.budget * RECHECK_FACTOR)
    return dict(zip(keys, outs))
