"""Hostile and broken inputs: each ends in exit status 2 and one line naming the file (or the
option) and the problem, within a time and a memory bound.

The corpus is ours (common practice of fuzzing and of the security trade: YAML alias bombs,
named pipes, links to devices, expressions that explode only once helpers are written out):

- ``cases/*.yaml`` — one broken cost file each; its first line says what it is (``# hostile
  FAMILY: ...``), its second the phrase the error must contain (``# expect: ...``);
- :func:`_make_special` — inputs a repository cannot hold (a named pipe, links to /dev/zero, a link
  loop, a folder named like a cost file, a file over the size cap), made in a temporary folder;
- :func:`_options` — option values out of range, each against a valid file.

All cases run through ``harness.py`` in one subprocess that forks a child per case, with
``alarm`` and an address-space limit (see there), so the whole corpus takes seconds.  The
bounds asserted here are ceilings against hangs and blow-ups, not speed targets.
"""

from __future__ import annotations


import json
import os
import subprocess
import sys
from pathlib import Path

import pytest

HERE = Path(__file__).parent
ROOT = HERE.parent.parent
CASES = sorted((HERE / "cases").glob("*.yaml"))

#: a case must end within this many seconds (the harness kills it at its TIME_LIMIT)
SECONDS_CEILING = 15.0
#: ... and stay below this peak resident memory
MEGABYTES_CEILING = 600.0

VALID = """\
id: valid
x: [x1]
y: [y1]
params: {p: 1, q: 2}
expr: p*(x1 - y1)**2 + q*x1*y1
domain:
  x: {box: [[0, 1]]}
  y: {box: [[0, 1]]}
"""


def _expectation(path: Path) -> str:
    lines = path.read_text(encoding="utf-8").splitlines()
    assert lines[0].startswith("# hostile ") and lines[1].startswith("# expect: "), path.name
    return lines[1][len("# expect: "):]


def _make_special(folder: Path) -> dict[str, tuple[list[str], str, str]]:
    """name -> (argv, text the line must name, phrase)."""
    valid = folder / "valid.yaml"
    valid.write_text(VALID, encoding="utf-8")
    fifo = folder / "pipe.yaml"
    os.mkfifo(fifo)
    zero = folder / "zero.yaml"
    zero.symlink_to("/dev/zero")
    null = folder / "null.yaml"
    null.symlink_to("/dev/null")
    loop = folder / "loop.yaml"
    loop.symlink_to(loop.name)
    dangling = folder / "dangling.yaml"
    dangling.symlink_to("nowhere.yaml")
    subdir = folder / "folder.yaml"
    subdir.mkdir()
    big = folder / "big.yaml"
    big.write_text(VALID + "#" * (300 * 1024) + "\n", encoding="utf-8")
    latin = folder / "latin1.yaml"
    latin.write_bytes(VALID.replace("valid", "caf\xe9").encode("latin-1"))
    nul = folder / "nul.yaml"
    nul.write_bytes(VALID.encode() + b"title: a\x00b\n")
    tree = folder / "tree"
    tree.mkdir()
    os.mkfifo(tree / "inside.yaml")
    data_pipe = folder / "pipe.csv"
    os.mkfifo(data_pipe)
    data_file = folder / "data-pipe.yaml"
    data_file.write_text(VALID.replace("id: valid", "id: datapipe") + "data:\n  source: {points: pipe.csv}\n",
                         encoding="utf-8")
    data_zero = folder / "zero.csv"
    data_zero.symlink_to("/dev/zero")
    data_zero_file = folder / "data-zero.yaml"
    data_zero_file.write_text(VALID.replace("id: valid", "id: datazero") + "data:\n  source: {points: zero.csv}\n",
                              encoding="utf-8")
    return {
        "file-named-pipe": (["check", str(fifo)], str(fifo), "named pipe"),
        "file-link-to-dev-zero": (["check", str(zero)], str(zero), "device"),
        "file-link-to-dev-null": (["check", str(null)], str(null), "device"),
        "file-link-loop": (["check", str(loop)], str(loop), "link loop"),
        "file-dangling-link": (["check", str(dangling)], str(dangling), "does not exist"),
        "file-folder-named-yaml": (["show", str(subdir)], str(subdir), "folder"),
        "file-over-the-cap": (["check", str(big)], str(big), "limited to"),
        "file-not-utf8": (["check", str(latin)], str(latin), "UTF-8"),
        "file-nul-byte": (["check", str(nul)], str(nul), "bad YAML"),
        "file-pipe-in-a-folder": (["check", str(tree)], str(tree / "inside.yaml"), "named pipe"),
        "file-missing": (["check", str(folder / "absent.yaml")], "absent.yaml", "no such file"),
        "data-csv-named-pipe": (["check", str(data_file)], str(data_pipe), "named pipe"),
        # a link to a device resolves out of the cost file's folder: refused before it is opened
        "data-csv-link-to-dev-zero": (["check", str(data_zero_file)], str(data_zero_file), "leads out of"),
        "nested-source-link-to-dev-zero": (["nested", str(valid), "--source", str(data_zero)], str(data_zero),
                                           "device"),
        "show-named-pipe": (["show", str(fifo)], str(fifo), "named pipe"),
        "tensor-link-to-dev-zero": (["tensor", str(zero)], str(zero), "device"),
        "sweep-named-pipe": (["sweep", str(fifo), "--vary", "p=0:1:3"], str(fifo), "named pipe"),
        "nested-source-named-pipe": (["nested", str(valid), "--source", str(data_pipe)], str(data_pipe), "named pipe"),
        "report-out-is-a-file": (["report", str(valid), "--out", str(big), "--budget", "64", "--only", "twist"],
                                 "--out", "cannot write the report"),
        "junit-unwritable": (["check", str(valid), "--junit", str(folder / "absent" / "j.xml"), "--budget", "64",
                              "--only", "twist"], "j.xml", "cannot write the JUnit file"),
    }


