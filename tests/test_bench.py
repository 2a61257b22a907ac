"""The benchmark runs at its tiny size and prints one JSON object of positive figures (no timed assertions)."""

import json
import shutil
import subprocess
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent


def test_bench_small_prints_one_json_object_with_positive_figures():
    proc = subprocess.run([sys.executable, "-m", "costcheck.bench", "--size", "small", "--skip-catalog",
                           "--skip-heldout", "--backends", "sympy"], cwd=ROOT, capture_output=True, text=True, timeout=300)
    assert proc.returncode == 0, proc.stderr
    out = json.loads(proc.stdout)  # stdout is exactly one JSON document
    assert {"margin", "naive", "cli", "startup", "certify", "targets", "size", "machine"} <= set(out)
    assert out["size"] == "small"
    ns = {fig["n"] for fig in out["margin"].values()}
    assert ns == {2, 3}
    for key, fig in out["margin"].items():
        s = fig["sympy"]
        for name in ("pairs_per_s", "derivatives_pairs_per_s", "margin_pairs_per_s", "seconds"):
            assert s[name] > 0, (key, name)
        assert s["build_s"] >= 0
        assert out["naive"][key]["pairs_per_s"] > 0 and out["naive"][key]["speedup"] > 0
    single = out["cli"]["single_cost"]
    assert single["exit_code"] == 0 and single["seconds"] > 0 and single["peak_mb"] > 0
    startup = out["startup"]["check_2d"]  # the shell wall time of one 2-D check, beside its floor
    assert startup["exit_code"] == 0 and "--no-cache" in startup["command"]
    assert 0 < startup["interpreter_s"] < startup["wall_s"] == min(startup["runs_s"])
    assert startup["imports_s"] > 0 and startup["ratio"] == startup["wall_s"] / startup["target_s"]
    certify = out["certify"]
    for engine in ("arb", "vectorised"):
        assert certify[engine]["cells"] == certify["arb"]["cells"] > 0  # the same cells for both engines
        assert certify[engine]["cells_per_s"] > 0 and 0 <= certify[engine]["enclosed_fraction"] <= 1
    assert certify["speedup"] > 0
    for name in ("n2_pairs_per_s", "n3_pairs_per_s", "n2_speedup_vs_naive", "single_cost_check_s", "certify_speedup",
                 "check_2d_startup_s"):
        assert out["targets"][name]["measured"] > 0 and isinstance(out["targets"][name]["met"], bool)


def test_heldout_section_scores_a_corpus_and_skips_a_missing_one(tmp_path):
    from costcheck.bench import heldout_section

    missing = heldout_section(tmp_path / "absent")  # an installed package has no tests/heldout/
    assert "skipped" in missing and missing["target_fraction"] == 0.9
    corpus = tmp_path / "corpus"
    corpus.mkdir()
    for name in ("quartic-1d.yaml", "bilinear-twisted.yaml"):  # two quick held-out files: 6 expectations
        shutil.copy(ROOT / "tests" / "heldout" / name, corpus / name)
    section = heldout_section(corpus, budget=256)
    assert section["exit_code"] == 0 and section["files"] == 2 and section["true_verdicts"] == 6
    assert section["proved"] + section["sampled"] + section["unanswered"] + section["wrong"] == 6
    assert section["proved_fraction"] == section["proved"] / 6 and section["proved_wrong"] == 0
    assert section["line"].startswith("held-out target ") and isinstance(section["target"]["met"], bool)
