"""``python -m costcheck.bench``: throughput, wall-time and memory figures, printed as one JSON object.

Every figure is measured in the same run (nothing is copied from earlier runs):

* ``margin``: MTW (A3w) margin throughput in (x, y) pairs per second — derivative evaluation
  plus :func:`costcheck.numerics.curvature.margins.a3w_margin` (the orthogonal-pair minimum) — per cost and
  backend; ``build_s`` (evaluator construction, symbolic differentiation, JAX tracing and
  compilation, first call) is reported separately and excluded from the throughput; for a
  symbolic n = 3 cost also ``n3_fused``, the fused jitted kernel
  (:mod:`costcheck.numerics.curvature.n3.fused_margin`: the minimum is a local minimum to
  rounding, Hessian semi-definite to 1e-13·max|G| and predicted decrease at most 1e-16·max|G|,
  seeded from a 96-direction scan; rows not converged are redone per pair and counted in
  ``unconverged_fraction``), timed in rounds interleaved with today's path
  (``current_pairs_per_s``) and ``ratio_to_current``;
* ``naive``: the same margin computed the way a user would write it — every derivative entry
  lambdified separately (no common subexpressions), a Python loop over points, ``T`` and ``S``
  per point in numpy, a grid of 64 directions for ξ — and the ratio ``speedup`` of the sympy
  path over it;
* ``cli``: wall time of ``costcheck check`` on one 2-D cost and on ``catalog/`` (subprocesses,
  interpreter start included) with an empty result cache, the catalog again with that cache
  warm (``catalog_warm``), and the peak resident memory of the cold catalog check
  (``getrusage(RUSAGE_CHILDREN).ru_maxrss``, MB); the cold catalog again in one process
  (``catalog_one_worker``, ``--workers 1``) and the ratio ``catalog_workers_speedup`` the
  worker processes give; the cold catalog with ``--prove`` (``catalog_prove``: 60 s of proof budget
  per condition, the whole catalog's target five minutes); each with its CPU seconds (``cpu_s``, workers included) and the load
  average.  Compiled code (JAX's and numba's caches) is
  as the margin measurements above left it: compiled once on this machine;
* ``startup``: ``check_2d.wall_s``, the shell wall time of ``costcheck check <2-D cost> --no-cache``
  (a fresh interpreter each time, imports, derivatives, sampling, checks and the default proofs;
  after one run with an empty Sobol point store, ``empty_point_store_s``, that draws and stores them),
  the best of :data:`STARTUP_REPEATS` runs (the machine is shared: the best run is the one least
  disturbed), its least CPU seconds ``cpu_s``, beside ``interpreter_s`` (``python -c pass``) and
  ``imports_s`` (importing what that check imports, nothing run), the one-minute load average, and
  ``ratio``, wall over target (below 1 meets it);
* ``certify``: rigorous enclosures of the MTW tensor's derivative fields (values and gradients,
  natural ∩ mean-value form) over one seeded set of cells of the pair box of
  :data:`CERTIFY_COST`, in cells per second: ``arb`` (today's engine, ball arithmetic one cell at
  a time, ``FieldEnclosures.duals_on_cell``) and ``vectorised`` (IEEE 1788 interval arrays, all
  cells at once, ``CellFieldEnclosures.duals_on_cells``), and ``speedup``, their ratio; the two are
  timed in interleaved rounds and each reports its best round;
* ``heldout``: the default ``costcheck check`` (proof attempts on, an empty result cache) on a
  held-out corpus — cost files kept outside the catalog, each ``expect`` verdict from a published
  result (``--heldout DIR``, default ``tests/heldout/`` when the source checkout has it; skipped,
  and said so, when there is no such folder, as in an installed package): ``true_verdicts`` (the
  expectations counted), ``proved`` (equal to the expectation on rigorous evidence: proved, or
  refuted by a certified witness), ``proved_fraction``, ``sampled``, ``unanswered``, ``wrong`` (any
  contradiction), ``proved_wrong`` (a contradiction on rigorous evidence), per condition, the
  expectations not proved, and ``line``: whether the target (proved_fraction >= 0.90,
  proved_wrong = 0) is met (:mod:`costcheck.model.heldout` defines the counts).

Progress goes to stderr; stdout carries only the JSON object.
"""

from __future__ import annotations

import argparse
import json
import os
import platform
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parent.parent
CATALOG = ROOT / "catalog"

COSTS = {
    "default": {2: ["euclidean/power-0.5.yaml", "sphere/sphere-dist-sq.yaml"],
                3: ["euclidean/power-0.5-3d.yaml", "euclidean/sq-euclid-3d.yaml"]},
    "small": {2: ["euclidean/power-0.5.yaml"], 3: ["euclidean/sq-euclid-3d.yaml"]},
}
#: pairs per throughput measurement, and points for the (slow) naive reference
SIZES = {
    "default": {"pairs": {2: 200_000, 3: 50_000}, "naive": {2: 200, 3: 40}, "single_budget": None,
                "certify_cells": 2_000},
    "small": {"pairs": {2: 2_000, 3: 100}, "naive": {2: 10, 3: 4}, "single_budget": 256, "certify_cells": 16},
}
SINGLE_COST = "euclidean/power-0.5.yaml"
#: runs of each start-up figure per size (the best is reported)
STARTUP_REPEATS = {"default": 3, "small": 1}
#: what a 2-D check imports before it computes anything (the start-up floor of ``startup.check_2d``)
STARTUP_IMPORTS = ("import costcheck.cli, costcheck.run.batch, costcheck.run.runner, costcheck.spec.loader, "
                   "costcheck.conditions.context, costcheck.certify")