def _options(valid: str) -> dict[str, tuple[list[str], str, str]]:
    return {
        "option-seed-negative": (["check", valid, "--seed", "-1"], "--seed", "at least 0"),
        "option-seed-huge": (["check", valid, "--seed", str(2**40)], "--seed", "at most"),
        "option-budget-huge": (["check", valid, "--budget", "10000000000"], "--budget", "at most 200000"),
        "option-budget-zero": (["check", valid, "--budget", "0"], "--budget", "positive"),
        "option-prove-seconds-inf": (["check", valid, "--prove-seconds", "inf"], "--prove-seconds", "at most"),
        "option-prove-seconds-nan": (["check", valid, "--prove-seconds", "nan"], "--prove-seconds", "positive"),
        "option-prove-cells-huge": (["check", valid, "--prove-cells", "10**9"], "--prove-cells", "whole number"),
        "option-report-budget": (["report", valid, "--out", "r", "--budget", "99999999"], "--budget", "at most"),
        "option-sweep-grid-huge": (["sweep", valid, "--vary", "p=0:1:1000", "--vary", "q=0:1:1000"], "--vary",
                                   "at most 10000"),
        "option-sweep-count-huge": (["sweep", valid, "--vary", "p=0:1:100000000"], "--vary", "between 1 and"),
        "option-sweep-seed": (["sweep", valid, "--vary", "p=0:1:3", "--seed", "-5"], "--seed", "at least 0"),
        "option-sweep-tolerance-nan": (["sweep", valid, "--vary", "p=0:1:3", "--tolerance", "nan"], "--tolerance",
                                       "positive"),
        "option-sweep-workers": (["sweep", valid, "--vary", "p=0:1:3", "--workers", "100000"], "--workers", "at most"),
        "option-simplify-negative": (["tensor", valid, "--simplify-seconds", "-1"], "--simplify-seconds",
                                     "non-negative"),
        "option-nested-levels": (["nested", valid, "--levels", "0"], "--levels", "at least 2"),
    }


#: a cost whose derivatives take minutes (the fourth derivatives of a product of 39 factors):
#: with the derivative stage bounded to 3 s, every verdict is "undecided" and says why
SLOW_PRODUCT = """\
id: slow-product
x: [x1, x2]
y: [y1, y2]
expr: "{expr}"
domain:
  x: {{box: [[0, 1], [0, 1]]}}
  y: {{box: [[0, 1], [0, 1]]}}
""".format(expr=" * ".join(f"(x1 + {k}*y1 + x2*y2 + {k})" for k in range(1, 40)))

