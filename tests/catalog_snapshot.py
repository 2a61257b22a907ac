"""The catalog's verdicts, and its whole ``check --json`` document, for before/after comparisons.

Two levels, because numbers do not travel between machines.  The same code on another
machine (another CPU, so other vector instructions in the compiled kernels) rounds the last
bits differently, and the searches that start from those bits end at other witnesses: on
2026-12-03 a new machine changed 438 lines of the full document and not one verdict.  So:

- :func:`verdict_table` — per file and condition, ``"verdict code evidence-kind"``.  This is
  what the suite compares with the stored snapshot (``snapshots/catalog-verdicts.json``); it
  must hold on any machine.  ``python tests/catalog_snapshot.py`` rewrites it: do that only for
  a change that is meant to alter verdicts, and say which and why in the commit.
- :func:`catalog_document` — the full JSON with timings out and floats to :data:`DIGITS`
  digits.  ``python tests/catalog_snapshot.py --full OUT`` writes it; comparing it before and
  after a change *on one machine* shows a behaviour-preserving change to be byte-identical.
"""

from __future__ import annotations

import io
import json
import sys
from contextlib import redirect_stdout
from functools import lru_cache
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
SNAPSHOT = Path(__file__).resolve().parent / "snapshots" / "catalog-verdicts.json"
#: sampled pairs per cost: small enough for the suite, large enough to reach every code path
BUDGET = 1024
DIGITS = 9
ARGS = ["check", "catalog", "--json", "--no-cache", "--budget", str(BUDGET)]


def normalised(value):
    if isinstance(value, dict):
        return {k: normalised(v) for k, v in value.items() if k != "seconds"}
    if isinstance(value, list):
        return [normalised(v) for v in value]
    if isinstance(value, float):
        return float(f"{value:.{DIGITS - 1}e}")
    return value


@lru_cache(maxsize=1)
def catalog_json() -> dict:
    """The live ``check --json`` document of the catalog (computed once per test process; do not modify)."""
    import os

    from costcheck.cli import main

    out = io.StringIO()
    cwd = os.getcwd()
    os.chdir(ROOT)  # the document names files relative to the working folder
    try:
        with redirect_stdout(out):
            main(ARGS)
    finally:
        os.chdir(cwd)
    return json.loads(out.getvalue())


def catalog_document() -> str:
    """The normalised JSON text of ``costcheck check catalog --json`` at :data:`BUDGET`."""
    return json.dumps(normalised(catalog_json()), indent=1, ensure_ascii=False, sort_keys=True) + "\n"


def verdict_table(document: dict | None = None) -> str:
    """``{file: {condition: "verdict code evidence-kind"}}`` as JSON text, one condition a line."""
    document = catalog_json() if document is None else document
    table = {cost["file"]: {name: f'{c["verdict"]} {c["code"]} {c["evidence"]["kind"]}'
                            for name, c in cost["checks"].items()}
             for cost in document["costs"]}
    return json.dumps(table, indent=1, ensure_ascii=False, sort_keys=True) + "\n"


if __name__ == "__main__":
    if sys.argv[1:2] == ["--full"] and len(sys.argv) == 3:
        target, text = Path(sys.argv[2]), catalog_document()
    elif len(sys.argv) == 1:
        target, text = SNAPSHOT, verdict_table()
    else:
        sys.exit("usage: python tests/catalog_snapshot.py [--full OUT]")
    target.parent.mkdir(parents=True, exist_ok=True)
    target.write_text(text, encoding="utf-8")
    print(f"wrote {target}", file=sys.stderr)