NAIVE_GRID = 64

TARGETS = {"n2_pairs_per_s": 2e6, "n2_speedup_vs_naive": 200.0, "n3_pairs_per_s": 2e6, "n3_fused_ratio": 7.0,
           "single_cost_check_s": 5.0, "catalog_check_s": 15.0, "catalog_peak_mb": 2048.0,
           "certify_speedup": 100.0, "check_2d_startup_s": 1.5, "catalog_prove_check_s": 300.0}
#: the cost and the cells of the certify figures: each cell's side is CERTIFY_CELL_SIDE of the pair
#: box's (after four halvings of every axis, where branch and bound spends most of its cells)
CERTIFY_COST = "euclidean/power-0.5.yaml"
CERTIFY_CELL_SIDE = 1 / 16
#: the held-out corpus of a source checkout (an installed package has none)
HELDOUT = ROOT / "tests" / "heldout"


def _log(message: str) -> None:
    print(f"[bench] {message}", file=sys.stderr, flush=True)


def _pairs(cost, count: int, seed: int = 1):
    from .numerics.sampling import sample_pairs

    s = sample_pairs(cost.domain, cost.n, cost.m, count, seed)
    return s.xs, s.ys


# --------------------------------------------------------------------------- vectorised margin

#: timed runs per margin figure; the best is reported (the first run after compiling is slower:
#: memory is still being mapped, and the machine's other load comes and goes)
REPEATS = 3


def measure_margin(cost, backend: str, xs, ys) -> dict:
    """Throughput of one backend's margin path: the best of :data:`REPEATS` runs after one
    untimed warm-up run on the same pairs (``build_s``: the warm-up, compilation included).

    ``jax`` on a symbolic n = 2 cost is the fused kernel (:mod:`costcheck.numerics.curvature.n2.fused_margin`):
    derivatives and margin compiled together.  Otherwise the backend's derivative evaluator
    feeds :func:`costcheck.numerics.curvature.margins.a3w_margin` (numpy for n = 2, compiled per pair for n = 3).
    """
    from .numerics.curvature.margins import a3w_margin
    from .numerics.curvature.n2 import fused_margin

    fused = backend == "jax" and fused_margin.applicable(cost)
    started = time.perf_counter()
    if fused:
        fused_margin.a3w_margin(cost, xs, ys)  # traces and compiles the programs for these block sizes
        warm = time.perf_counter() - started
        runs, (m, _) = _best_of(lambda: (fused_margin.a3w_margin(cost, xs, ys), None))
        stages = _fused_stages(cost, xs, ys)
    else:
        evaluator = cost.derivatives(backend=backend, order=4)
        a3w_margin(evaluator(xs, ys))  # JAX compiles for this batch shape here
        warm = time.perf_counter() - started

        def margins():  # (margins, seconds spent on the derivatives)
            t0 = time.perf_counter()
            d = evaluator(xs, ys)
            derivatives_s = time.perf_counter() - t0
            return a3w_margin(d), derivatives_s

        runs, (m, derivatives_s) = _best_of(margins)
        stages = {"derivatives_pairs_per_s": xs.shape[0] / derivatives_s,
                  "margin_pairs_per_s": xs.shape[0] / (min(runs) - derivatives_s)}
    total = min(runs)
    return {"pairs": int(xs.shape[0]), "pairs_per_s": xs.shape[0] / total, "seconds": total,
            "runs_s": runs, "path": "fused jitted kernel" if fused else f"{backend} derivatives + {_margin_route(cost.n)}",
            "build_s": warm, **stages,
            "valid_fraction": float(np.mean(m.valid)), "min_rel_margin": float(np.nanmin(m.rel))}


def _margin_route(n: int) -> str:
    return "margin compiled per pair (numba, two threads)" if n == 3 else "numpy margin"


def _best_of(run):
    """``(seconds of each of REPEATS calls of run(), the result of the fastest call)``."""
    runs, results = [], []
    for _ in range(REPEATS):
        t0 = time.perf_counter()
        results.append(run())
        runs.append(time.perf_counter() - t0)
    return runs, results[int(np.argmin(runs))]


