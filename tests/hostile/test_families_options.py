"""Bad options on every command: exit status 2 and one line naming the option (or the path it
points to) and what is wrong, before any long work starts.  The corpus's ``_options`` covers
values out of range; these are the values that are not numbers at all, unknown words, and
places that cannot be read or written."""

from __future__ import annotations

import os
from pathlib import Path

import pytest
from families import CLEAN, GOOD_CSV, MODEL, assert_refused

#: somewhere nobody can create a file, even root (the tests may run as root, so chmod is no test)
NOWHERE = "/proc/costcheck-cannot-write-here"


@pytest.fixture
def files(tmp_path):
    clean = tmp_path / "clean.yaml"
    clean.write_text(CLEAN, encoding="utf-8")
    (tmp_path / "w.csv").write_text(GOOD_CSV, encoding="utf-8")
    model = tmp_path / "model.yaml"
    model.write_text(MODEL.format(id="model", csv="w.csv"), encoding="utf-8")
    (tmp_path / "empty").mkdir()
    return {"clean": str(clean), "model": str(model), "csv": str(tmp_path / "w.csv"),
            "empty": str(tmp_path / "empty"), "folder": str(tmp_path)}


FAST = ["--budget", "64", "--only", "twist", "--quick", "--no-cache", "--quiet"]  # quiet: no progress line on a slow machine

CASES = {  # name -> (argv with {placeholders}, text the line names, phrase)
    "budget-negative": (["check", "{clean}", "--budget", "-1"], "--budget", "expected a positive number"),
    "budget-text": (["check", "{clean}", "--budget", "abc"], "--budget", "expected a whole number, got 'abc'"),
    "budget-fraction": (["report", "{clean}", "--out", "r", "--budget", "1.5"], "--budget", "expected a whole number"),
    "seed-text": (["check", "{clean}", "--seed", "abc"], "--seed", "expected a whole number"),
    "seed-fraction": (["sweep", "{clean}", "--vary", "p=0:1:2", "--seed", "1.5"], "--seed", "expected a whole number"),
    "prove-with-a-value": (["check", "{clean}", "--prove", "yes"], "yes", "unrecognized arguments"),
    "prove-and-quick": (["check", "{clean}", "--prove", "--quick"], "--quick", "not allowed with argument --prove"),
    "prove-seconds-negative": (["check", "{clean}", "--prove-seconds", "-1"], "--prove-seconds", "positive"),
    "only-unknown-condition": (["check", "{clean}", "--only", "mtv"], "--only", "invalid choice: 'mtv'"),
    "backend-unknown": (["check", "{clean}", "--backend", "torch"], "--backend", "invalid choice: 'torch'"),
    "unknown-command": (["verify", "{clean}"], "COMMAND", "invalid choice: 'verify'"),
    "check-without-paths": (["check"], "PATH", "required"),
    "report-without-out": (["report", "{clean}"], "--out", "required"),
    "folder-without-cost-files": (["check", "{empty}"], "{empty}", "no cost files"),
    "missing-file": (["check", "{folder}/absent.yaml"], "absent.yaml", "no such file"),
    "a-csv-as-the-cost-file": (["show", "{csv}"], "{csv}", "must be a YAML mapping"),
    "report-out-unwritable": (["report", "{clean}", "--out", NOWHERE, *FAST], NOWHERE, "cannot write the report"),
    "junit-into-a-folder": (["check", "{clean}", "--junit", "{empty}", *FAST], "{empty}", "cannot write the JUnit file"),
    "plots-into-a-file": (["check", "{clean}", "--plots", "{csv}", *FAST], "{csv}", "cannot write pictures"),
    "nested-out-unwritable": (["nested", "{model}", "--out", NOWHERE], "--out", "cannot write into"),
    "nested-levels-negative": (["nested", "{model}", "--levels", "-3"], "--levels", "at least 2"),
    "nested-levels-text": (["nested", "{model}", "--levels", "many"], "--levels", "expected a whole number"),
    "nested-at-missing": (["nested", "{model}", "--at", "{folder}/absent.csv"], "absent.csv", "no such file"),
    "nested-source-is-yaml": (["nested", "{model}", "--source", "{clean}"], "{clean}", "row 1: unknown column"),
    "nested-without-data": (["nested", "{clean}"], "{clean}", "field 'data'"),
    "sweep-value-text": (["sweep", "{clean}", "--vary", "p=abc"], "--vary", "'abc' is not a number"),
    "sweep-unknown-parameter": (["sweep", "{clean}", "--vary", "zz=0:1:3"], "--vary", "no parameter named 'zz'"),
    "sweep-coordinate-as-parameter": (["sweep", "{clean}", "--vary", "x1=0:1:3"], "--vary", "no parameter named 'x1'"),
    "sweep-without-equals": (["sweep", "{clean}", "--vary", "p"], "--vary", "expected NAME=start:stop:count"),
    "sweep-no-values": (["sweep", "{clean}", "--vary", "p="], "--vary", "no values after '='"),
    "sweep-nan-start": (["sweep", "{clean}", "--vary", "p=nan:1:3"], "--vary", "not a finite number"),
    "sweep-infinite-stop": (["sweep", "{clean}", "--vary", "p=0:inf:3"], "--vary", "not a finite number"),
    "sweep-zero-count": (["sweep", "{clean}", "--vary", "p=0:1:0"], "--vary", "between 1 and"),
    "sweep-same-parameter-twice": (["sweep", "{clean}", "--vary", "p=0:1:2", "--vary", "p=0:1:2"], "--vary",
                                   "given twice"),
    "tensor-simplify-text": (["tensor", "{clean}", "--simplify-seconds", "abc"], "--simplify-seconds",
                             "expected a number"),
    "explain-unknown": (["explain", "mtv"], "'mtv'", "nothing to explain"),
    "new-unwritable": (["new", NOWHERE + "/x"], NOWHERE, "cannot write"),
    "new-over-an-existing-file": (["new", "{clean}"], "{clean}", "already exists"),
}


