"""The safe expression language (costcheck.spec.expression), alone and as a cost file sees it.

Each rejection kind is checked twice: the parser raises ExpressionError with a
sentence saying what is wrong, and a cost file carrying the same text is refused
with an error naming the file and the field the text sits in.
"""

from __future__ import annotations

import copy
import time

import numpy as np
import pytest
import sympy as sp
import yaml

from costcheck.errors import CostFileError, ExpressionError
from costcheck.model.domain import Inequality
from costcheck.spec.expression import (
    CONSTANTS,
    FUNCTIONS,
    MAX_DEPTH,
    MAX_LENGTH,
    parse_expression,
    parse_inequalities,
    referenced_names,
)
from costcheck.spec.loader import load_cost

x1, x2, y1, y2 = (sp.Symbol(n, real=True) for n in ("x1", "x2", "y1", "y2"))
NAMES = {"x1": x1, "x2": x2, "y1": y1, "y2": y2}

BASE = {
    "id": "sq-euclid",
    "title": "Squared Euclidean distance",
    "sense": "cost",
    "x": ["x1", "x2"],
    "y": ["y1", "y2"],
    "params": {"p": 0.5},
    "define": {"r2": "(x1 - y1)**2 + (x2 - y2)**2"},
    "expr": "r2 / 2",
    "domain": {
        "x": {"box": [[-1, 1], [-1, 1]]},
        "y": {"box": [[-1, 1], [-1, 1]]},
        "where": ["x1 + x2 <= 1"],
        "pairs": ["r2 >= 0.01"],
    },
    "expect": {"twist": "holds", "nondegenerate": "holds", "mtw": "weak", "nncc": "holds"},
    "source": "test",
}


def _set(data: dict, dotted: str, value) -> None:
    """Set e.g. 'domain.x.box[0][1]' or 'define.r2' in a nested dict."""
    target = data
    parts = []
    for piece in dotted.split("."):
        name, *indices = piece.replace("]", "").split("[")
        parts.append(name)
        parts.extend(int(i) for i in indices)
    for key in parts[:-1]:
        target = target[key]
    target[parts[-1]] = value


def write_cost(tmp_path, changes: dict | None = None, name: str = "cost.yaml"):
    data = copy.deepcopy(BASE)
    for dotted, value in (changes or {}).items():
        _set(data, dotted, value)
    path = tmp_path / name
    path.write_text(yaml.safe_dump(data, sort_keys=False), encoding="utf-8")
    return path


def file_rejects(tmp_path, changes: dict, field: str, *phrases: str) -> CostFileError:
    """Load a variant of BASE; it must be refused naming the file, ``field`` and each phrase."""
    path = write_cost(tmp_path, changes)
    with pytest.raises(CostFileError) as info:
        load_cost(path)
    err = info.value
    text = str(err)
    assert err.file == str(path)
    assert str(path) in text
    assert err.field == field
    assert f"field '{field}'" in text
    for phrase in phrases:
        assert phrase in text, f"{phrase!r} not in {text!r}"
    return err


def parser_rejects(text, *phrases: str, names=NAMES) -> ExpressionError:
    with pytest.raises(ExpressionError) as info:
        parse_expression(text, names)
    for phrase in phrases:
        assert phrase in str(info.value), f"{phrase!r} not in {str(info.value)!r}"
    return info.value


def test_base_file_is_valid(tmp_path):
    # guards every rejection test below: only the change each one makes can be the cause
    cost = load_cost(write_cost(tmp_path))
    assert sp.simplify(cost.expr - ((x1 - y1) ** 2 + (x2 - y2) ** 2) / 2) == 0


# --------------------------------------------------------------------------- what the language builds

def test_arithmetic_builds_the_expected_sympy_expression():
    got = parse_expression("x1**2 - 3*x1/y1 + -x2 + +y2 - (x1 - y1)", NAMES)
    assert got == x1**2 - 3 * x1 / y1 - x2 + y2 - (x1 - y1)


