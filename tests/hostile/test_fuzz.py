"""Fuzzing the reader and the expression parser (Hypothesis): random YAML documents, random
edits of a valid cost file, random expression trees and random chains of helpers.

Whatever comes in, the only exception is :class:`~costcheck.errors.CostFileError` (the CLI
turns it into exit status 2 and one line), never a traceback; and every example finishes
within Hypothesis' deadline, with bounded memory.  Derandomized, so the suite is repeatable;
``COSTCHECK_FUZZ_EXAMPLES=N`` runs N random examples per test instead.
"""

from __future__ import annotations

import copy
import os
import resource

import sympy as sp
import yaml
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from costcheck.errors import CostFileError
from costcheck.spec.expression import parse_expression, parse_inequalities
from costcheck.spec.loader import build_cost
from costcheck.spec.reading import read_yaml, validate_shape

# COSTCHECK_FUZZ_EXAMPLES=5000 explores further, with a fresh random seed each run
_EXAMPLES = int(os.environ.get("COSTCHECK_FUZZ_EXAMPLES", "0"))
FUZZ = settings(max_examples=_EXAMPLES or 150, deadline=3000, derandomize=not _EXAMPLES,
                suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large])

VALID = {
    "id": "fuzz",
    "x": ["x1", "x2"],
    "y": ["y1", "y2"],
    "params": {"p": 0.5},
    "define": {"r2": "(x1 - y1)**2 + (x2 - y2)**2"},
    "expr": "r2 / 2 + p*x1*y2",
    "domain": {"x": {"box": [[-1, 1], [-1, 1]]}, "y": {"box": [[-1, 1], [-1, 1]]},
               "pairs": ["r2 >= 0.01"]},
}

_start_rss = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss

scalars = st.one_of(
    st.none(), st.booleans(), st.integers(min_value=-(10**40), max_value=10**40),
    st.floats(allow_nan=True, allow_infinity=True), st.text(max_size=30),
    st.sampled_from(["x1", "y1", "p", "r2", "sqrt(-1)", "exp(exp(exp(10)))", "x1**1000", "1/0", "log(0)",
                     "__import__('os')", "x1 <= 1", "", " ", "pi", "E", "box", "ball", "9**9**9"]),
)
keys = st.one_of(st.sampled_from(["id", "x", "y", "expr", "domain", "box", "ball", "center", "radius", "where",
                                  "pairs", "params", "define", "expect", "sense", "data", "title", "mtw"]),
                 st.text(max_size=8), st.integers(-3, 3), st.booleans())
documents = st.recursive(scalars, lambda inner: st.one_of(st.lists(inner, max_size=5),
                                                          st.dictionaries(keys, inner, max_size=5)),
                         max_leaves=25)


def _only_cost_file_errors(call) -> None:
    try:
        call()
    except CostFileError:
        pass


def _read(text: str) -> None:
    data = read_yaml(text, "fuzz.yaml")
    validate_shape(data, "fuzz.yaml")
    build_cost(data, "fuzz.yaml")


@FUZZ
@given(documents)
def test_random_documents_are_read_or_refused(document):
    try:
        text = yaml.safe_dump(document, allow_unicode=True)
    except (yaml.YAMLError, ValueError):  # a document PyYAML itself cannot write
        return
    _only_cost_file_errors(lambda: _read(text))


@FUZZ
@given(st.text(alphabet=st.sampled_from(list("{}[]:,&*!|>'\"#-?%@` \n\tabxy1=<.") + ["\x00", "\ufeff"]),
               max_size=200))
def test_random_text_is_read_or_refused(text):
    _only_cost_file_errors(lambda: _read(text))


_PATHS = [("id",), ("x",), ("y",), ("params",), ("params", "p"), ("define",), ("define", "r2"), ("expr",),
          ("domain",), ("domain", "x"), ("domain", "x", "box"), ("domain", "y"), ("domain", "pairs"),
          ("domain", "where"), ("expect",), ("sense",), ("data",)]


@FUZZ
@given(st.lists(st.tuples(st.sampled_from(_PATHS), documents), min_size=1, max_size=3))
def test_random_edits_of_a_valid_file_are_read_or_refused(edits):
    data = copy.deepcopy(VALID)
    for path, value in edits:
        node = data
        for key in path[:-1]:
            if not isinstance(node.get(key), dict):
                node[key] = {}
            node = node[key]
        node[path[-1]] = value
    try:
        text = yaml.safe_dump(data, allow_unicode=True)
    except (yaml.YAMLError, ValueError):
        return
    _only_cost_file_errors(lambda: _read(text))


_leaves = st.one_of(
    st.sampled_from(["x1", "y1", "p", "pi", "E", "zz", "__import__", "x1.real", "1e308", "0", "-1", "0.5",
                     "10**12", "1e-300"]),
    st.integers(min_value=-(10**14), max_value=10**14).map(str),
    st.floats(allow_nan=False, allow_infinity=False).map(repr),
)
_functions = ["sqrt", "exp", "log", "sin", "cos", "tan", "asin", "acos", "atanh", "acosh", "abs", "open", "eval"]


def _extend(inner):
    binary = st.tuples(inner, st.sampled_from(["+", "-", "*", "/", "**", "%", "//", "@", "<", " and ", "^"]),
                       inner).map(lambda t: f"({t[0]}){t[1]}({t[2]})")
    unary = st.tuples(st.sampled_from(["-", "+", "~", "not "]), inner).map(lambda t: f"{t[0]}({t[1]})")
    call = st.tuples(st.sampled_from(_functions), inner).map(lambda t: f"{t[0]}({t[1]})")
    return st.one_of(binary, unary, call)


expressions = st.recursive(_leaves, _extend, max_leaves=30)
NAMES = {"x1": sp.Symbol("x1", real=True), "y1": sp.Symbol("y1", real=True), "p": sp.Rational(1, 2)}


@FUZZ
@given(expressions)
def test_random_expressions_parse_or_are_refused(text):
    _only_cost_file_errors(lambda: parse_expression(text, NAMES))
    _only_cost_file_errors(lambda: parse_inequalities(f"{text} <= 1", NAMES))


_steps = st.tuples(st.sampled_from(["{a}*{b}", "{a}+{b}", "{a}**2", "sin({a})+cos({b})", "{a}/({b}+3)",
                                    "exp({a})", "{a}*{a}", "({a}+{b})**3"]),
                   st.integers(0, 100), st.integers(0, 100))


@FUZZ
@given(st.lists(_steps, min_size=1, max_size=60))
def test_random_helper_chains_load_or_are_refused(steps):
    define = {"a0": "x1 - y1"}
    for k, (form, i, j) in enumerate(steps, start=1):
        define[f"a{k}"] = form.format(a=f"a{i % k}", b=f"a{j % k}")
    data = {**copy.deepcopy(VALID), "define": define, "expr": f"a{len(steps)} + x2*y2"}
    _only_cost_file_errors(lambda: build_cost(data, "fuzz.yaml"))


def test_fuzzing_kept_memory_bounded():
    # ru_maxrss is the peak of the whole test process, so this bounds every example above (and
    # whatever ran before them: generous on purpose)
    grown_mb = (resource.getrusage(resource.RUSAGE_SELF).ru_maxrss - _start_rss) / 1024
    assert grown_mb < 1500, f"peak memory grew by {grown_mb:.0f} MB during the fuzz tests"
