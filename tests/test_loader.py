"""Cost files: YAML → schema → meaning → Cost (costcheck.spec.loader), and the Python API paths.

Every rejection is a CostFileError whose text names the file, the field (where the
problem has one) and what is wrong.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
import sympy as sp
import yaml

import costcheck
from costcheck.model.domain import Ball, Box
from costcheck.errors import CostFileError
from costcheck.spec.loader import find_cost_files, load_cost

x1, x2, y1, y2 = (sp.Symbol(n, real=True) for n in ("x1", "x2", "y1", "y2"))
R2 = (x1 - y1) ** 2 + (x2 - y2) ** 2

VALID = """\
# a cost file exactly as the contract describes it
id: sq-euclid
title: Squared Euclidean distance
sense: cost                   # cost | surplus
x: [x1, x2]
y: [y1, y2]
params: {p: 0.5}
define:
  r2: (x1 - y1)**2 + (x2 - y2)**2
expr: r2 / 2
domain:
  x: {box: [[-1, 1], [-1, 1]]}
  y: {box: [[-1, 1], [-1, 1]]}
  where: ["x1 + x2 <= 1"]
  pairs: ["r2 >= 0.01"]
expect: {twist: holds, nondegenerate: holds, mtw: weak, nncc: holds}
source: "a textbook"
"""


def base() -> dict:
    return yaml.safe_load(VALID)


def write(tmp_path, content, name: str = "cost.yaml"):
    """Write YAML text, or a dict dumped as YAML, to ``tmp_path/name``."""
    path = tmp_path / name
    path.parent.mkdir(parents=True, exist_ok=True)
    text = content if isinstance(content, str) else yaml.safe_dump(content, sort_keys=False)
    path.write_text(text, encoding="utf-8")
    return path


def rejects(tmp_path, content, field: str | None, *phrases: str) -> CostFileError:
    """``content`` must be refused with an error naming the file, ``field`` (or none) and each phrase."""
    path = write(tmp_path, content)
    with pytest.raises(CostFileError) as info:
        load_cost(path)
    err = info.value
    text = str(err)
    assert err.file == str(path)
    assert text.startswith(str(path))
    if field is None:
        assert err.field is None
        assert "field '" not in text
    else:
        assert err.field == field
        assert f"field '{field}'" in text
    for phrase in phrases:
        assert phrase in text, f"{phrase!r} not in {text!r}"
    return err


def variant(**changes) -> dict:
    data = base()
    data.update(changes)
    return data


def with_domain(**changes) -> dict:
    data = base()
    data["domain"].update(changes)
    return data


# --------------------------------------------------------------------------- a valid file


def test_valid_file_loads(tmp_path):
    path = write(tmp_path, VALID)
    cost = load_cost(path)
    assert cost.id == "sq-euclid"
    assert cost.title == "Squared Euclidean distance"
    assert cost.sense == "cost"
    assert cost.file == str(path)
    assert cost.x_names == ("x1", "x2") and cost.y_names == ("y1", "y2")
    assert cost.n == 2 and cost.m == 2
    assert sp.expand(cost.expr - R2 / 2) == 0
    assert cost.expr == cost.written_expr
    assert cost.expr.free_symbols == {x1, x2, y1, y2}
    assert all(s.is_real for s in cost.expr.free_symbols)
    assert cost.params == {"p": sp.Rational(1, 2)}
    assert cost.domain.x == Box((-1.0, -1.0), (1.0, 1.0))
    assert cost.domain.y == Box((-1.0, -1.0), (1.0, 1.0))
    assert [c.inequality.g for c in cost.domain.where_x] == [1 - x1 - x2]
    assert cost.domain.where_y == ()
    assert len(cost.domain.pairs) == 1
    assert sp.expand(cost.domain.pairs[0].inequality.g - (R2 - sp.Rational(1, 100))) == 0
    assert cost.expect == {"twist": "holds", "nondegenerate": "holds", "mtw": "weak", "nncc": "holds"}
    assert cost.source == "a textbook"


def test_top_level_api_load_matches_loader(tmp_path):
    path = write(tmp_path, VALID)
    assert costcheck.load(path).expr == load_cost(path).expr


def test_surplus_is_stored_negated(tmp_path):
    cost = load_cost(write(tmp_path, variant(sense="surplus", expr="x1*y1 + x2*y2")))
    assert cost.sense == "surplus"
    assert cost.written_expr == x1 * y1 + x2 * y2
    assert cost.expr == -(x1 * y1 + x2 * y2)
    assert cost.expr == -cost.written_expr
    assert load_cost(write(tmp_path, variant(expr="x1*y1 + x2*y2"), "c.yaml")).expr == x1 * y1 + x2 * y2


def test_params_are_substituted_exactly(tmp_path):
    path = write(tmp_path, variant(params={"p": 0.5, "q": "2*p + pi"}, expr="p * r2 + q * x1"))
    cost = load_cost(path)
    assert cost.params["p"] == sp.Rational(1, 2)
    assert isinstance(cost.params["p"], sp.Rational)
    assert cost.params["q"] == 1 + sp.pi
    assert sp.expand(cost.expr - (sp.Rational(1, 2) * R2 + (1 + sp.pi) * x1)) == 0
    assert not any(s.name in ("p", "q") for s in cost.expr.free_symbols)


def test_param_overrides(tmp_path):
    path = write(tmp_path, variant(expr="p * x1 * y1"))
    assert costcheck.load(path, p=0.25).expr == x1 * y1 / 4
    assert costcheck.load(path, p=np.float64(0.75)).expr == 3 * x1 * y1 / 4
    with pytest.raises(CostFileError) as info:
        costcheck.load(path, q=1.0)
    assert info.value.field == "params" and "no parameter named 'q'" in str(info.value)
    assert str(path) in str(info.value)


def test_params_feed_domain_bounds(tmp_path):
    cost = load_cost(write(tmp_path, variant(params={"L": 2}, domain={
        "x": {"box": [["-L", "L"], [0, "L/4"]]}, "y": {"ball": {"center": ["L", 0], "radius": "L/2"}}})))
    assert cost.domain.x == Box((-2.0, 0.0), (2.0, 0.5))
    assert cost.domain.y == Ball((2.0, 0.0), 1.0)


def test_define_helpers_in_any_order_are_expanded(tmp_path):
    define = {"c": "b * a", "b": "a + y1", "a": "x1 - y1"}  # each uses one defined after it
    cost = load_cost(write(tmp_path, variant(define=define, expr="c + a", domain={
        "x": {"box": [[0, 1], [0, 1]]}, "y": {"box": [[0, 1], [0, 1]]}, "pairs": ["b > a"]})))
    a = x1 - y1
    assert sp.expand(cost.expr - ((a + y1) * a + a)) == 0
    assert cost.expr.free_symbols == {x1, y1}
    assert cost.domain.pairs[0].inequality.g == y1  # b - a, helpers expanded in constraints too


def test_chained_comparison_gives_two_inequalities(tmp_path):
    cost = load_cost(write(tmp_path, with_domain(where=["0 < x1 < 1", "1 >= y2 >= -0.5"], pairs=[])))
    got_x = [(c.inequality.g, c.inequality.strict) for c in cost.domain.where_x]
    got_y = [(c.inequality.g, c.inequality.strict) for c in cost.domain.where_y]
    assert got_x == [(x1, True), (1 - x1, True)]
    assert got_y == [(1 - y2, False), (y2 + sp.Rational(1, 2), False)]


def test_constants_pi_and_e(tmp_path):
    cost = load_cost(write(tmp_path, variant(expr="pi * x1 * y1 + E * x2 * y2", domain={
        "x": {"box": [["-pi", "pi"], [0, "E"]]}, "y": {"ball": {"center": [0, "pi/2"], "radius": "pi/4"}}})))
    assert cost.expr == sp.pi * x1 * y1 + sp.E * x2 * y2
    assert cost.domain.x == Box((-math.pi, 0.0), (math.pi, math.e))
    assert cost.domain.y.center == pytest.approx((0.0, math.pi / 2))
    assert cost.domain.y.radius == pytest.approx(math.pi / 4)


def test_domain_membership_respects_where_and_pairs(tmp_path):
    cost = load_cost(write(tmp_path, VALID))
    xs = np.array([[0.0, 0.0], [0.9, 0.9], [0.0, 0.0], [1.5, 0.0], [0.5, 0.5], [0.2, 0.3]])
    ys = np.array([[0.5, 0.5], [0.0, 0.0], [0.05, 0.0], [0.0, 0.0], [0.5, 0.5], [-1.0, 1.0]])
    #              inside       where fails  pairs fails  off the box  pairs (r2=0) corner
    assert cost.domain.contains_pairs(xs, ys).tolist() == [True, False, False, False, False, True]
    assert cost.domain.contains_x(xs).tolist() == [True, False, True, False, True, True]


def test_domain_membership_ball_and_strict_constraints(tmp_path):
    cost = load_cost(write(tmp_path, variant(domain={
        "x": {"box": [[-1, 1], [-1, 1]]},
        "y": {"ball": {"center": [0, 0], "radius": 1}},
        "where": ["0 < x1 < 1"],
    })))
    xs = np.array([[0.5, 0.0], [0.0, 0.0], [1.0, 0.0], [0.5, 0.0]])
    ys = np.array([[0.6, 0.6], [0.0, 0.0], [0.0, 0.0], [0.8, 0.8]])  # |(0.8, 0.8)| > 1
    assert cost.domain.contains_pairs(xs, ys).tolist() == [True, False, False, False]


# --------------------------------------------------------------------------- finding files


def test_find_cost_files_recurses_folders(tmp_path):
    for name in ("a.yaml", "sub/b.yml", "sub/deeper/c.yaml"):
        write(tmp_path / "tree", VALID, name)
    write(tmp_path / "tree", "not a cost", "sub/notes.txt")
    write(tmp_path / "tree", "{}", "sub/deeper/d.json")
    single = write(tmp_path, VALID, "single.yaml")
    found = find_cost_files([tmp_path / "tree", single])
    tree = tmp_path / "tree"
    assert found == [tree / "a.yaml", tree / "sub/b.yml", tree / "sub/deeper/c.yaml", single]
    assert [load_cost(p).id for p in found] == ["sq-euclid"] * 4


def test_find_cost_files_missing_path(tmp_path):
    missing = tmp_path / "nowhere"
    with pytest.raises(CostFileError) as info:
        find_cost_files([missing])
    assert str(missing) in str(info.value) and "no such file" in str(info.value)


def test_load_missing_file_and_folder(tmp_path):
    with pytest.raises(CostFileError, match="no such file") as info:
        load_cost(tmp_path / "absent.yaml")
    assert str(tmp_path / "absent.yaml") in str(info.value)
    with pytest.raises(CostFileError, match="is a folder"):
        load_cost(tmp_path)


# --------------------------------------------------------------------------- API paths


def test_from_expression():
    cost = costcheck.from_expression(
        "p * d**2", x=["x"], y=["y"], params={"p": 0.5}, define={"d": "x - y"},
        domain={"x": {"box": [[0, 1]]}, "y": {"box": [[0, 1]]}, "pairs": ["x < y"]},
    )
    x, y = sp.Symbol("x", real=True), sp.Symbol("y", real=True)
    assert cost.file is None
    assert cost.expr == (x - y) ** 2 / 2
    assert cost.domain.contains_pairs(np.array([[0.2], [0.7]]), np.array([[0.7], [0.2]])).tolist() == [True, False]
    surplus = costcheck.from_expression("x * y", x=["x"], y=["y"], sense="surplus",
                                        domain={"x": {"box": [[0, 1]]}, "y": {"box": [[0, 1]]}})
    assert surplus.expr == -x * y and surplus.written_expr == x * y


def test_from_expression_uses_the_same_checks():
    with pytest.raises(CostFileError) as info:
        costcheck.from_expression("__import__('os').system('true')", x=["x"], y=["y"],
                                  domain={"x": {"box": [[0, 1]]}, "y": {"box": [[0, 1]]}})
    assert info.value.field == "expr" and "only the functions" in str(info.value)
    with pytest.raises(CostFileError) as info:
        costcheck.from_expression("x * y", x=["x"], y=["y"], domain={"x": {"box": [[1, 0]]}, "y": {"box": [[0, 1]]}})
    assert info.value.field == "domain.x.box[0]" and "inverted" in str(info.value)


def test_from_function():
    cost = costcheck.from_function(
        lambda x, y: x[0] * y[0] + x[1] * y[0], n=2, m=1, sense="surplus",
        domain={"x": {"box": [[0, 1], [0, 2]]}, "y": {"ball": {"center": [0], "radius": 3}}},
    )
    assert cost.expr is None
    assert (cost.n, cost.m) == (2, 1)
    assert cost.x_names == ("x1", "x2") and cost.y_names == ("y1",)
    assert cost.domain.x == Box((0.0, 0.0), (1.0, 2.0)) and cost.domain.y == Ball((0.0,), 3.0)
    assert cost.function(np.array([1.0, 2.0]), np.array([3.0])) == pytest.approx(-9.0)  # surplus negated
    plain = costcheck.from_function(lambda x, y: x[0] - y[0], n=1, m=1,
                                    domain={"x": {"box": [[0, 1]]}, "y": {"box": [[0, 1]]}})
    assert plain.function(np.array([1.0]), np.array([0.25])) == pytest.approx(0.75)


def test_from_function_rejections():
    box = {"x": {"box": [[0, 1]]}, "y": {"box": [[0, 1]]}}
    with pytest.raises(CostFileError) as info:
        costcheck.from_function(lambda x, y: 0, n=2, m=1, domain=box)
    assert info.value.field == "domain.x.box" and "2 coordinates" in str(info.value)
    with pytest.raises(CostFileError) as info:
        costcheck.from_function(lambda x, y: 0, n=1, m=1, domain={**box, "where": ["x1 < 1"]})
    assert info.value.field == "domain" and "constraints need coordinate names" in str(info.value)
    with pytest.raises(CostFileError) as info:
        costcheck.from_function(lambda x, y: 0, n=1, m=1, domain=box, sense="profit")
    assert info.value.field == "sense"


# --------------------------------------------------------------------------- rejections, one kind per test


def test_name_defined_twice(tmp_path):
    rejects(tmp_path, variant(params={"x1": 1}), "params.x1", "'x1' is defined twice", "'x'", "'params'")
    rejects(tmp_path, variant(y=["x1", "y2"]), "y", "'x1' is defined twice")
    rejects(tmp_path, variant(define={"p": "x1", "r2": "x2"}), "define.p", "'p' is defined twice")
    rejects(tmp_path, variant(x=["x1", "x1"]), "x", "'x1' appears twice")


def test_duplicate_yaml_key_in_define(tmp_path):
    text = VALID.replace("  r2: (x1 - y1)**2 + (x2 - y2)**2\n",
                         "  r2: (x1 - y1)**2 + (x2 - y2)**2\n  r2: x1 * y1\n")
    line = text.splitlines().index("  r2: x1 * y1") + 1
    rejects(tmp_path, text, None, "bad YAML", "the key 'r2' appears twice", f"line {line}")


def test_cycle_in_define(tmp_path):
    err = rejects(tmp_path, variant(define={"a": "b + x1", "b": "a * y1"}, expr="a"), "define", "cycle")
    assert "a -> b -> a" in str(err) or "b -> a -> b" in str(err)
    rejects(tmp_path, variant(define={"a": "a + 1"}, expr="a"), "define", "cycle", "a -> a")


def test_box_dimension_mismatch(tmp_path):
    data = with_domain(x={"box": [[0, 1], [0, 1], [0, 1]]})
    rejects(tmp_path, data, "domain.x.box", "3 intervals", "'x' has 2 coordinates")
    rejects(tmp_path, with_domain(y={"box": [[0, 1]]}), "domain.y.box", "1 intervals", "'y' has 2")


def test_ball_center_dimension_mismatch(tmp_path):
    data = with_domain(y={"ball": {"center": [0, 0, 0], "radius": 1}})
    rejects(tmp_path, data, "domain.y.ball.center", "center has 3 coordinates", "'y' has 2")


def test_empty_box(tmp_path):
    rejects(tmp_path, with_domain(x={"box": [[0, 1], [1, 1]]}), "domain.x.box[1]", "[1, 1]", "empty")


def test_inverted_box(tmp_path):
    rejects(tmp_path, with_domain(y={"box": [[1, 0], [0, 1]]}), "domain.y.box[0]", "[1, 0]", "inverted")


@pytest.mark.parametrize("radius", [0, -1, "-pi"])
def test_non_positive_radius(tmp_path, radius):
    data = with_domain(x={"ball": {"center": [0, 0], "radius": radius}})
    rejects(tmp_path, data, "domain.x.ball.radius", "radius must be positive")


def test_non_finite_bound(tmp_path):
    rejects(tmp_path, with_domain(x={"box": [["log(0)", 1], [0, 1]]}), "domain.x.box[0]", "undefined")
    rejects(tmp_path, with_domain(x={"box": [[0, "sqrt(-1)"], [0, 1]]}), "domain.x.box[0]", "not a real number")


def test_yaml_syntax_error(tmp_path):
    text = VALID.replace("x: [x1, x2]", "x: [x1, x2")
    rejects(tmp_path, text, None, "bad YAML", "line ")


def test_yaml_alias_is_refused(tmp_path):
    text = VALID.replace("x: [x1, x2]", "x: &a [x1, x2]").replace("y: [y1, y2]", "y: *a")
    line = text.splitlines().index("y: *a") + 1
    rejects(tmp_path, text, None, "bad YAML", "aliases (*name) are not allowed", f"line {line}")


def test_yaml_top_level_must_be_a_mapping(tmp_path):
    rejects(tmp_path, "- id: sq-euclid\n- x: [x1]\n", None, "must be a YAML mapping")
    rejects(tmp_path, "", None, "must be a YAML mapping")
    rejects(tmp_path, "just a string\n", None, "must be a YAML mapping")


def test_yaml_tags_are_not_constructed(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    text = VALID.replace('source: "a textbook"', "source: !!python/object/apply:os.system ['touch PWNED']")
    rejects(tmp_path, text, None, "bad YAML", "could not determine a constructor")
    assert not (tmp_path / "PWNED").exists()


def test_yaml_unreadable_values(tmp_path):
    # each of these used to escape as a TypeError / ValueError traceback
    rejects(tmp_path, VALID + "? [a, b]\n: 1\n", None, "bad YAML", "plain value")
    rejects(tmp_path, VALID.replace("p: 0.5", "p: 1" + "0" * 5000), None, "bad YAML", "cannot be read")
    rejects(tmp_path, VALID.replace('"a textbook"', "2001-02-30"), None, "bad YAML", "cannot be read")


def test_missing_required_key(tmp_path):
    data = base()
    del data["expr"]
    rejects(tmp_path, data, None, "'expr' is missing (or give 'generating' for a generating function)")
    data = base()
    del data["domain"]["y"]
    rejects(tmp_path, data, "domain", "'y' is missing (it is required)")


def test_unknown_top_level_key(tmp_path):
    rejects(tmp_path, variant(colour="blue"), None, "unknown key 'colour'", "allowed here:", "expr")
    rejects(tmp_path, with_domain(shape=[]), "domain", "unknown key 'shape'")


def test_side_needs_exactly_one_of_box_or_ball(tmp_path):
    both = {"box": [[0, 1], [0, 1]], "ball": {"center": [0, 0], "radius": 1}}
    rejects(tmp_path, with_domain(x=both), "domain.x", "exactly one of 'box' or 'ball'")
    rejects(tmp_path, with_domain(y={}), "domain.y", "exactly one of 'box' or 'ball'")


def test_where_constraint_mixing_x_and_y(tmp_path):
    rejects(tmp_path, with_domain(where=["x1 <= 1", "x1 + y1 <= 1"]), "domain.where[1]", "both x and y", "'pairs'")
    # a helper that mixes them is caught as well
    rejects(tmp_path, with_domain(where=["r2 <= 1"]), "domain.where[0]", "both x and y")


def test_constraint_without_coordinates(tmp_path):
    rejects(tmp_path, with_domain(where=["p < 1"]), "domain.where[0]", "mentions no coordinate")
    rejects(tmp_path, with_domain(pairs=["0 < 1"]), "domain.pairs[0]", "mentions no coordinate")


def test_bad_sense(tmp_path):
    rejects(tmp_path, variant(sense="profit"), "sense", "'profit'", "'cost', 'surplus'")


def test_bad_expect_verdict_word(tmp_path):
    rejects(tmp_path, variant(expect={"twist": "holds", "mtw": "holds"}), "expect.mtw", "'holds'", "'weak'")
    rejects(tmp_path, variant(expect={"twist": "yes"}), "expect.twist", "'yes'")
    rejects(tmp_path, variant(expect={"convexity": "holds"}), "expect", "unknown key 'convexity'")


@pytest.mark.parametrize(
    "changes, field, name",
    [
        ({"x": ["pi"]}, "x", "pi"),
        ({"y": ["y1", "E"]}, "y", "E"),
        ({"params": {"sin": 1}}, "params.sin", "sin"),
        ({"define": {"sqrt": "x1", "r2": "x2"}}, "define.sqrt", "sqrt"),
        ({"x": ["lambda", "x2"]}, "x", "lambda"),
        ({"y": ["None", "y2"]}, "y", "None"),
    ],
)
def test_reserved_name(tmp_path, changes, field, name):
    rejects(tmp_path, variant(**changes), field, f"'{name}' is reserved")


@pytest.mark.parametrize(
    "changes, field, bad",
    [
        ({"x": ["1x", "x2"]}, "x[0]", "'1x'"),
        ({"y": ["y1", "y-2"]}, "y[1]", "'y-2'"),
        ({"x": ["x1", "x 2"]}, "x[1]", "'x 2'"),
        ({"params": {"p.q": 1}}, "params", "'p.q'"),
        ({"define": {"r-2": "x1"}}, "define", "'r-2'"),
    ],
)
def test_non_identifier_name(tmp_path, changes, field, bad):
    rejects(tmp_path, variant(**changes), field, bad, "not a valid name")


def test_file_too_large(tmp_path):
    rejects(tmp_path, VALID + "#" * (300 * 1024) + "\n", None, "bytes", "limited")