def _fused_stages(cost, xs, ys, repeats: int = 3) -> dict:
    """Pairs per second of each of the fused kernel's five programs on one chunk (best of ``repeats``):
    the profile that says where its time goes."""
    import jax

    from .numerics.curvature.n2 import fused_margin

    algebra, grid, polish, choose, finish = fused_margin.compiled_programs(cost.expr, tuple(cost.x_symbols),
                                                                   tuple(cost.y_symbols))
    z = fused_margin.padded(np.concatenate([xs, ys], axis=1)[: fused_margin.CHUNK], fused_margin.CHUNK)
    best = np.full(5, np.inf)
    for _ in range(repeats):
        marks = [time.perf_counter()]
        prepared = jax.block_until_ready(algebra(z))
        marks.append(time.perf_counter())
        packed = jax.block_until_ready(grid(prepared))
        marks.append(time.perf_counter())
        found = jax.block_until_ready(polish(prepared, packed))
        marks.append(time.perf_counter())
        minimum = jax.block_until_ready(choose(prepared, packed, found))
        marks.append(time.perf_counter())
        jax.block_until_ready(finish(prepared, minimum))
        marks.append(time.perf_counter())
        best = np.minimum(best, np.diff(marks))
    names = ("derivatives_and_tensor", "quartic_grid_stage", "newton_roots", "choice", "margins")
    return {"stage_pairs_per_s": {name: z.shape[0] / t for name, t in zip(names, best)},
            "derivative_operations_per_pair": _derivative_operations(cost)}


def measure_n3_fused(cost, xs, ys, current: dict) -> dict:
    """The fused n = 3 kernel (:mod:`costcheck.numerics.curvature.n3.fused_margin`) on the same
    pairs, timed in rounds interleaved with today's n = 3 path (``current``: its backend's
    evaluator feeding the per-pair margin), so that the ratio compares the same minutes."""
    from .numerics.curvature.margins import a3w_margin
    from .numerics.curvature.n3 import fused_margin

    started = time.perf_counter()
    fused_margin.a3w_margin(cost, xs, ys)  # traces and compiles the four programs
    warm = time.perf_counter() - started
    evaluator = cost.derivatives(backend=current["backend"], order=4)
    fused_runs, current_runs = [], []
    for _ in range(REPEATS):
        t0 = time.perf_counter()
        m = fused_margin.a3w_margin(cost, xs, ys)
        fused_runs.append(time.perf_counter() - t0)
        t0 = time.perf_counter()
        a3w_margin(evaluator(xs, ys))
        current_runs.append(time.perf_counter() - t0)
    rate, today = xs.shape[0] / min(fused_runs), xs.shape[0] / min(current_runs)
    return {"pairs": int(xs.shape[0]), "pairs_per_s": rate, "runs_s": fused_runs, "build_s": warm,
            "path": "fused jitted kernel (derivatives, tensor, scan, Newton on SO(3))",
            "current_path": f"{current['backend']} derivatives + {_margin_route(3)}",
            "current_pairs_per_s": today, "ratio_to_current": rate / today,
            "unconverged_fraction": fused_margin.unconverged_fraction(cost, xs, ys),
            "stage_pairs_per_s": _n3_stages(cost, xs, ys),
            "valid_fraction": float(np.mean(m.valid)), "min_rel_margin": float(np.nanmin(m.rel))}


def _n3_stages(cost, xs, ys, repeats: int = 3) -> dict:
    """Pairs per second of each of the n = 3 kernel's four programs on one chunk (best of ``repeats``)."""
    import jax

    from .numerics.curvature.n3 import fused_margin

    algebra, scan, race, refine = fused_margin.compiled_programs(cost.expr, tuple(cost.x_symbols),
                                                                 tuple(cost.y_symbols))
    z = fused_margin.padded(np.concatenate([xs, ys], axis=1)[: fused_margin.CHUNK], fused_margin.CHUNK)
    one, best = np.float64(1.0), np.full(4, np.inf)
    for _ in range(repeats):
        marks = [time.perf_counter()]
        prepared = jax.block_until_ready(algebra(z))
        marks.append(time.perf_counter())
        seeds = jax.block_until_ready(scan(prepared.g))
        marks.append(time.perf_counter())
        state = jax.block_until_ready(race(prepared.g, seeds, one))
        marks.append(time.perf_counter())
        jax.block_until_ready(refine(prepared.g, state, one))
        marks.append(time.perf_counter())
        best = np.minimum(best, np.diff(marks))
    names = ("derivatives_and_tensor", "scan_and_seeds", "newton_from_both_seeds", "newton_refine")
    return {name: z.shape[0] / t for name, t in zip(names, best)}


def _derivative_operations(cost) -> int:
    """Arithmetic and function nodes of the order-2..4 derivatives after common-subexpression
    elimination: the work the kernel's first program does per pair before the tensor algebra."""
    import sympy as sp

    from .numerics.curvature.n2.fused_margin import FIELDS
    from .derivatives.composition import composed_derivatives
    from .derivatives.sympy_backend import distinct_entries, shared_cse

    flat, _ = distinct_entries(composed_derivatives(cost.expr, tuple(cost.x_symbols), tuple(cost.y_symbols), 4), FIELDS)
    replacements, reduced = shared_cse(flat)  # the kernel's own elimination (cached)
    return int(sum(sp.count_ops(e) for _, e in replacements) + sum(sp.count_ops(e) for e in reduced))


# --------------------------------------------------------------------------- naive reference

