"""The JSON Schema of a cost file: the single description both the validator and editors use.

The loader validates every file against :data:`COST_FILE_SCHEMA` before it reads any
value, so a file that passes has the right shape; what the schema cannot say
(expressions that parse, names defined once, dimensions that match) the loader
checks afterwards.
"""

from __future__ import annotations

# A pattern's "$" also matches before a final newline in Python's re (which jsonschema uses), so
# "x1\n" passed as a name; "(?![\s\S])" ("no character follows") is the end of the text in
# Python and in the ECMA-262 regexes editors use alike.
END = r"(?![\s\S])"
IDENTIFIER = r"^[A-Za-z_][A-Za-z0-9_]*" + END

#: Verdict words per condition, as a cost file's ``expect`` writes them.
VERDICT_WORDS: dict[str, list[str]] = {
    "twist": ["holds", "fails"],
    "nondegenerate": ["holds", "fails"],
    "mtw": ["strong", "weak", "fails"],
    "nncc": ["holds", "fails"],
    "target_c_convex": ["holds", "fails"],
    "source_c_convex": ["holds", "fails"],
    "loeper": ["holds", "fails"],
    "index_form": ["holds", "fails", "not-applicable"],
    "nested": ["holds", "fails", "not-applicable"],
    # the conditions of a generating function G(x, y, z) (docs/conditions.md#generating-functions)
    "z_monotone": ["holds", "fails"],
    "g_twist": ["holds", "fails"],
    "g_dual_twist": ["holds", "fails"],
    "g_nondegenerate": ["holds", "fails"],
    "g_mtw": ["strong", "weak", "fails"],
}

# How many entries a file may hold where each one is parsed and kept: every helper and every
# constraint costs parsing, substitution and evaluation on each sample, and 10,000 helpers or
# 8,000 constraints in a 200 kB file did not finish within 20 s.  The catalog uses at most 2 of each.
MAX_NAMED = 100  # params, define
MAX_CONSTRAINTS = 32  # domain.where, domain.pairs

_number_or_expression = {
    "description": "a number, or a constant expression such as 'pi/2'",
    "anyOf": [{"type": "number"}, {"type": "string", "minLength": 1}],
}

_names = {
    "type": "array",
    "items": {"type": "string", "pattern": IDENTIFIER},
    "minItems": 1,
    "maxItems": 8,
    "uniqueItems": True,
}

SIDE_DOMAIN_SCHEMA = _side_domain = {
    "type": "object",
    "description": "exactly one of: box (one [low, high] per coordinate) or ball",
    "properties": {
        "box": {
            "type": "array",
            "items": {"type": "array", "items": _number_or_expression, "minItems": 2, "maxItems": 2},
            "minItems": 1,
        },
        "ball": {
            "type": "object",
            "properties": {
                "center": {"type": "array", "items": _number_or_expression, "minItems": 1},
                "radius": _number_or_expression,
            },
            "required": ["center", "radius"],
            "additionalProperties": False,
        },
    },
    "minProperties": 1,
    "maxProperties": 1,
    "additionalProperties": False,
}

_constraints = {"type": "array", "items": {"type": "string", "minLength": 1}, "maxItems": MAX_CONSTRAINTS}

DATA_SIDE_SCHEMA = _data_side = {
    "type": "object",
    "description": "exactly one of: density (an expression in this side's coordinate names, on its domain) or "
                   "points (a CSV file, path relative to the cost file: a column per coordinate, optional 'weight'), "
                   "with points optionally their layout",
    "properties": {
        "density": {
            "description": "an expression in this side's coordinate names (and the file's params), or a "
                           "number for a uniform density, e.g. '1.5 - rung' or 'exp(-x1**2 - x2**2)': finite and "
                           ">= 0 on the side's domain; it need not integrate to one (it is normalised to total "
                           "mass 1 on the domain)",
            "anyOf": [{"type": "number"}, {"type": "string", "minLength": 1}],
        },
        "points": {"type": "string", "minLength": 1, "pattern": r"\.csv" + END},
        "layout": {
            "description": "how the CSV points are laid out: 'sample' (an independent sample of the distribution) or "
                           "'grid' (the nodes of a regular grid, each weight the mass of its cell, integrated as a "
                           "midpoint rule); without it a file whose points fill a regular grid is read as a grid",
            "enum": ["sample", "grid"],
        },
    },
    "minProperties": 1,
    "maxProperties": 2,
    "not": {"required": ["density", "points"]},
    "dependentRequired": {"layout": ["points"]},
    "additionalProperties": False,
}

GENERATING_SCHEMA = {
    "type": "object",
    "description": "a generating function G(x, y, z) instead of 'expr': its expression, the name of its third "
                   "variable and that variable's range [low, high] (docs/cost-files.md#generating-functions)",
    "required": ["expr", "z", "range"],
    "additionalProperties": False,
    "properties": {
        "expr": _number_or_expression,
        "z": {"type": "string", "pattern": IDENTIFIER},
        "range": {"type": "array", "items": _number_or_expression, "minItems": 2, "maxItems": 2},
    },
}

COST_FILE_SCHEMA: dict = {
    "$schema": "https://json-schema.org/draft/2020-12/schema",
    "title": "costcheck cost file",
    "description": "One transport cost (or matching surplus), its domain and its expected verdicts.",
    "type": "object",
    "required": ["id", "x", "y", "domain"],
    "oneOf": [{"required": ["expr"]}, {"required": ["generating"]}],
    "additionalProperties": False,
    "properties": {
        "id": {"type": "string", "pattern": r"^[A-Za-z0-9][A-Za-z0-9._-]*" + END, "maxLength": 100},
        "title": {"type": "string"},
        "description": {"type": "string"},
        "sense": {"enum": ["cost", "surplus"], "default": "cost"},
        "x": _names,
        "y": _names,
        "params": {
            "type": "object",
            "maxProperties": MAX_NAMED,
            "propertyNames": {"pattern": IDENTIFIER},
            "additionalProperties": _number_or_expression,
        },
        "define": {
            "type": "object",
            "maxProperties": MAX_NAMED,
            "propertyNames": {"pattern": IDENTIFIER},
            "additionalProperties": _number_or_expression,
        },
        "expr": _number_or_expression,
        "generating": GENERATING_SCHEMA,
        "domain": {
            "type": "object",
            "required": ["x", "y"],
            "additionalProperties": False,
            "properties": {
                "x": _side_domain,
                "y": _side_domain,
                "where": _constraints,
                "pairs": _constraints,
            },
        },
        "expect": {
            "type": "object",
            "additionalProperties": False,
            "properties": {name: {"enum": words} for name, words in VERDICT_WORDS.items()},
        },
        "data": {
            "type": "object",
            "description": "the two distributions of a matching model (source on X, target on Y), for nestedness",
            "additionalProperties": False,
            "minProperties": 1,
            "properties": {"source": _data_side, "target": _data_side, "notes": {"type": "string"}},
        },
        "source": {"type": "string"},
        "notes": {"type": "string"},
        "tags": {"type": "array", "items": {"type": "string"}},
    },
}


def schema_json() -> str:
    """:data:`COST_FILE_SCHEMA` as the text of ``schema/cost-file.schema.json`` (what ``costcheck schema`` prints)."""
    import json

    return json.dumps(COST_FILE_SCHEMA, indent=2, ensure_ascii=False) + "\n"