@pytest.mark.parametrize("name", sorted(CASES))
def test_a_bad_option_is_one_line_naming_it(capsys, files, name):
    argv, names, phrase = CASES[name]
    assert_refused(capsys, [a.format(**files) for a in argv], names.format(**files), phrase)


def test_an_unreachable_scheduler_is_refused_in_bounded_time(capsys, files, monkeypatch):
    pytest.importorskip("dask.distributed")
    import costcheck.sweep.engine as engine

    monkeypatch.setattr(engine, "SCHEDULER_CONNECT_SECONDS", 0.5)  # the default, 5 s, is for people
    assert_refused(capsys, ["sweep", files["clean"], "--vary", "p=0:1:2", "--scheduler", "tcp://127.0.0.1:9",
                            "--budget", "64", "--only", "twist", "--no-bisect", "--quiet"],
                   "--scheduler 'tcp://127.0.0.1:9'", "cannot connect")


@pytest.mark.parametrize("argv, pipe, option", [
    (["check", "{clean}", "--junit", "{folder}/out/j.xml", *FAST], "j.xml", "--junit"),
    (["report", "{clean}", "--out", "{folder}/out", *FAST], "report.md", "--out"),
    (["nested", "{model}", "--out", "{folder}/out"], "nested.json", "--out"),
])
def test_an_output_that_is_a_pipe_nobody_reads_is_refused_not_waited_on(capsys, files, argv, pipe, option):
    out = Path(files["folder"]) / "out"
    out.mkdir()
    os.mkfifo(out / pipe)  # opening it to write would block until a reader comes: for ever
    assert_refused(capsys, [a.format(**files) for a in argv], str(out / pipe), f"nothing reads; writing to it "
                   f"would wait for ever (option {option})")
