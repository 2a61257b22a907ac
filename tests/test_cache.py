"""The result cache: what its key ignores and what it does not, trusted entries only, exact replay."""

from __future__ import annotations

import json
import os
import subprocess
import sys
import textwrap
import threading
from pathlib import Path

from costcheck.run.cache import ResultCache, cache_key
from costcheck.cli import main
from costcheck.spec.reading import read_cost_data, read_yaml
from costcheck.model.verdict import Evidence, Verdict, Witness
from small_costs import line_quadratic

ROOT = Path(__file__).resolve().parent.parent

QUAD_1D = line_quadratic()

# the same content: other key order, comments, flow/block style, quoting
QUAD_1D_RESTYLED = """\
# a comment the key must ignore
domain:
  y:
    box:
      - [-1, 1]
  x: {box: [[-1, 1]]}
expect: {nondegenerate: holds, twist: holds}
expr: "(a - b)**2 / 2"
y: [b]
x: [a]
title: 'Squared distance on a line'
id: quad-1d
"""

OPTIONS = {"budget": 64, "seed": 1, "backend": "sympy", "conditions": ["twist", "nondegenerate"]}


def _write(tmp_path: Path, name: str, text: str) -> Path:
    path = tmp_path / name
    path.write_text(textwrap.dedent(text))
    return path


def _run(capsys, *argv):
    code = main([str(a) for a in argv])
    out = capsys.readouterr().out
    return code, out


def test_key_ignores_comments_whitespace_and_key_order_but_not_content_or_options():
    a, b = read_yaml(QUAD_1D), read_yaml(QUAD_1D_RESTYLED)
    assert cache_key(a, OPTIONS) == cache_key(b, OPTIONS)
    assert cache_key(a, OPTIONS) != cache_key(read_yaml(QUAD_1D.replace("/ 2", "/ 3")), OPTIONS)
    for name, value in [("budget", 65), ("seed", 2), ("backend", "jax"), ("conditions", ["twist"])]:
        assert cache_key(a, {**OPTIONS, name: value}) != cache_key(a, OPTIONS), name
    # an option the cache has never heard of (a future proof mode, say) is part of the key too
    assert cache_key(a, {**OPTIONS, "prove": True}) != cache_key(a, OPTIONS)


def _cli_outputs(capsys, path: Path, tmp_path: Path, *extra):
    junit = tmp_path / "out.xml"
    common = [path, "--budget", "64", "--only", "twist", "--only", "nondegenerate", *extra]
    code, table = _run(capsys, "check", *common, "--junit", junit)
    _, document = _run(capsys, "check", *common, "--json")
    return code, table, json.loads(document), junit.read_text()


def test_a_cached_result_renders_exactly_as_the_fresh_one(tmp_path, capsys, private_result_cache):
    path = _write(tmp_path, "quad.yaml", QUAD_1D)
    fresh = _cli_outputs(capsys, path, tmp_path, "--no-cache")
    assert not any(private_result_cache.rglob("*.json")), "--no-cache must not write entries"
    first = _cli_outputs(capsys, path, tmp_path)   # computes and stores
    entries = list(private_result_cache.rglob("*.json"))
    assert len(entries) == 1
    cached = _cli_outputs(capsys, path, tmp_path)  # answered from the cache
    assert first == cached
    # fresh and cached agree on everything but measured run times (the cost's, and a proof's own,
    # which a loaded machine can round to 0.1 s instead of 0.0)
    from catalog_snapshot import normalised
    assert normalised(fresh[2]["costs"]) == normalised(cached[2]["costs"])
    assert fresh[0] == cached[0] == 0


def test_witnesses_and_extra_details_survive_the_round_trip():
    # a made-up verdict (demo data) exercising every field, including a y-side vector and
    # evidence details such as a certificate would add
    witness = Witness(x=(0.25, -0.5), y=(1.0, 2.0), value=-3.5e-7, error_bound=1e-30, confirmation="mpmath, 50 digits",
                      vectors={"xi": (0.6, 0.8), "y_prime": (0.5, 0.5)}, vector_sides={"y_prime": "y"})
    evidence = Evidence("refuted", "a witness", samples=512, resolution=0.1,
                        details={"method": "exact", "certificate": {"intervals": [[0, 1]], "digits": 30}})
    verdict = Verdict("mtw", "fails", evidence, value=-3.5e-7, value_meaning="margin", witness=witness,
                      notes=("one", "two"))
    names = (["x1", "x2"], ["y1", "y2"])
    document = json.loads(json.dumps(verdict.to_json(*names)))
    back = Verdict.from_json("mtw", document, *names)
    assert back.to_json(*names) == verdict.to_json(*names)
    assert back.evidence.details == evidence.details
    assert back.witness.vector_sides == {"y_prime": "y"}


def _timeless(value):
    if isinstance(value, dict):
        return {k: _timeless(v) for k, v in value.items() if k != "seconds"}
    if isinstance(value, list):
        return [_timeless(v) for v in value]
    return value


