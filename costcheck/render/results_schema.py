"""The JSON Schema of a results document (``costcheck check --json``), built from the vocabulary itself.

The codes, their meanings, the verdict words and the evidence kinds come from
:mod:`costcheck.model.verdict`, :mod:`costcheck.spec.schema` and the condition registry, so the
schema cannot drift from what the tool emits; ``schema/results.schema.json`` is this text
(``costcheck schema --results`` prints it, ``tests/test_results_schema.py`` keeps the two equal and
validates the catalog's live document against it).  A check's ``code`` must be one of the codes
its condition can reach, and must match its verdict word; ``unlisted-outcome`` (what a defect of
the tool would write) is not accepted, so a validator flags it.
"""

from __future__ import annotations

from ..conditions import REGISTRY
from ..defaults import MAX_BUDGET, MAX_GRID, MAX_LEVELS, MAX_SEED
from ..model.verdict import CODE_MEANINGS, CODES, EVIDENCE_KINDS
from ..spec.schema import VERDICT_WORDS

#: each verdict word in plain words (docs/codes.md and docs/evidence.md say more)
WORD_MEANINGS: dict[str, str] = {
    "holds": "the condition holds, on the evidence given (proved: a certificate over the whole domain; "
             "sampled: no counterexample among the samples, which is not a proof)",
    "fails": "the condition fails: refuted at a certified witness, or sampled when the failure was seen in high "
             "precision but could not be certified (the summary then says NOT certified)",
    "strong": "MTW strong (A3s): S(ξ, η) > 0 for every ξ ⊥ η, on the evidence given (proved or sampled)",
    "weak": "MTW weak (A3w) and not strong: S(ξ, η) ≥ 0 for ξ ⊥ η with minimum 0 within the tolerance, on the "
            "evidence given (proved or sampled)",
    "not-applicable": "the condition is not defined for this cost (e.g. MTW when n ≠ m); nothing was decided",
    "undecided": "the check ran but could not reach a verdict, and says why; an honest answer, not an error",
}

#: the evidence kinds a verdict word can rest on (a 'holds' on samples is never 'proved')
WORD_EVIDENCE: dict[str, list[str]] = {
    "holds": ["proved", "sampled"], "strong": ["proved", "sampled"], "weak": ["proved", "sampled"],
    "fails": ["refuted", "sampled"], "not-applicable": ["not_applicable"], "undecided": ["undecided"],
}

KIND_MEANINGS: dict[str, str] = {
    "proved": "a certificate over the whole declared domain (ball or interval arithmetic, an exact identity or an "
              "exact symbolic index); the certificate is in 'proof'",
    "refuted": "a witness re-evaluated in high precision and certified (or shown exactly); it is in 'witness', "
               "its enclosure in 'enclosure'",
    "sampled": "no counterexample among 'samples' points at the stated 'resolution' (or a failure that could not be "
               "certified): evidence, not proof",
    "not_applicable": "the condition is not defined for this cost; the summary gives the reason",
    "undecided": "the check ran but could not decide; the summary says why",
}

_NUMBER_OR_NULL = {"type": ["number", "null"]}
_NAMED_COORDINATES = {
    "type": "object", "minProperties": 1,
    "description": "coordinates keyed by the cost file's own coordinate names (x's names or y's)",
    "additionalProperties": {"type": "number"},
}


def _words_of(condition: str) -> list[str]:
    return [word for (name, word) in CODES if name == condition]


def _evidence() -> dict:
    return {
        "type": "object",
        "description": "how the verdict was established: its kind, one sentence of what was computed, and the "
                       "check's own numbers (further keys, named by the check; see docs/evidence.md)",
        "required": ["kind", "summary"],
        "properties": {
            "kind": {"description": "the evidence kind (docs/evidence.md)",
                     "oneOf": [{"const": k, "description": KIND_MEANINGS[k]} for k in EVIDENCE_KINDS]},
            "summary": {"type": "string", "description": "what was computed, in one sentence"},
            "samples": {"type": "integer", "minimum": 0, "description": "points (or pairs, segments) examined"},
            "resolution": {"type": ["number", "null"], "description": "a typical spacing of the samples"},
            "proof": {"type": "object", "description": "the certificate of a proved verdict: method, coverage, "
                                                       "cells, lower_bound, seconds …"},
            "proof_attempt": {"type": "object", "description": "an unfinished proof attempt: the same fields, "
                                                               "coverage below one, the cells left undecided"},
            "enclosure": {"type": "object", "description": "a refuted verdict's certificate: an interval "
                                                           "(interval) that provably contains the quantity at the "
                                                           "witness and excludes 0, and what was enclosed (text)"},
            "certification": {"type": "string", "description": "why a failure could not be certified"},
        },
        "additionalProperties": True,
    }


