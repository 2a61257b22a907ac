"""Machine-readable output: one JSON document per run.

Shape (documented in docs/usage.md and schema/results.schema.json)::

    {"tool": "costcheck", "version": "...", "options": {...},
     "costs": [{"id", "file", "title", "sense", "n", "m", "seconds",
                "checks": {"twist": {...}, "nondegenerate": {...}, "mtw": {...}, "nncc": {...}},
                "expect": {...}, "mismatches": [{"condition", "expected", "got"}]}],
     "errors": [{"file", "field", "message"}],
     "summary": {"costs", "mismatches", "errors", "exit_code"}}
"""

from __future__ import annotations

import json
import math

from .. import __version__
from ..model.report import CostReport
from ..errors import CostFileError


def clean_json(value):
    """JSON has no NaN or infinity: write them as null rather than emit invalid JSON."""
    if isinstance(value, float) and not math.isfinite(value):
        return None
    if isinstance(value, dict):
        return {k: clean_json(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [clean_json(v) for v in value]
    return value


def cost_to_json(report: CostReport) -> dict:
    return report.to_dict()


def error_to_json(error: CostFileError) -> dict:
    return {"file": error.file, "field": error.field, "message": error.message}


def run_to_json(reports: list[CostReport], errors: list[CostFileError], options: dict, exit_code: int) -> str:
    document = {
        "tool": "costcheck",
        "version": __version__,
        "options": options,
        "costs": [cost_to_json(r) for r in reports],
        "errors": [error_to_json(e) for e in errors],
        "summary": {
            "costs": len(reports),
            "mismatches": sum(len(r.mismatches) for r in reports),
            "errors": len(errors),
            "exit_code": exit_code,
        },
    }
    return json.dumps(clean_json(document), indent=2, ensure_ascii=False)
