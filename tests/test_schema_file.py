"""The shipped JSON Schema is the one the loader validates with, and the catalog obeys it."""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

import jsonschema
import pytest

from costcheck.spec.reading import find_cost_files, read_yaml
from costcheck.spec.schema import COST_FILE_SCHEMA, schema_json

ROOT = Path(__file__).resolve().parent.parent
SHIPPED = ROOT / "schema" / "cost-file.schema.json"


def test_shipped_schema_equals_the_generated_one():
    # regenerate with: costcheck schema > schema/cost-file.schema.json
    assert SHIPPED.read_text(encoding="utf-8") == schema_json()
    assert json.loads(SHIPPED.read_text(encoding="utf-8")) == COST_FILE_SCHEMA


def test_schema_command_prints_it():
    done = subprocess.run([sys.executable, "-m", "costcheck.cli", "schema"], capture_output=True, text=True)
    assert done.returncode == 0, done.stderr
    assert done.stdout == SHIPPED.read_text(encoding="utf-8")


def test_shipped_schema_is_a_valid_draft_2020_12_schema():
    # the meta-schema check of the jsonschema library (JSON Schema draft 2020-12)
    jsonschema.Draft202012Validator.check_schema(json.loads(SHIPPED.read_text(encoding="utf-8")))


@pytest.mark.parametrize("path", find_cost_files([ROOT / "catalog"]), ids=lambda p: p.name)
def test_every_catalog_file_validates_against_the_shipped_schema(path):
    schema = json.loads(SHIPPED.read_text(encoding="utf-8"))
    jsonschema.Draft202012Validator(schema).validate(read_yaml(path.read_text(encoding="utf-8"), str(path)))


def test_the_schema_rejects_what_the_loader_rejects():
    schema = json.loads(SHIPPED.read_text(encoding="utf-8"))
    bad = {"id": "a", "x": ["x"], "y": ["y"], "expr": "x*y", "domain": {"x": {"box": [[0, 1]]}, "y": {"box": [[0, 1]]}},
           "expect": {"mtw": "holds"}}  # MTW's words are strong | weak | fails
    assert list(jsonschema.Draft202012Validator(schema).iter_errors(bad))