def _witness() -> dict:
    return {
        "description": "a point a reader can re-check (null when the verdict rests on none); besides the fixed "
                       "keys, each further key is one of the condition's vectors (y_prime, xi, eta, y_exit, …), "
                       "keyed by coordinate names",
        "oneOf": [{"type": "null"}, {
            "type": "object",
            "required": ["x", "y", "value", "error_bound", "confirmation"],
            "properties": {
                "x": {"$ref": "#/$defs/coordinates"}, "y": {"$ref": "#/$defs/coordinates"},
                "value": {**_NUMBER_OR_NULL, "description": "the condition's quantity at the witness"},
                "error_bound": {**_NUMBER_OR_NULL, "description": "a bound on the error of 'value' from the "
                                                                  "confirming evaluation (null: none)"},
                "confirmation": {"type": "string", "description": "how the witness was confirmed"},
                "nondegeneracy": {"type": "object", "description": "a certified lower bound on how far D²_xy c "
                                                                   "is from singular at the witness"},
            },
            "additionalProperties": {"$ref": "#/$defs/coordinates"},
        }],
    }


def _pairing(condition: str, word: str) -> dict:
    """If the verdict is ``word``: its one code, the evidence kinds it may rest on, and a witness when refuted."""
    code = CODES[(condition, word)]
    return {"if": {"properties": {"verdict": {"const": word}}},
            "then": {"properties": {"code": {"const": code},
                                    "docs": {"properties": {"code": {"const": f"docs/codes.md#{code}"}}},
                                    "evidence": {"properties": {"kind": {"enum": WORD_EVIDENCE[word]}}}}}}


def _check_fields() -> dict:
    """What every condition's verdict carries; :func:`_check` narrows verdict, code and docs to one condition."""
    return {
        "type": "object",
        "required": ["verdict", "code", "code_meaning", "docs", "evidence", "value", "value_meaning", "witness",
                     "notes"],
        "properties": {
            "verdict": {"$ref": "#/$defs/verdict_word"},
            "code": {"type": "string", "description": "the outcome's stable code: the condition and the verdict "
                                                      "word joined by a hyphen (docs/codes.md)"},
            "code_meaning": {"type": "string", "description": "the code in plain words (docs/codes.md opens the "
                                                              "code's entry with it)"},
            "docs": {"type": "object", "required": ["condition", "code"], "additionalProperties": False,
                     "description": "where the condition and the code are explained (repository paths with anchors)",
                     "properties": {"condition": {"type": "string"}, "code": {"type": "string"}}},
            "evidence": {"$ref": "#/$defs/evidence"},
            "value": {**_NUMBER_OR_NULL, "description": "the worst value: the smallest margin or largest violation "
                                                        "found, scale-free (docs/evidence.md#margins); null: none"},
            "value_meaning": {"type": "string", "description": "what 'value' measures, and which side is good"},
            "witness": {"$ref": "#/$defs/witness"},
            "notes": {"type": "array", "items": {"type": "string"}, "description": "further remarks of the check"},
            "scope": {"type": "object", "required": ["part", "text"],
                      "description": "present when the verdict was decided on part of the domain only (e.g. the "
                                     "non-degenerate part, where MTW and NNCC are defined)",
                      "properties": {"part": {"type": "string"}, "text": {"type": "string"}}},
        },
        "allOf": [{"if": {"properties": {"evidence": {"properties": {"kind": {"const": "refuted"}}}}},
                   "then": {"properties": {"witness": {"type": "object"}}}}],
    }


def _check(condition: str) -> dict:
    words = _words_of(condition)
    codes = [CODES[(condition, w)] for w in words]
    return {
        "description": f"the verdict of condition {condition} (docs/conditions.md#{condition})",
        "$ref": "#/$defs/check",
        "properties": {
            "verdict": {"enum": words},
            "code": {"oneOf": [{"const": c, "description": CODE_MEANINGS[c]} for c in codes]},
            "docs": {"properties": {"condition": {"const": f"docs/conditions.md#{condition}"}}},
        },
        "allOf": [_pairing(condition, w) for w in words],
        "unevaluatedProperties": False,
    }


def _options() -> dict:
    return {
        "type": "object",
        "description": "the options the checks ran with",
        "required": ["seed", "budget", "backend", "only", "prove"],
        "properties": {
            "seed": {"type": "integer", "minimum": 0, "maximum": MAX_SEED, "description": "random seed"},
            "budget": {"type": "integer", "minimum": 1, "maximum": MAX_BUDGET,
                       "description": "sampled (x, y) pairs per cost"},
            "backend": {"enum": ["sympy", "jax"], "description": "the derivative backend"},
            "only": {"description": "the conditions run (null: all)",
                     "oneOf": [{"type": "null"}, {"type": "array", "items": {"enum": list(REGISTRY)}}]},
            "prove": {"description": "each condition's proof budget (null: --quick, no proof attempted)",
                      "oneOf": [{"type": "null"}, {
                          "type": "object", "required": ["seconds", "cells"], "additionalProperties": False,
                          "properties": {"seconds": {"type": "number", "minimum": 0},
                                         "cells": {"type": "integer", "minimum": 1}}}]},
            "levels": {"type": "integer", "minimum": 2, "maximum": MAX_LEVELS,
                       "description": "nestedness: levels of y on which k(y) is computed"},
            "grid": {"description": "nestedness: midpoint-rule cells per axis for a source density (null: default)",
                     "oneOf": [{"type": "null"}, {"type": "integer", "minimum": 2, "maximum": MAX_GRID}]},
        },
        "additionalProperties": False,
    }