def test_decimal_literals_are_exact_rationals():
    assert parse_expression("0.1", {}) == sp.Rational(1, 10)
    assert parse_expression("2.5e-3", {}) == sp.Rational(1, 400)
    assert parse_expression(0.5, {}) == sp.Rational(1, 2)
    assert parse_expression(7, {}) == sp.Integer(7)


def test_numpy_float_is_read_as_its_value():
    # repr(np.float64(0.5)) is 'np.float64(0.5)' in numpy 2: it must not be parsed as a call
    assert parse_expression(np.float64(0.25), {}) == sp.Rational(1, 4)


@pytest.mark.parametrize("name", sorted(FUNCTIONS))
def test_every_allowed_function_maps_to_sympy(name):
    assert parse_expression(f"{name}(x1 + 1)", NAMES) == FUNCTIONS[name](x1 + 1)


def test_constants_pi_and_e():
    assert parse_expression("pi * x1 + E", NAMES) == sp.pi * x1 + sp.E
    assert parse_expression("cos(pi)", {}) == -1
    assert parse_expression("log(E**2)", {}) == 2
    assert set(CONSTANTS) == {"pi", "E"}


def test_names_resolve_to_their_values():
    assert parse_expression("p * x1", {"p": sp.Rational(1, 2), "x1": x1}) == x1 / 2


def test_chained_comparison_gives_two_inequalities():
    ineqs = parse_inequalities("0 < x1 < 1", NAMES)
    assert ineqs == [
        Inequality(g=x1, strict=True, text="0 < x1 < 1"),
        Inequality(g=1 - x1, strict=True, text="0 < x1 < 1"),
    ]
    ge = parse_inequalities("1 >= x1 + y1 >= -1", NAMES)
    assert [(i.g, i.strict) for i in ge] == [(1 - x1 - y1, False), (x1 + y1 + 1, False)]


def test_referenced_names():
    assert referenced_names("sin(a) + b * pi - a") == {"sin", "a", "b", "pi"}


# --------------------------------------------------------------------------- rejections, one kind per test

def test_unknown_name(tmp_path):
    parser_rejects("x1 + q", "unknown name 'q'")
    file_rejects(tmp_path, {"expr": "r2 + q"}, "expr", "unknown name 'q'")
    file_rejects(tmp_path, {"define.r2": "x1 - zz"}, "define.r2", "unknown name 'zz'")
    # a domain bound may use constants and parameters, not coordinates
    file_rejects(tmp_path, {"domain.x.box[0][1]": "x1"}, "domain.x.box[0]", "unknown name 'x1'")


def test_function_name_used_without_call(tmp_path):
    parser_rejects("sin * x1", "'sin' is a function")
    file_rejects(tmp_path, {"expr": "exp + r2"}, "expr", "'exp' is a function")


def test_attribute_access(tmp_path):
    parser_rejects("x1.real", "attribute access is not allowed")
    file_rejects(tmp_path, {"expr": "x1.real"}, "expr", "attribute access is not allowed")
    file_rejects(tmp_path, {"define.r2": "(x1).__class__"}, "define.r2", "attribute access is not allowed")


@pytest.mark.parametrize(
    "text, phrase",
    [
        ("__import__('os').system('touch PWNED')", "only the functions"),
        ("__import__('os')", "'__import__' is not an allowed function"),
        ("eval('1')", "'eval' is not an allowed function"),
        ("open('PWNED', 'w')", "'open' is not an allowed function"),
        ("(lambda: 1)()", "only the functions"),
    ],
)


