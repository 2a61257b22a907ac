"""Shared by the in-process hostile families (``test_families_*.py``): run ``costcheck.cli.main``
in this process and read what it printed.

The corpus (``cases/``, ``test_hostile.py``) runs each case in a forked child with time and
memory limits; these families need files the corpus cannot hold (bytes that are not UTF-8, CSV
files beside the cost file, links, command-line options) and are cheap enough to run here.
"""

from __future__ import annotations

import json

from costcheck.cli import main

#: a 1-D cost with a mixed term, so twist and non-degeneracy have something to decide
CLEAN = """\
id: clean
x: [x1]
y: [y1]
params: {p: 1}
expr: exp(x1*y1) + p*x1
domain:
  x: {box: [[0, 1]]}
  y: {box: [[0, 1]]}
"""

#: a matching model whose source is a CSV file (nestedness reads it)
MODEL = """\
id: {id}
sense: surplus
x: [a, b]
y: [r]
expr: r * b + r**2 / 2 * a
domain:
  x: {{box: [[0, 1], [0, 1]]}}
  y: {{box: [[0, 1]]}}
data:
  source: {{points: {csv}}}
  target: {{density: 1.5 - r}}
"""

#: 60 weighted workers in the unit square (invented demo data)
GOOD_CSV = "a,b,weight\n" + "".join(f"{(i * 37 % 100) / 100},{(i * 61 % 100) / 100},1\n" for i in range(60))

QUICK = ["--budget", "64", "--quick", "--no-cache", "--quiet"]  # quiet: no progress line on a slow machine


def run(capsys, argv: list[str]) -> tuple[int, str, list[str]]:
    """Exit status, stdout and the non-blank stderr lines of one command line."""
    try:
        code = main(argv)
    except SystemExit as exc:  # argparse's usage errors end this way (status 2), as at a shell
        code = exc.code
    captured = capsys.readouterr()
    return code, captured.out, [line for line in captured.err.splitlines() if line.strip()]


def assert_refused(capsys, argv: list[str], names: str, phrase: str) -> str:
    """Exit status 2 and exactly one line, ``costcheck: ...``, naming ``names`` and saying ``phrase``."""
    code, _, lines = run(capsys, argv)
    assert code == 2, f"exit status {code}: {lines}"
    assert len(lines) == 1, f"{len(lines)} lines on stderr: {lines}"
    line = lines[0]
    assert line.startswith("costcheck: ") and "Traceback" not in line, line
    assert names in line, f"the line does not name {names!r}: {line}"
    assert phrase in line, f"{phrase!r} not in {line}"
    assert line.isprintable() and len(line) < 700, line
    return line


def verdicts(capsys, argv: list[str]) -> tuple[int, dict]:
    """Exit status and, per condition, (verdict, evidence kind, code) from ``check --json``."""
    code, out, lines = run(capsys, argv + ["--json"])
    assert code in (0, 1), f"exit status {code}: {lines}"
    document = json.loads(out)
    (cost,) = document["costs"]
    return code, {name: (c["verdict"], c["evidence"]["kind"], c["code"]) for name, c in cost["checks"].items()}