def test_corrupt_truncated_or_foreign_entries_are_ignored_and_rewritten(tmp_path, capsys, private_result_cache):
    path = _write(tmp_path, "quad.yaml", QUAD_1D)
    argv = ["check", path, "--budget", "64", "--only", "twist", "--only", "nondegenerate", "--json"]
    _, good = _run(capsys, *argv)
    [entry] = list(private_result_cache.rglob("*.json"))
    original = entry.read_text()
    stored = json.loads(original)
    other_key = dict(stored, key="0" * 64)
    tampered = json.loads(original)
    tampered["verdicts"]["twist"]["verdict"] = "fails"  # its code twist-holds no longer matches
    for bad in [original[: len(original) // 2], "not json", json.dumps(other_key), json.dumps(tampered), "[]"]:
        entry.write_text(bad)
        _, again = _run(capsys, *argv)
        # recomputed, so equal but for the measured seconds of the proof attempts (proofs run by default)
        assert _timeless(json.loads(again)["costs"][0]["checks"]) == _timeless(json.loads(good)["costs"][0]["checks"])
        assert json.loads(entry.read_text())["key"] == stored["key"], "the entry was not rewritten"


def test_concurrent_writers_leave_a_whole_entry(tmp_path):
    cache = ResultCache(tmp_path / "cache")
    data = read_yaml(QUAD_1D)
    key = cache_key(data, OPTIONS)

    class _Report:  # the attributes ResultCache.put reads, with a large entry to widen any race
        cost = type("C", (), {"x_names": ("a",), "y_names": ("b",)})()
        seconds = 1.0
        options = OPTIONS
        verdicts = {f"c{i}": Verdict(f"c{i}", "holds", Evidence("sampled", "x" * 20000, samples=i)) for i in range(20)}

    errors = []

    def write_and_read():
        for _ in range(10):
            cache.put(key, _Report())
            if cache.get(key, ["a"], ["b"]) is None:
                errors.append("a reader saw a partial entry")

    threads = [threading.Thread(target=write_and_read) for _ in range(4)]
    for t in threads:
        t.start()
    for t in threads:
        t.join()
    assert not errors
    assert not [p for p in (tmp_path / "cache").rglob("*") if p.name.endswith(".tmp")]


def test_a_cached_catalog_run_imports_no_sympy_scipy_or_jax(tmp_path):
    path = _write(tmp_path, "quad.yaml", QUAD_1D)
    argv = [str(path), "--budget", "64", "--only", "twist", "--only", "nondegenerate"]
    env = dict(os.environ)
    first = subprocess.run([sys.executable, "-m", "costcheck.cli", "check", *argv], env=env, capture_output=True,
                           text=True)
    assert first.returncode == 0, first.stderr
    probe = ("import sys\nfrom costcheck.cli import main\ncode = main(sys.argv[1:])\n"
             "heavy = sorted(m for m in ('sympy', 'scipy', 'jax', 'numpy', 'matplotlib') if m in sys.modules)\n"
             "print('HEAVY', heavy)\nraise SystemExit(code)\n")
    second = subprocess.run([sys.executable, "-c", probe, "check", *argv], env=env, capture_output=True, text=True)
    assert second.returncode == 0, second.stderr
    assert "HEAVY []" in second.stdout, second.stdout
    assert second.stdout.replace("HEAVY []\n", "") == first.stdout


def test_read_cost_data_validates_the_shape(tmp_path):
    path = _write(tmp_path, "quad.yaml", QUAD_1D.replace("x: [a]", "x: [a]\nbogus: 1"))
    try:
        read_cost_data(path)
    except Exception as exc:  # noqa: BLE001 - the error type and text are what is checked
        assert type(exc).__name__ == "CostFileError" and "bogus" in str(exc)
    else:
        raise AssertionError("an unknown key passed the shape check")


def test_a_file_the_loader_refuses_is_refused_with_the_cache_on(tmp_path, capsys):
    # the key is computed before the loader reads meaning; a NaN parameter must still end
    # in the loader's one-line error (exit 2), not in a crash of the key
    path = _write(tmp_path, "nan.yaml", QUAD_1D.replace("x: [a]", "params: {p: .nan}\nx: [a]"))
    assert main(["check", str(path), "--budget", "64"]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and "params.p" in err[0], err


def test_a_sweep_reuses_the_cache_per_value(tmp_path, private_result_cache):
    from costcheck.sweep.engine import run_sweep
    from costcheck.sweep.grid import parse_axes

    # k (a - b)²/2 with k > 0: c_xy = -k ≠ 0 and c_x injective in b (elementary calculus)
    text = line_quadratic().replace("expr: (a - b)**2 / 2", "params: {k: 1}\nexpr: k * (a - b)**2 / 2")
    path = _write(tmp_path, "scaled.yaml", text)
    axes = parse_axes(["k=0.5,1,2"], {"k": 1})
    options = dict(budget=64, seed=1, conditions=["twist", "nondegenerate"], workers=1, bisect=False)
    uncached = run_sweep(str(path), axes, cache=False, **options)
    assert not any(private_result_cache.rglob("*.json"))
    first = run_sweep(str(path), axes, **options)
    entries = sorted(private_result_cache.rglob("*.json"))
    assert len(entries) == 3  # one entry per value
    written = [(p, p.stat().st_mtime_ns) for p in entries]
    again = run_sweep(str(path), axes, **options)
    assert first.results == again.results == uncached.results
    assert [(p, p.stat().st_mtime_ns) for p in entries] == written, "a cached value was recomputed"