def test_calls_of_anything_else_are_refused_and_not_run(tmp_path, monkeypatch, text, phrase):
    monkeypatch.chdir(tmp_path)
    parser_rejects(text, phrase)
    file_rejects(tmp_path, {"expr": text}, "expr", phrase)
    file_rejects(tmp_path, {"define.r2": text}, "define.r2", phrase)
    file_rejects(tmp_path, {"params.p": text}, "params.p", phrase)
    file_rejects(tmp_path, {"domain.x.box[0][0]": text}, "domain.x.box[0]", phrase)
    file_rejects(tmp_path, {"domain.where": [f"{text} < x1"]}, "domain.where[0]", phrase)
    assert not (tmp_path / "PWNED").exists()


@pytest.mark.parametrize("text", ["sin(x1, y1)", "sin()", "log(x1, 10)", "sqrt(x=x1)", "exp(*x1)"])
def test_call_with_wrong_argument_count(tmp_path, text):
    name = text.split("(")[0]
    parser_rejects(text, f"{name}() takes exactly one argument")
    file_rejects(tmp_path, {"expr": text}, "expr", f"{name}() takes exactly one argument")


@pytest.mark.parametrize("text", ["1e13 * x1", "10000000000000 * x1", "x1 + 1e400", "-1e13"])
def test_huge_literal(tmp_path, text):
    parser_rejects(text, "too large", "literals are limited")
    file_rejects(tmp_path, {"expr": text}, "expr", "too large")


def test_huge_number_read_by_yaml(tmp_path):
    # a number YAML already read is bounded too (PyYAML reads these as int and float)
    file_rejects(tmp_path, {"params.p": 10**13}, "params.p", "too large")
    file_rejects(tmp_path, {"domain.x.box[0][1]": 10**13}, "domain.x.box[0]", "too large")
    file_rejects(tmp_path, {"params.p": float("inf")}, "params.p", "not finite")
    file_rejects(tmp_path, {"expr": float("nan")}, "expr", "not finite")


def test_literal_limit_is_not_too_tight():
    assert parse_expression("1000000000000 * x1", NAMES) == 10**12 * x1


@pytest.mark.parametrize(
    "text, phrase",
    [
        ("x1**1000", "the exponent 1000 is too large"),
        ("9**9**9", "is too large"),
        ("(10**64)**64", "a power of numbers in the expression is too large"),
        ("2**2**2**2**2**2", "is too large"),
        ("x1**(10**12)", "is too large"),
        ("E**(10**12)", "is too large"),
        ("exp(-1000)**2", "too large"),  # used to crash with TypeError (float underflow)
    ],
)


def test_huge_exponent_is_refused_quickly(tmp_path, text, phrase):
    start = time.perf_counter()
    parser_rejects(text, phrase)
    file_rejects(tmp_path, {"expr": text}, "expr", phrase)
    file_rejects(tmp_path, {"define.r2": text}, "define.r2", phrase)
    assert time.perf_counter() - start < 2.0


def test_exponent_limit_is_not_too_tight():
    assert parse_expression("x1**64", NAMES) == x1**64
    assert parse_expression("(1/3)**64", {}) == sp.Rational(1, 3**64)
    assert parse_expression("2**-10", {}) == sp.Rational(1, 1024)


@pytest.mark.parametrize(
    "text",
    [
        "sin(" * 200 + "x1" + ")" * 200,
        "(" * 1000 + "x1" + ")" * 1000,
        "-" * 70 + "x1",
    ],
    ids=["200-nested-sin", "1000-parentheses", "70-unary-minus"],
)


def test_over_deep_expression(tmp_path, text):
    start = time.perf_counter()
    parser_rejects(text, "nested")
    file_rejects(tmp_path, {"expr": text}, "expr", "nested")
    assert time.perf_counter() - start < 2.0


def test_depth_limit_is_not_too_tight():
    text = "sin(" * 10 + "x1" + ")" * 10
    assert parse_expression(text, NAMES).has(sp.sin)
    assert MAX_DEPTH >= 20


def test_over_long_expression(tmp_path):
    text = " + ".join(["x1"] * 1250)  # 5000 characters
    assert len(text) > MAX_LENGTH
    parser_rejects(text, f"{len(text)} characters long", f"limit is {MAX_LENGTH}")
    file_rejects(tmp_path, {"expr": text}, "expr", "characters long")
    file_rejects(tmp_path, {"define.r2": text}, "define.r2", "characters long")