BOUNDED = {"stage-derivatives-bounded": ({"DERIVATIVE_SECONDS": 3.0}, "did not finish within 3 s")}


def _all_cases(folder: Path) -> dict[str, tuple[list[str], str, str]]:
    cases = {p.stem: (["check", str(p)], str(p), _expectation(p)) for p in CASES}
    cases.update(_make_special(folder))
    cases.update(_options(str(folder / "valid.yaml")))
    return cases


@pytest.fixture(scope="module")
def outcomes(tmp_path_factory):
    folder = tmp_path_factory.mktemp("hostile")
    cases = _all_cases(folder)
    env = {**os.environ, "PYTHONPATH": str(ROOT), "OPENBLAS_NUM_THREADS": "1", "OMP_NUM_THREADS": "1",
           "COSTCHECK_CACHE_DIR": str(folder / "cache"), "TMPDIR": str(folder)}
    request = [{"name": name, "argv": argv, "cwd": str(folder)} for name, (argv, _, _) in cases.items()]
    slow = folder / "slow-product.yaml"
    slow.write_text(SLOW_PRODUCT, encoding="utf-8")
    request += [{"name": name, "argv": ["check", str(slow), "--only", "twist", "--only", "mtw", "--verbose"], "cwd": str(folder),
                 "bounds": bounds} for name, (bounds, _) in BOUNDED.items()]
    done = subprocess.run([sys.executable, str(HERE / "harness.py")], input=json.dumps(request), env=env,
                          capture_output=True, text=True, timeout=600)
    assert done.returncode == 0, done.stderr[-3000:]
    results = {r["name"]: r for r in json.loads(done.stdout)}
    worst = max(results.values(), key=lambda r: r["seconds"])
    heaviest = max(results.values(), key=lambda r: r["peak_mb"])
    print(f"\nhostile corpus: {len(results)} cases; slowest {worst['name']} {worst['seconds']} s; "
          f"most memory {heaviest['name']} +{heaviest['peak_mb']} MB")
    return cases, results


def _names() -> list[str]:
    # the names are known without making the special files: the same dictionaries' keys
    import tempfile

    with tempfile.TemporaryDirectory() as scratch:
        return sorted(_all_cases(Path(scratch)))


@pytest.mark.parametrize("name", _names())
def test_hostile_input_is_refused_in_one_line(outcomes, name):
    cases, results = outcomes
    _, names, phrase = cases[name]
    r = results[name]
    lines = [line for line in r["stderr"].splitlines() if line.strip()]
    assert r["signal"] is None, f"{name}: ended by signal {r['signal']} after {r['seconds']} s"
    assert r["status"] == 2, f"{name}: exit status {r['status']}: {r['stderr'][-600:]}"
    assert len(lines) == 1, f"{name}: {len(lines)} lines on stderr: {r['stderr'][-600:]}"
    line = lines[0]
    assert line.startswith("costcheck: "), line
    assert "Traceback" not in r["stderr"]
    assert names in line, f"{name}: the line does not name {names!r}: {line}"
    assert phrase in line, f"{name}: {phrase!r} not in {line}"
    assert r["seconds"] < SECONDS_CEILING, f"{name}: {r['seconds']} s"
    assert r["peak_mb"] < MEGABYTES_CEILING, f"{name}: +{r['peak_mb']} MB"


def test_corpus_is_large_and_covers_every_family():
    families = {p.read_text(encoding="utf-8").split(":", 1)[0].split()[-1] for p in CASES}
    assert len(CASES) >= 50
    assert {"yaml", "schema", "expr", "params", "define", "domain", "undefined", "data"} <= families


@pytest.mark.parametrize("name", sorted(BOUNDED))
def test_a_stage_past_its_bound_gives_undecided_not_a_hang(outcomes, name):
    _, results = outcomes
    bounds, phrase = BOUNDED[name]
    r = results[name]
    assert r["signal"] is None and r["status"] == 0, r["stderr"][-600:]
    # the verbose view prints the evidence under its condition, wrapped anywhere: read the words in order
    words = " ".join(r["stdout"].split())
    assert "undecided" in r["stdout"] and phrase in words, r["stdout"][-1500:]
    assert r["seconds"] < max(bounds.values()) + SECONDS_CEILING
