"""Checking files in worker processes gives the answers of checking them one by one, in file order."""

from __future__ import annotations

import json
import shutil

from costcheck.cli import main
from costcheck.run.parallel import MIN_FILES_PER_WORKER, worker_count

from catalog_snapshot import ROOT, normalised

FILES = ["euclidean/sq-euclid.yaml", "euclidean/power-3.yaml", "degenerate/euclid-dist.yaml"]


def test_workers_are_asked_for_only_when_there_is_enough_to_share():
    assert worker_count(1, 100) == 1
    assert worker_count(4, 2 * MIN_FILES_PER_WORKER) == 2
    assert worker_count(4, 1) == 1
    assert worker_count(None, 0) == 1


def run_json(folder, cores: int, capsys) -> tuple[int, dict]:
    code = main(["check", str(folder), "--json", "--no-cache", "--quick", "--budget", "48",
                 "--only", "twist", "--workers", str(cores)])
    captured = capsys.readouterr()
    assert captured.err.count("nosuchfunction") == 1, captured.err
    return code, json.loads(captured.out)


def test_two_workers_answer_as_one_process_in_file_order(tmp_path, capsys):
    for name in FILES:
        shutil.copy(ROOT / "catalog" / name, tmp_path / name.replace("/", "-"))
    # a file the schema accepts and the loader refuses: the worker's refusal comes back as one
    (tmp_path / "b-refused.yaml").write_text(
        "id: refused\nx: [a]\ny: [b]\ndomain: {x: {box: [[0, 1]]}, y: {box: [[0, 1]]}}\nexpr: a*b + nosuchfunction(a)\n",
        encoding="utf-8")
    serial_code, serial = run_json(tmp_path, 1, capsys)
    parallel_code, parallel = run_json(tmp_path, 2, capsys)
    assert serial_code == parallel_code == 2  # the refused file
    assert [c["file"] for c in parallel["costs"]] == sorted(c["file"] for c in parallel["costs"])
    assert normalised(parallel) == normalised(serial)
    assert len(parallel["costs"]) == len(FILES)
