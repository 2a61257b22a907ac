"""The memory bound of a costcheck process (run.memory): an allocation past it fails, and a file
whose check runs out of it is one line naming the file, exit 2 — not a machine driven into swap."""

from __future__ import annotations

import subprocess
import sys

import pytest

from costcheck.cli import main
from costcheck.run import batch

from catalog_snapshot import ROOT

resource = pytest.importorskip("resource")


def test_an_allocation_past_the_bound_fails_in_this_process_only():
    # a fresh interpreter (the bound is for the whole process): 200 MB, then 400 MB asked for
    program = ("from costcheck.run.memory import bound_memory\n"
               "print(bound_memory(200))\n"
               "try:\n    bytearray(400 * 2**20)\nexcept MemoryError:\n    print('refused')\n")
    done = subprocess.run([sys.executable, "-c", program], capture_output=True, text=True, timeout=60,
                          cwd=ROOT)
    assert done.stdout.split() == ["200", "refused"], done.stderr


def test_the_bound_is_never_raised_above_what_the_process_was_given():
    program = ("import resource\nfrom costcheck.run.memory import bound_memory\n"
               "resource.setrlimit(resource.RLIMIT_DATA, (100 * 2**20, resource.RLIM_INFINITY))\n"
               "print(bound_memory(8192))\n")
    done = subprocess.run([sys.executable, "-c", program], capture_output=True, text=True, timeout=60,
                          cwd=ROOT)
    assert done.stdout.split() == ["100"], done.stderr


def test_a_check_out_of_memory_is_one_line_naming_the_file(monkeypatch, capsys):
    def exhausted(*args, **kwargs):
        raise MemoryError

    monkeypatch.setattr(batch, "build_full_cost", exhausted)
    path = str(ROOT / "catalog" / "euclidean" / "sq-euclid.yaml")
    code = main(["check", path, "--no-cache", "--quick", "--workers", "1"])
    err = capsys.readouterr().err.strip().splitlines()
    assert code == 2
    assert len(err) == 1 and path in err[0] and "more memory than the bound" in err[0]