def _naive_functions(cost):
    """Every derivative entry lambdified on its own, no cse: what a user would write."""
    import sympy as sp

    from .derivatives.sympy_backend import LAMBDIFY_MODULES, symbolic_derivatives

    sym = symbolic_derivatives(cost.expr, cost.x_symbols, cost.y_symbols, 4)
    args = list(cost.x_symbols) + list(cost.y_symbols)
    out = {}
    for name in ("dxy", "dxxy", "dxyy", "dxxyy"):
        entries = np.array(sym[name], dtype=object)
        out[name] = (entries.shape, [sp.lambdify(args, e, modules=LAMBDIFY_MODULES) for e in entries.reshape(-1)])
    return out


def _naive_directions(n: int):
    if n == 2:
        t = np.arange(NAIVE_GRID) * np.pi / NAIVE_GRID
        return np.stack([np.cos(t), np.sin(t)], axis=1)
    from .numerics.curvature.algebra import sphere_directions

    return sphere_directions(n, NAIVE_GRID)


def naive_margin(functions, xs, ys) -> np.ndarray:
    """Per point: min over the ξ grid of the A3w form (η ⊥ ξ: the rotated ξ for n = 2, else eigvalsh)."""
    n = xs.shape[1]
    dirs = _naive_directions(n)
    out = np.empty(xs.shape[0])
    for p in range(xs.shape[0]):
        args = list(xs[p]) + list(ys[p])
        d = {name: np.array([float(f(*args)) for f in fs]).reshape(shape) for name, (shape, fs) in functions.items()}
        inv = np.linalg.inv(d["dxy"])
        T = np.einsum("ijr,rs,skl->ijkl", d["dxxy"], inv, d["dxyy"]) - d["dxxyy"]
        best = np.inf
        for xi in dirs:
            if n == 2:
                eta_p = inv @ np.array([-xi[1], xi[0]])
                S = np.einsum("ijkl,i,j,k,l->", T, xi, xi, eta_p, eta_p)
            else:
                basis = np.linalg.svd(xi[None, :])[2][1:].T  # orthonormal basis of ξ^⊥
                Q = inv.T @ np.einsum("ijkl,i,j->kl", T, xi, xi) @ inv
                R = basis.T @ Q @ basis
                S = np.linalg.eigvalsh(0.5 * (R + R.T))[0]
            best = min(best, S)
        out[p] = best
    return out


def measure_naive(cost, xs, ys) -> dict:
    started = time.perf_counter()
    functions = _naive_functions(cost)
    build = time.perf_counter() - started
    t0 = time.perf_counter()
    naive_margin(functions, xs, ys)
    seconds = time.perf_counter() - t0
    return {"pairs": int(xs.shape[0]), "pairs_per_s": xs.shape[0] / seconds, "seconds": seconds, "build_s": build,
            "grid": NAIVE_GRID}


# --------------------------------------------------------------------------- certified enclosures

def certify_cells(cost, count: int, seed: int = 1):
    """``count`` seeded cells inside the pair box of the cost's domain, each side CERTIFY_CELL_SIDE of the box's."""
    from .certify.region import bounding_box

    lo, hi = bounding_box(cost.domain)
    rng = np.random.default_rng(seed)
    side = (hi - lo) * CERTIFY_CELL_SIDE
    a = lo + rng.random((count, lo.size)) * (hi - lo - side)
    return a, a + side


#: rounds of the certify figures: each round times the arb engine on its share of the cells, then the
#: vectorised engine on all of them, so both see the same load on a shared machine
CERTIFY_ROUNDS = 4


def measure_certify(cost, count: int) -> dict:
    """Cells per second of the two rigorous engines on the same cells (the TENSOR_FIELDS' values and
    gradients), both measured here and interleaved; each engine's figure is its best round.  Build
    times (symbolic differentiation, compilation, one warm-up call) are excluded."""
    from .certify.cell_enclosures import CellFieldEnclosures
    from .certify.enclosures import TENSOR_FIELDS, FieldEnclosures

    lo, hi = certify_cells(cost, count)
    t0 = time.perf_counter()
    balls = FieldEnclosures(cost, TENSOR_FIELDS)
    balls.duals_on_cell(lo[0], hi[0])
    arb_build = time.perf_counter() - t0
    t0 = time.perf_counter()
    arrays = CellFieldEnclosures(cost, TENSOR_FIELDS)
    arrays.duals_on_cells(lo, hi)
    vec_build = time.perf_counter() - t0
    enclosed, arb_rates, vec_runs = [], [], []
    for share in np.array_split(np.arange(count), CERTIFY_ROUNDS):
        t0 = time.perf_counter()
        enclosed += [balls.duals_on_cell(lo[k], hi[k])[0] is not None for k in share]
        arb_rates.append(len(share) / (time.perf_counter() - t0))
        t0 = time.perf_counter()
        fields = arrays.duals_on_cells(lo, hi)[0]
        vec_runs.append(time.perf_counter() - t0)
    arb = {"cells": count, "cells_per_s": max(arb_rates), "rounds_cells_per_s": arb_rates, "build_s": arb_build,
           "enclosed_fraction": float(np.mean(enclosed)), "path": "arb balls, one cell at a time"}
    vectorised = {"cells": count, "cells_per_s": count / min(vec_runs), "runs_s": vec_runs,
                  "build_s": vec_build, "enclosed_fraction": float(np.mean(fields.enclosed)),
                  "operations": arrays.function.operations,
                  "path": "ival interval arrays, all cells at once"}
    return {"file": f"catalog/{CERTIFY_COST}", "fields": list(TENSOR_FIELDS), "variables": int(lo.shape[1]),
            "cell_side": CERTIFY_CELL_SIDE, "arb": arb, "vectorised": vectorised,
            "speedup": vectorised["cells_per_s"] / arb["cells_per_s"]}


