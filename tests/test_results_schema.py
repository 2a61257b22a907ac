"""The JSON Schema of the results document (``costcheck check --json``): shipped, printed, obeyed.

It is generated from the vocabulary (codes, verdict words, evidence kinds); these tests check that
the shipped file is that text, that the catalog's live document obeys it, that every outcome the
checks can reach is accepted, and that what the tool never writes (an unknown code or verdict
word, a code that does not match its verdict word) is rejected.
"""

from __future__ import annotations

import copy
import json
import subprocess
import sys
from pathlib import Path

import jsonschema
import pytest

from costcheck.model.header import CostHeader
from costcheck.model.report import CostReport
from costcheck.model.verdict import CODES, Evidence, Verdict, Witness
from costcheck.render.json_out import run_to_json
from costcheck.render.results_schema import RESULTS_SCHEMA, WORD_EVIDENCE, results_schema_json

ROOT = Path(__file__).resolve().parent.parent
SHIPPED = ROOT / "schema" / "results.schema.json"
VALIDATOR = jsonschema.Draft202012Validator(RESULTS_SCHEMA)
OPTIONS = {"seed": 1, "budget": 64, "backend": "sympy", "only": None, "prove": {"seconds": 3.0, "cells": 256},
           "levels": 48, "grid": None}


def _verdict(condition: str, word: str) -> Verdict:
    kind = WORD_EVIDENCE[word][0]
    witness = Witness((0.5,), (0.25,), -0.1, 1e-30, "mpmath at 50 and 80 digits",
                      {"y_prime": (0.75,)}, {"y_prime": "y"}) if kind == "refuted" else None
    return Verdict(condition, word, Evidence(kind, "what was computed", samples=64, resolution=0.1),
                   value=-0.1 if witness else 0.5, value_meaning="a margin", witness=witness)


def _document(verdicts: dict[str, Verdict]) -> dict:
    header = CostHeader("demo", ("x1",), ("y1",), title="a demo", expect={"twist": "holds"}, file="demo.yaml")
    return json.loads(run_to_json([CostReport(header, verdicts, 0.5)], [], OPTIONS, 0))


def _errors(document: dict) -> list[str]:
    return [error.message for error in VALIDATOR.iter_errors(document)]


def test_shipped_results_schema_equals_the_generated_one():
    # regenerate with: costcheck schema --results > schema/results.schema.json
    assert SHIPPED.read_text(encoding="utf-8") == results_schema_json()
    jsonschema.Draft202012Validator.check_schema(json.loads(results_schema_json()))


def test_schema_command_prints_the_results_schema_with_its_option():
    done = subprocess.run([sys.executable, "-m", "costcheck.cli", "schema", "--results"],
                          capture_output=True, text=True)
    assert done.returncode == 0, done.stderr
    assert done.stdout == SHIPPED.read_text(encoding="utf-8")


@pytest.mark.parametrize(("condition", "word"), sorted(CODES))
def test_every_outcome_the_checks_can_reach_is_accepted(condition, word):
    for kind in WORD_EVIDENCE[word]:
        verdict = _verdict(condition, word)
        verdict = Verdict(condition, word, Evidence(kind, "s"), witness=verdict.witness)
        assert _errors(_document({condition: verdict})) == [], (condition, word, kind)


def test_unknown_codes_verdict_words_and_mismatched_pairs_are_rejected():
    document = _document({"twist": _verdict("twist", "holds"), "mtw": _verdict("mtw", "fails")})
    assert _errors(document) == []
    changes = [
        ("twist", "code", "T100"),              # a letter-and-digits code of old
        ("twist", "code", "unlisted-outcome"),  # what only a defect writes
        ("twist", "code", "twist-fails"),       # a real code, but not this verdict's
        ("twist", "code", "mtw-holds"),         # no such outcome
        ("twist", "verdict", "strong"),         # MTW's word, not twist's
        ("twist", "verdict", "passes"),         # no such word
        ("mtw", "witness", None),               # a refutation without its witness
    ]
    for condition, key, value in changes:
        changed = copy.deepcopy(document)
        changed["costs"][0]["checks"][condition][key] = value
        assert _errors(changed), (condition, key, value)
    changed = copy.deepcopy(document)
    changed["costs"][0]["checks"]["twist"]["evidence"]["kind"] = "refuted"  # 'holds' never rests on a refutation
    assert _errors(changed)
    changed = copy.deepcopy(document)
    changed["costs"][0]["checks"]["curvature"] = changed["costs"][0]["checks"]["twist"]  # no such condition
    assert _errors(changed)


def test_catalog_snapshot_document_obeys_the_results_schema():
    # the catalog's live `check --json` document, computed once per test process and shared with
    # test_architecture's snapshot test (so this costs nothing extra in the full suite)
    from catalog_snapshot import catalog_json

    document = catalog_json()
    errors = [f"{'/'.join(map(str, e.absolute_path))}: {e.message}" for e in VALIDATOR.iter_errors(document)]
    assert errors == [], errors[:5]
    codes = {check["code"] for cost in document["costs"] for check in cost["checks"].values()}
    assert len(codes) >= 15  # the catalog reaches many outcomes: the test must not pass on an empty document