def _cost() -> dict:
    every_word = sorted({w for (_, w) in CODES})
    return {
        "type": "object",
        "description": "one cost file's results",
        "required": ["id", "file", "title", "sense", "n", "m", "seconds", "checks", "expect", "mismatches"],
        "properties": {
            "id": {"type": "string", "description": "the cost's id"},
            "file": {"type": "string", "description": "the cost file, as named on the command line"},
            "title": {"type": "string"},
            "sense": {"enum": ["cost", "surplus"],
                      "description": "as the file declares it; a surplus s is checked as the cost c = -s"},
            "n": {"type": "integer", "minimum": 1, "description": "dimension of x"},
            "m": {"type": "integer", "minimum": 1,
                  "description": "dimension of y; for a generating function, of the target side (y, z)"},
            "generating": {"type": "object", "required": ["z"], "additionalProperties": False,
                           "description": "present for a generating function G(x, y, z) (a file with 'generating:'): "
                                          "its verdicts are those of its own conditions, and z ends every y witness",
                           "properties": {"z": {"type": "string", "description": "the name of the third variable"}}},
            "seconds": {"type": "number", "minimum": 0, "description": "time the checks took"},
            "checks": {"type": "object", "description": "one verdict per condition run, in the order reports show",
                       "properties": {name: {"$ref": f"#/$defs/{name}"} for name in REGISTRY},
                       "additionalProperties": False},
            "expect": {"type": "object", "description": "the verdicts the file expects", "additionalProperties": False,
                       "properties": {name: {"enum": words} for name, words in VERDICT_WORDS.items()}},
            "mismatches": {
                "type": "array", "description": "expectations not met (each makes the exit status 1)",
                "items": {"type": "object", "required": ["condition", "expected", "got"], "additionalProperties": False,
                          "properties": {"condition": {"enum": list(REGISTRY)},
                                         "expected": {"enum": every_word},
                                         "got": {"enum": every_word + ["not run"]}}}},
        },
        "additionalProperties": False,
    }


def _counted(what: str) -> dict:
    return {"type": "integer", "minimum": 0, "description": what}


RESULTS_SCHEMA: dict = {
    "$schema": "https://json-schema.org/draft/2020-12/schema",
    "title": "costcheck results",
    "description": "The document 'costcheck check --json' prints: the options, each cost's verdicts with their "
                   "evidence, the files that could not be read, and a summary.",
    "type": "object",
    "required": ["tool", "version", "options", "costs", "errors", "summary"],
    "properties": {
        "tool": {"const": "costcheck"},
        "version": {"type": "string", "description": "the version of costcheck that wrote the document"},
        "options": _options(),
        "costs": {"type": "array", "items": {"$ref": "#/$defs/cost"}, "description": "in the order of the files"},
        "errors": {"type": "array", "description": "files that could not be read (each makes the exit status 2)",
                   "items": {"type": "object", "required": ["file", "field", "message"], "additionalProperties": False,
                             "properties": {"file": {"type": ["string", "null"]},
                                            "field": {"type": ["string", "null"],
                                                      "description": "the field at fault (null: the file as a whole)"},
                                            "message": {"type": "string"}}}},
        "summary": {"type": "object", "required": ["costs", "mismatches", "errors", "exit_code"],
                    "additionalProperties": False,
                    "properties": {"costs": _counted("costs checked"), "mismatches": _counted("expectations not met"),
                                   "errors": _counted("files that could not be read"),
                                   "exit_code": {"enum": [0, 1, 2, 3], "description": "0 all fine; 1 an expectation "
                                                 "not met; 2 bad input; 3 an internal error"}}},
    },
    "additionalProperties": False,
    "$defs": {"cost": _cost(), "check": _check_fields(), "verdict_word": {
                  "description": "the verdict word (docs/codes.md); each condition allows its own",
                  "oneOf": [{"const": w, "description": meaning} for w, meaning in WORD_MEANINGS.items()]},
              "evidence": _evidence(), "witness": _witness(), "coordinates": _NAMED_COORDINATES,
              **{name: _check(name) for name in REGISTRY}},
}


def results_schema_json() -> str:
    """:data:`RESULTS_SCHEMA` as the text of ``schema/results.schema.json`` (``costcheck schema --results``)."""
    import json

    return json.dumps(RESULTS_SCHEMA, indent=2, ensure_ascii=False) + "\n"