# --------------------------------------------------------------------------- command line

#: a tiny launcher: a child forked from this (large) process would start with its resident set,
#: and ru_maxrss would report that, not the check's own peak
_LAUNCHER = ("import json, resource, subprocess, sys, time\n"
             "t = time.perf_counter()\n"
             "rc = subprocess.run(sys.argv[1:], stdout=subprocess.DEVNULL).returncode\n"
             "s = time.perf_counter() - t\n"
             "u = resource.getrusage(resource.RUSAGE_CHILDREN)\n"
             "print(json.dumps({'rc': rc, 'inner_s': s, 'cpu_s': u.ru_utime + u.ru_stime, "
             "'maxrss': u.ru_maxrss}))\n")


def _run_cli(args: list[str], results: str) -> dict:
    """``costcheck check ARGS`` in a fresh interpreter, its result cache in the folder ``results``:
    wall time (interpreter start included), CPU seconds (the check and its workers), peak memory and the
    one-minute load average at the end (a shared machine's other work stretches the wall time, not the CPU)."""
    t0 = time.perf_counter()
    proc = subprocess.run([sys.executable, "-c", _LAUNCHER, sys.executable, "-m", "costcheck", "check", *args],
                          cwd=ROOT, capture_output=True, text=True, env={**os.environ, "COSTCHECK_CACHE_DIR": results})
    outer = time.perf_counter() - t0
    info = json.loads(proc.stdout.strip().splitlines()[-1])
    scale = 1 / 1024 if sys.platform != "darwin" else 1 / 2**20  # ru_maxrss: KiB on Linux, bytes on macOS
    # ``seconds`` is the check's own subprocess (interpreter start included), timed by the launcher
    return {"seconds": info["inner_s"], "cpu_s": info["cpu_s"], "exit_code": info["rc"],
            "peak_mb": info["maxrss"] * scale, "outer_seconds": outer, "load_average": os.getloadavg()[0],
            "args": args}


#: what bounds each throughput target, said when the target is not met
LIMITS = {
    "n2_pairs_per_s": "the fused kernel's five programs (margin.<cost>.jax.stage_pairs_per_s), on "
                      "blocks of 32,768 pairs, two blocks in flight; each program's outputs are "
                      "written and read back. "
                      "Per pair: the derivatives after cse (derivative_operations_per_pair: ~180 "
                      "for the power cost, ~830 for the sphere chart, both by Faa di Bruno's formula; "
                      "almost all multiplications and additions) and ~1,300 flops "
                      "of the certified quartic grid stage; XLA runs a pure FMA chain at ~2e10 flop/s on these 2 cores, so ~3e3 flops/pair "
                      "bounds the kernel near 7e6 pairs/s; transcendental calls and selects cost "
                      "several flops each",
    "n3_pairs_per_s": "today's n = 3 path, per pair on one core (profiled on power-0.5-3d, 100,000 pairs, "
                      "an idle machine): the compiled Newton iterations on SO(3) from two seeds, ~1.2-1.4 us "
                      "(8-9 model evaluations of ~600 flops, a dependent chain, ~75-160 ns each); the seeds' choice "
                      "(96 restricted eigenvalues, a masked argmin), ~0.3 us; the float32 BLAS scan, "
                      "~0.2-0.35 us; the compiled tensor algebra, ~0.5 us; the lambdified derivatives, "
                      "~0.6 us (a gather of their whole table afterwards took as long again until the fields "
                      "were written per chunk); two threads give 1.5-1.8x on an idle machine, nothing when "
                      "the other sessions hold the cores. "
                      "The fused kernel (margin.<cost>.n3_fused) is slower still: see n3_fused_ratio",
    "n3_fused_ratio": "the fused kernel's scan and Newton programs (margin.<cost>.n3_fused.stage_pairs_per_s, "
                      "each ~1-3e5 pairs/s). Scan: a (288, 36) float32 product per pair and reductions over "
                      "96 directions. Newton: "
                      "XLA's CPU compiler splits one Newton iteration into ~67 loops, each reading "
                      "~15 and writing 1-3 N-long columns, and copies the shared model (B, Q, the "
                      "mixed block) into several of them (~1,350 multiplications a step against ~500 "
                      "written); one step runs at 3-5e5 pairs/s, ~10x the per-pair compiled chain. "
                      "Its derivative-and-tensor program alone runs at 2.5-9e6 pairs/s",
    "n2_speedup_vs_naive": "follows from n2_pairs_per_s: the naive per-point loop runs at "
                           "~1e2-1e3 pairs/s",
    "certify_speedup": "the vectorised engine's time is ival's per-call work (~10 us of Python and ctypes "
                       "per operation, then ~1-5 ns per interval): one pass over the program "
                       "(interval_rows: ~600 calls for the 171 operations, ~9 ms of a ~17 ms batch of 2,000 cells; "
                       "the forward-mode gradient's (d, N) products most of the rest), then the mean-value "
                       "form on all fields at once; fresh pages for the large arrays cost a few ms a batch",
}