def _balanced_sum(levels: int) -> str:
    return "-1" if levels == 0 else f"({_balanced_sum(levels - 1)}+{_balanced_sum(levels - 1)})"


def test_too_many_syntax_nodes(tmp_path):
    text = _balanced_sum(9)  # shallow (depth ~14) and short enough, but about 2500 nodes
    assert len(text) <= MAX_LENGTH
    parse_expression(_balanced_sum(6), {})  # the same shape, smaller, is fine
    parser_rejects(text, "syntax nodes")
    file_rejects(tmp_path, {"expr": text}, "expr", "syntax nodes")


def test_comparison_outside_constraints(tmp_path):
    parser_rejects("x1 < y1", "only allowed in 'where' and 'pairs'")
    file_rejects(tmp_path, {"expr": "r2 < 1"}, "expr", "only allowed in 'where' and 'pairs'")
    file_rejects(tmp_path, {"define.r2": "x1 <= y1"}, "define.r2", "only allowed in 'where' and 'pairs'")
    file_rejects(tmp_path, {"domain.y.box[1][1]": "0 < 1"}, "domain.y.box[1]", "only allowed in 'where' and 'pairs'")
    # a comparison nested inside one side of a constraint is no better
    file_rejects(tmp_path, {"domain.pairs": ["(x1 < y1) < 2"]}, "domain.pairs[0]", "only allowed in 'where' and 'pairs'")


def test_constraint_must_be_a_plain_comparison(tmp_path):
    with pytest.raises(ExpressionError, match="must be a comparison"):
        parse_inequalities("x1 + 1", NAMES)
    with pytest.raises(ExpressionError, match="'==' is not allowed"):
        parse_inequalities("x1 == 1", NAMES)
    file_rejects(tmp_path, {"domain.where": ["x1 + 1"]}, "domain.where[0]", "must be a comparison")
    file_rejects(tmp_path, {"domain.pairs": ["x1 != y1"]}, "domain.pairs[0]", "'!=' is not allowed")


@pytest.mark.parametrize(
    "text, phrase",
    [
        ("x1 % 2", "'%'"),
        ("x1 // 2", "'//'"),
        ("x1 ^ 2", "write powers as **"),
        ("x1[0]", "indexing"),
        ("lambda: x1", "a lambda"),
        ("x1 if y1 else y1", "a conditional expression"),
        ("x1 and y1", "'and'/'or'"),
        ("[x1]", "a list"),
        ("'x1'", "not a real number"),
        ("True", "not a real number"),
        ("2j", "not a real number"),
        ("(y := 1)", "an assignment"),
        ("~x1", "'~'"),
    ],
)


def test_other_syntax_is_refused(tmp_path, text, phrase):
    parser_rejects(text, phrase)
    file_rejects(tmp_path, {"expr": text}, "expr", phrase)


def test_division_by_zero(tmp_path):
    parser_rejects("x1 / (y1 - y1)", "division by zero")
    file_rejects(tmp_path, {"expr": "r2 / 0"}, "expr", "division by zero")


def test_bad_syntax_and_empty(tmp_path):
    parser_rejects("x1 +", "not a valid expression")
    parser_rejects("   ", "empty")
    file_rejects(tmp_path, {"expr": "(x1 - y1"}, "expr", "not a valid expression")
    file_rejects(tmp_path, {"define.r2": "x1 y1"}, "define.r2", "not a valid expression")


def test_non_number_values_are_refused():
    for value in (True, None, [1], {"a": 1}):
        with pytest.raises(ExpressionError, match="expected an expression"):
            parse_expression(value, {})
    with pytest.raises(ExpressionError, match="too large or not finite"):
        parse_expression(10**5000, {})  # repr() of this int would raise ValueError
