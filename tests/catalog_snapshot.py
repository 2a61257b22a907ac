"""The catalog's ``check --json`` document with what may change between identical runs taken out.

Timings (``seconds``) differ from run to run; floating-point numbers are kept to
:data:`DIGITS` significant digits, so a machine whose BLAS rounds the last bits differently
still matches while any change of behaviour (a verdict, a code, a witness, an evidence
sentence, a value beyond rounding) does not.  ``python tests/catalog_snapshot.py`` rewrites
the stored snapshot: do that only for a change that is meant to alter results, and say why in
the commit.
"""

from __future__ import annotations

import functools
import io
import json
import sys
from contextlib import redirect_stdout
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
SNAPSHOT = Path(__file__).resolve().parent / "snapshots" / "catalog.json"
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


@functools.lru_cache(maxsize=1)
def catalog_document() -> str:
    """The normalised JSON text of ``costcheck check catalog --json`` at :data:`BUDGET`.

    Computed once per test session: the snapshot test and the tests that read the live
    catalog results (``tests/test_loeper.py``) share one run."""
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
    return json.dumps(normalised(json.loads(out.getvalue())), indent=1, ensure_ascii=False, sort_keys=True) + "\n"


if __name__ == "__main__":
    SNAPSHOT.parent.mkdir(exist_ok=True)
    SNAPSHOT.write_text(catalog_document(), encoding="utf-8")
    print(f"wrote {SNAPSHOT}", file=sys.stderr)