def _margins(result: dict, cfg: dict, size: str, backends) -> dict:
    """Margin throughput per cost and backend (and the naive loop); the fastest figure per n."""
    import costcheck

    from .numerics.curvature.n3 import fused_margin as n3_fused

    per_n: dict = {}
    for n, files in COSTS[size].items():
        for rel in files:
            cost = costcheck.load(CATALOG / rel)
            xs, ys = _pairs(cost, cfg["pairs"][n])
            key = cost.id
            entry = result["margin"][key] = {"n": n, "file": f"catalog/{rel}"}
            for backend in backends:
                _log(f"margin {key} ({xs.shape[0]} pairs, {backend})")
                entry[backend] = measure_margin(cost, backend, xs, ys)
            paths = list(backends)
            if n == 3 and "jax" in backends and n3_fused.applicable(cost):
                current = max(backends, key=lambda b: entry[b]["pairs_per_s"])
                _log(f"margin {key} ({xs.shape[0]} pairs, n3_fused beside {current})")
                entry["n3_fused"] = measure_n3_fused(cost, xs, ys, {"backend": current})
                paths.append("n3_fused")
            # a large budget runs on the faster path, so the targets are read from it
            fastest = max(paths, key=lambda b: entry[b]["pairs_per_s"])
            entry["fastest"] = fastest
            per_n.setdefault(n, []).append(entry[fastest]["pairs_per_s"])
            if "n3_fused" in entry:
                per_n.setdefault("n3_fused_ratio", []).append(entry["n3_fused"]["ratio_to_current"])
            if "sympy" in backends:
                k = cfg["naive"][n]
                _log(f"naive {key} ({k} pairs)")
                fig = measure_naive(cost, xs[:k], ys[:k])
                fig["speedup"] = entry[fastest]["pairs_per_s"] / fig["pairs_per_s"]
                fig["speedup_of"] = fastest
                result["naive"][key] = fig
    return per_n


def _certify(result: dict, cfg: dict) -> None:
    """Cells per second of the ball-arithmetic engine and of the vectorised one, on the same cells."""
    import costcheck

    _log(f"certify {CERTIFY_COST} ({cfg['certify_cells']} cells, arb then vectorised)")
    result["certify"] = measure_certify(costcheck.load(CATALOG / CERTIFY_COST), cfg["certify_cells"])


def _command_times(result: dict, cfg: dict, skip_catalog: bool) -> None:
    """Wall time of ``costcheck check`` on one cost, and on the catalog cold and warm."""
    single = [f"catalog/{SINGLE_COST}"]
    if cfg["single_budget"]:
        single += ["--budget", str(cfg["single_budget"])]
    # cold: an empty result cache of the bench's own (a user's warm cache would answer at once);
    # warm: the same command again, answered from that cache
    with tempfile.TemporaryDirectory(prefix="costcheck-bench-") as scratch:
        _log(f"costcheck check {' '.join(single)}")
        result["cli"]["single_cost"] = _run_cli(single, os.path.join(scratch, "single"))
        if not skip_catalog:
            _log("costcheck check catalog/ (empty result cache, then again with it warm)")
            cat = _run_cli(["catalog/"], os.path.join(scratch, "catalog"))
            result["cli"]["catalog"] = cat
            result["cli"]["catalog_warm"] = _run_cli(["catalog/"], os.path.join(scratch, "catalog"))
            result["cli"]["catalog_peak_mb"] = cat["peak_mb"]
            # the same cold run in one process: what the worker processes (--workers) gain
            _log("costcheck check catalog/ --workers 1 (empty result cache)")
            one = result["cli"]["catalog_one_worker"] = _run_cli(["catalog/", "--workers", "1"],
                                                                  os.path.join(scratch, "catalog-one"))
            result["cli"]["catalog_workers_speedup"] = one["seconds"] / cat["seconds"]
            # with the proof budget of --prove (60 s per condition): what a design review's full run costs
            _log("costcheck check catalog/ --prove (empty result cache)")
            result["cli"]["catalog_prove"] = _run_cli(["catalog/", "--prove"], os.path.join(scratch, "catalog-prove"))


def heldout_section(folder, budget: int | None = None) -> dict:
    """The ``heldout`` figures: ``costcheck check FOLDER --json`` in a fresh interpreter with an empty
    result cache (the default proof attempts; ``budget`` sampled pairs, else the default), scored by
    :func:`costcheck.model.heldout.score`. A missing folder gives ``{"skipped": why}``, never an error."""
    from .model.heldout import TARGET_FRACTION, score

    if folder is None or not Path(folder).is_dir():
        return {"folder": None if folder is None else str(folder), "target_fraction": TARGET_FRACTION,
                "skipped": "no held-out corpus folder (a source checkout has tests/heldout/; --heldout DIR names one)"}
    folder = Path(folder).resolve()
    args = ["check", str(folder), "--json"] + (["--budget", str(budget)] if budget else [])
    with tempfile.TemporaryDirectory(prefix="costcheck-bench-heldout-") as scratch:
        t0 = time.perf_counter()
        proc = subprocess.run([sys.executable, "-m", "costcheck", *args], cwd=ROOT, capture_output=True, text=True,
                              env={**os.environ, "COSTCHECK_CACHE_DIR": scratch})
        seconds = time.perf_counter() - t0
    try:
        document = json.loads(proc.stdout)
    except json.JSONDecodeError:
        return {"folder": str(folder), "exit_code": proc.returncode, "seconds": seconds,
                "skipped": "the check printed no JSON document: " + proc.stderr.strip()[-600:]}
    return {"folder": str(folder), "command": "costcheck " + " ".join(args), "exit_code": proc.returncode,
            "seconds": seconds, "load_average": os.getloadavg()[0], **score(document)}


def _heldout(result: dict, folder, cfg: dict) -> None:
    _log(f"held-out corpus {folder} (costcheck check --json, an empty result cache)")
    section = result["heldout"] = heldout_section(folder, cfg["single_budget"])
    if "skipped" in section:
        _log(f"held-out corpus skipped: {section['skipped']}")
        return
    _log(section["line"])
    fraction = result["targets"]["heldout_proved_fraction"] = {"measured": section["proved_fraction"],
                                                               "target": section["target"]["proved_fraction"]}
    if section["proved_fraction"] < fraction["target"]:  # what is not proved, condition by condition
        fraction["bottleneck"] = "; ".join(f"{name}: {row['proved']}/{row['true_verdicts']} proved"
                                           for name, row in sorted(section["by_condition"].items()))
    result["targets"]["heldout_proved_wrong"] = {"measured": section["proved_wrong"], "target": 0,
                                                 "lower_is_better": True}


def _best_wall(argv: list[str], repeats: int, env: dict | None = None) -> tuple[float, list[float], int, float]:
    """``(best, all runs, exit code of the last, least CPU seconds)`` of ``argv`` in a fresh process.

    The CPU seconds (user + system, ``RUSAGE_CHILDREN``) say how much of a slow wall time was
    the machine's other work: on a loaded machine the wall time grows, the CPU time much less."""
    import resource

    runs, cpus, code = [], [], 0
    for _ in range(repeats):
        before = resource.getrusage(resource.RUSAGE_CHILDREN)
        t0 = time.perf_counter()
        code = subprocess.run(argv, cwd=ROOT, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL,
                              env={**os.environ, **(env or {})}).returncode
        runs.append(time.perf_counter() - t0)
        after = resource.getrusage(resource.RUSAGE_CHILDREN)
        cpus.append(after.ru_utime - before.ru_utime + after.ru_stime - before.ru_stime)
    return min(runs), runs, code, min(cpus)


#: what bounds the start-up figure, said when its target is not met
STARTUP_LIMIT = ("the imports alone (startup.check_2d.imports_s): sympy, numpy, the YAML and schema libraries, "
                 "flint; SciPy's qmc module (all of scipy.stats, about 1 s) only when the Sobol points are not in "
                 "the point store (startup.check_2d.empty_point_store_s); the rest is the checks themselves "
                 "(symbolic derivatives and their lambdified code, sampling, the searches and the default "
                 "proof attempts)")


def _startup(result: dict, cfg: dict, size: str) -> None:
    """The shell wall time of one 2-D check with no result cache, beside its floor (interpreter, imports)."""
    repeats = STARTUP_REPEATS[size]
    args = ["check", f"catalog/{SINGLE_COST}", "--no-cache"]
    if cfg["single_budget"]:
        args += ["--budget", str(cfg["single_budget"])]
    _log(f"start-up: costcheck {' '.join(args)} (an empty point store, then best of {repeats})")
    with tempfile.TemporaryDirectory(prefix="costcheck-bench-points-") as points:
        # the first run draws SciPy's Sobol points (importing scipy.stats) and stores them, later runs read them
        env = {"COSTCHECK_POINTS_DIR": points}
        empty = _best_wall([sys.executable, "-m", "costcheck", *args], 1, env)
        wall, runs, code, cpu = _best_wall([sys.executable, "-m", "costcheck", *args], repeats, env)
    interpreter = _best_wall([sys.executable, "-c", "pass"], repeats)[0]
    imports, _, _, imports_cpu = _best_wall([sys.executable, "-c", STARTUP_IMPORTS], repeats)
    target = TARGETS["check_2d_startup_s"]
    result["startup"]["check_2d"] = {"command": "costcheck " + " ".join(args), "wall_s": wall, "runs_s": runs,
                                     "cpu_s": cpu, "exit_code": code, "interpreter_s": interpreter,
                                     "empty_point_store_s": empty[0], "empty_point_store_cpu_s": empty[3],
                                     "imports_s": imports, "imports_cpu_s": imports_cpu,
                                     "load_average": os.getloadavg()[0], "target_s": target, "ratio": wall / target}
    t = result["targets"]["check_2d_startup_s"] = {"measured": wall, "target": target, "lower_is_better": True}
    if wall > target:
        t["bottleneck"] = STARTUP_LIMIT


def _targets(result: dict, per_n: dict, skip_catalog: bool) -> None:
    """Each measured figure beside its target, with what bounds it where it falls short."""
    t = result["targets"]
    worst = {n: min(v) for n, v in per_n.items() if isinstance(n, int)}
    if 2 in worst:
        t["n2_pairs_per_s"] = {"measured": worst[2], "target": TARGETS["n2_pairs_per_s"]}
    if 3 in worst:
        t["n3_pairs_per_s"] = {"measured": worst[3], "target": TARGETS["n3_pairs_per_s"]}
    if "n3_fused_ratio" in per_n:  # the fused n = 3 kernel over today's n = 3 path, same run
        t["n3_fused_ratio"] = {"measured": min(per_n["n3_fused_ratio"]), "target": TARGETS["n3_fused_ratio"]}
    speedups = [v["speedup"] for k, v in result["naive"].items() if result["margin"][k]["n"] == 2]
    if speedups:
        t["n2_speedup_vs_naive"] = {"measured": min(speedups), "target": TARGETS["n2_speedup_vs_naive"]}
    t["certify_speedup"] = {"measured": result["certify"]["speedup"], "target": TARGETS["certify_speedup"]}
    t["single_cost_check_s"] = {"measured": result["cli"]["single_cost"]["seconds"],
                                "target": TARGETS["single_cost_check_s"], "lower_is_better": True}
    if not skip_catalog:
        cat = result["cli"]["catalog"]
        t["catalog_check_s"] = {"measured": cat["seconds"], "target": TARGETS["catalog_check_s"],
                                "lower_is_better": True}
        t["catalog_peak_mb"] = {"measured": cat["peak_mb"], "target": TARGETS["catalog_peak_mb"],
                                "lower_is_better": True}
        t["catalog_prove_check_s"] = {"measured": result["cli"]["catalog_prove"]["seconds"],
                                      "target": TARGETS["catalog_prove_check_s"], "lower_is_better": True}
        # informative: the target is for the default workers; one process shows what the workers gain
        t["catalog_one_worker_check_s"] = {"measured": result["cli"]["catalog_one_worker"]["seconds"],
                                           "target": TARGETS["catalog_check_s"], "lower_is_better": True,
                                           "informative": True}
    for name, text in LIMITS.items():
        if name in t and t[name]["measured"] < t[name]["target"]:
            t[name]["bottleneck"] = text
    for v in t.values():
        v["met"] = bool(v["measured"] <= v["target"]) if v.get("lower_is_better") else bool(v["measured"] >= v["target"])


def run(size: str = "default", backends=("sympy", "jax"), skip_catalog: bool = False,
        heldout=HELDOUT) -> dict:
    cfg = SIZES[size]
    result: dict = {"tool": "costcheck.bench", "size": size, "backends": list(backends),
                    "machine": {"cpus": os.cpu_count(), "python": platform.python_version(),
                                "numpy": np.__version__, "platform": platform.platform()},
                    "margin": {}, "naive": {}, "cli": {}, "startup": {}, "certify": {}, "heldout": {},
                    "targets": {}}
    per_n = _margins(result, cfg, size, backends)
    _certify(result, cfg)
    _command_times(result, cfg, skip_catalog)
    _startup(result, cfg, size)
    if heldout is not None:
        _heldout(result, heldout, cfg)
    _targets(result, per_n, skip_catalog)
    if size != "default":
        result["note"] = "tiny sizes: a smoke test, not comparable with the targets"
    return result


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(prog="python -m costcheck.bench", description=__doc__.splitlines()[0])
    parser.add_argument("--size", choices=sorted(SIZES), default="default")
    parser.add_argument("--backends", default="sympy,jax", help="comma-separated (default sympy,jax)")
    parser.add_argument("--skip-catalog", action="store_true", help="do not time `costcheck check catalog/`")
    parser.add_argument("--heldout", metavar="DIR", default=str(HELDOUT),
                        help="the held-out corpus folder (default tests/heldout/ of the checkout; "
                             "skipped when the folder is missing)")
    parser.add_argument("--skip-heldout", action="store_true", help="do not check the held-out corpus")
    args = parser.parse_args(argv)
    backends = tuple(b for b in args.backends.split(",") if b)
    for b in backends:
        if b not in ("sympy", "jax"):
            parser.error(f"unknown backend {b!r}")
    result = run(args.size, backends, args.skip_catalog, None if args.skip_heldout else args.heldout)
    print(json.dumps(result, indent=1))
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
