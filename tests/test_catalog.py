"""The shipped cost catalog (``catalog/``): it loads, it covers the check-value table, and
the checkers reproduce every published verdict it records.

Three groups of tests:

(a) every catalog file loads through the ordinary loader, its ``id`` is its file name and
    is unique, and it carries ``title``, ``source``, ``notes`` and a non-empty ``expect``;
(b) every ``(file, condition)`` pair in a file's ``expect`` is its own test case (ids like
    ``euclidean/sq-euclid.yaml::mtw``) that compares the verdict ``costcheck check catalog``
    gives (its JSON document, computed once for the suite) with the expectation;
(c) the catalog covers every row of the check-value table (``docs/check-values.md``, which
    ``tests/test_docs.py`` keeps equal to it): :data:`REFERENCE_ROWS` maps each row to the
    files that exercise it, and each such file's ``expect`` must agree with the row and
    its ``source`` must name the row's source.

The expectations are published verdicts. A failing case in (b) means the checker (or,
possibly, the file's domain choice) disagrees with the literature; it must never be
"fixed" by changing an expectation away from the published verdict.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from functools import lru_cache
from pathlib import Path

import pytest

import costcheck
from costcheck.spec.loader import find_cost_files, read_yaml
from costcheck.spec.schema import VERDICT_WORDS

CATALOG = Path(__file__).resolve().parent.parent / "catalog"
SUBFOLDERS = ("euclidean", "sphere", "hyperbolic", "economics", "degenerate", "generating")


FILES = find_cost_files([CATALOG]) if CATALOG.is_dir() else []


#: conditions outside the check-value table's columns (c-convexity of the domains, Loeper's principle)
GEOMETRY_CONDITIONS = {"target_c_convex", "source_c_convex", "loeper"}


def rel(path: Path) -> str:
    """``euclidean/sq-euclid.yaml``: a file's name relative to the catalog, with ``/``."""
    return path.relative_to(CATALOG).as_posix()


@lru_cache(maxsize=None)
def load(relpath: str) -> costcheck.Cost:
    return costcheck.load(CATALOG / relpath)


@lru_cache(maxsize=None)
def raw(relpath: str) -> dict:
    return read_yaml((CATALOG / relpath).read_text(encoding="utf-8"), relpath)


# --------------------------------------------------------------------------- (a) loading


def test_catalog_is_big_enough_and_organised():
    assert len(FILES) >= 22, f"the catalog has {len(FILES)} cost files; it should have at least 22"
    for path in FILES:
        folder = path.relative_to(CATALOG).parts[0]
        assert folder in SUBFOLDERS, f"{rel(path)} is not in one of the subfolders {SUBFOLDERS}"
    present = {path.relative_to(CATALOG).parts[0] for path in FILES}
    assert present == set(SUBFOLDERS), f"subfolders without a cost file: {sorted(set(SUBFOLDERS) - present)}"


@pytest.mark.parametrize("relpath", [rel(p) for p in FILES])
def test_file_loads(relpath):
    cost = load(relpath)
    assert cost.id == Path(relpath).stem, f"{relpath}: the id {cost.id!r} must equal the file name"
    data = raw(relpath)
    for key in ("title", "source", "notes", "expect"):
        assert data.get(key), f"{relpath}: '{key}' is missing or empty"
    for condition, verdict in cost.expect.items():
        assert verdict in VERDICT_WORDS[condition]
    if cost.sense == "surplus":
        # the loader stores the cost to minimise, c = -s
        assert cost.expr == -cost.written_expr


def test_ids_are_unique():
    seen: dict[str, str] = {}
    for path in FILES:
        cost = load(rel(path))
        assert cost.id not in seen, f"the id {cost.id!r} is used by {seen[cost.id]} and {rel(path)}"
        seen[cost.id] = rel(path)


def test_economics_files_are_surpluses():
    economics = [rel(p) for p in FILES if rel(p).startswith("economics/")]
    assert economics
    assert all(load(r).sense == "surplus" for r in economics), "every economics file is a surplus (sense: surplus)"


# --------------------------------------------------------------------------- (b) verdicts

CASES = [(rel(path), condition) for path in FILES for condition in load(rel(path)).expect]


@lru_cache(maxsize=1)
def _catalog_entries() -> dict:
    """``{relpath: entry}`` of the catalog's ``check --json`` document (one run for the whole
    suite: ``catalog_snapshot.catalog_json``, which the snapshot and schema tests read too)."""
    from catalog_snapshot import catalog_json

    return {Path(entry["file"]).relative_to("catalog").as_posix(): entry for entry in catalog_json()["costs"]}


@pytest.mark.parametrize(("relpath", "condition"), CASES, ids=[f"{r}::{c}" for r, c in CASES])
def test_published_verdict(relpath, condition):
    # The source of each case is the file's `source` field (the paper and year, as the
    # check-value table names it; "computed here" / "(from memory)" where the table says so).
    # It is repeated in every assertion message, so a failing case names the published
    # result it disagrees with.  The verdict is the one `costcheck check catalog` gives (at
    # the snapshot's budget, default proofs on), read from its JSON document.
    cost = load(relpath)
    expected = cost.expect[condition]
    entry = _catalog_entries()[relpath]
    assert condition in entry["checks"], f"{relpath}::{condition}: expected {expected!r}, but it was not checked"
    verdict = entry["checks"][condition]
    detail = f"{verdict['evidence']['kind']}: {verdict['evidence'].get('summary')}"
    if verdict.get("witness") is not None:
        detail += f"; witness {verdict['witness']}"
    if verdict.get("value") is not None:
        detail += f"; value={verdict['value']}"
    assert verdict["verdict"] == expected, (
        f"{relpath}::{condition}: expected {expected!r} (source: {cost.source}), "
        f"the checker says {verdict['verdict']!r} [{detail}]"
    )


# --------------------------------------------------------------------------- (c) coverage

@dataclass(frozen=True)
class Row:
    """One row of the check-value table (docs/check-values.md)."""

    #: the row's verdicts; a '—' entry of the table is simply absent
    verdicts: dict
    #: the row's source as the table names it; a file's ``source`` must contain one of these
    sources: tuple
    #: catalog files (relative paths) that exercise the row
    files: tuple
    #: conditions a file of the row may leave out, with the reason (never a different verdict)
    may_omit: dict = field(default_factory=dict)


_ONE_D_MTW = "in one dimension xi·eta = 0 only for zero vectors, so weak/strong is vacuous"

REFERENCE_ROWS: dict[str, Row] = {
    "|x-y|²/2, -x·y (any)": Row(
        {"twist": "holds", "nondegenerate": "holds", "mtw": "weak", "nncc": "holds"},
        ("MTW 2005",),
        ("euclidean/sq-euclid.yaml", "euclidean/neg-inner.yaml", "euclidean/sq-euclid-3d.yaml",
         "economics/bilinear-matching-surplus.yaml", "economics/spence-mirrlees-1d.yaml"),
        may_omit={"mtw": _ONE_D_MTW},
    ),
    "-(1/p)|x-y|^p, -2 < p < 1, p ≠ 0 (x ≠ y)": Row(
        {"twist": "holds", "nondegenerate": "holds", "mtw": "strong", "nncc": "fails"},
        ("MTW 2005; Trudinger–Wang 2009",),
        ("euclidean/power-0.5.yaml", "euclidean/power-minus0.5.yaml", "euclidean/power-minus1.yaml",
         "euclidean/power-0.5-3d.yaml", "economics/hedonic-power-surplus.yaml"),
    ),
    "same, p = -2 (x ≠ y)": Row(
        {"twist": "holds", "nondegenerate": "holds", "mtw": "weak", "nncc": "fails"},
        ("boundary case (from memory)",),
        ("euclidean/power-minus2.yaml",),
    ),
    "same, p > 1, p ≠ 2 or p < -2 (x ≠ y)": Row(
        {"twist": "holds", "nondegenerate": "holds", "mtw": "fails", "nncc": "fails"},
        ("Loeper 2009", "computed here"),
        ("euclidean/power-1.5.yaml", "euclidean/power-3.yaml", "euclidean/power-minus3.yaml"),
    ),
    "-log|x-y| (x ≠ y)": Row(
        {"twist": "holds", "nondegenerate": "holds", "mtw": "strong", "nncc": "fails"},
        ("MTW 2005",),
        ("euclidean/neg-log-dist.yaml",),
    ),
    "sqrt(1 + |x-y|²) (any)": Row(
        {"twist": "holds", "nondegenerate": "holds", "mtw": "strong"},
        ("MTW 2005",),
        ("euclidean/sqrt-one-plus.yaml", "economics/matching-sqrt-surplus.yaml"),
    ),
    "sqrt(1 - |x-y|²) (|x-y| < 1)": Row(
        {"twist": "holds", "nondegenerate": "holds", "mtw": "strong"},
        ("MTW 2005",),
        ("euclidean/sqrt-one-minus.yaml",),
    ),
    "-sqrt(1 + |x-y|²), -sqrt(1 - |x-y|²)": Row(
        {"twist": "holds", "nondegenerate": "holds", "mtw": "fails"},
        ("sign flip of the two rows above",),
        ("euclidean/neg-sqrt-one-plus.yaml", "euclidean/neg-sqrt-one-minus.yaml"),
    ),
    "round sphere, d²/2 (away from antipodes)": Row(
        {"twist": "holds", "nondegenerate": "holds", "mtw": "strong", "nncc": "holds"},
        ("Loeper 2009; Kim–McCann, J. reine angew. Math. 664, 2012",),
        ("sphere/sphere-dist-sq.yaml",),
    ),
    "sphere, -log(1 - x·y) (x ≠ y)": Row(
        {"twist": "holds", "nondegenerate": "holds", "mtw": "strong"},
        ("Wang 2004 (Calc. Var. 20); Loeper 2011 (ARMA 199)",),
        ("sphere/sphere-reflector.yaml",),
    ),
    "hyperbolic space, d²/2 (any)": Row(
        {"twist": "holds", "nondegenerate": "holds", "mtw": "fails", "nncc": "fails"},
        ("Loeper 2009 (negative curvature)",),
        ("hyperbolic/hyperbolic-dist-sq.yaml",),
    ),
    "|x-y| (x ≠ y)": Row(
        {"twist": "fails", "nondegenerate": "fails"},
        ("elementary",),
        ("degenerate/euclid-dist.yaml",),
    ),
    "-cos(x-y), interval longer than π (n = 1)": Row(
        {"twist": "fails", "nondegenerate": "fails"},
        ("elementary",),
        ("degenerate/neg-cos-1d.yaml",),
    ),
}

ROW_FILES = [(row, f) for row, spec in REFERENCE_ROWS.items() for f in spec.files]


def test_every_reference_row_is_covered():
    assert len(REFERENCE_ROWS) == 13, "the check-value table has 13 rows"
    for row, spec in REFERENCE_ROWS.items():
        assert spec.files, f"no catalog file covers the row {row!r}"
        missing = [f for f in spec.files if not (CATALOG / f).is_file()]
        assert not missing, f"row {row!r}: missing catalog files {missing}"


#: demo scenarios with invented data (a ``data:`` key, ``demo`` tag): nestedness examples of our own,
#: not rows of the check-value table; their expectations are still test cases in group (b)
DEMO_FILES = {rel(p) for p in FILES if raw(rel(p)).get("data") and "demo" in (raw(rel(p)).get("tags") or [])}


def test_demo_files_say_their_data_is_invented():
    for relpath in DEMO_FILES:
        data = raw(relpath)
        assert "invented" in data["title"].lower() and "invented" in data["data"].get("notes", "").lower(), relpath


#: generating functions G(x, y, z): the check-value table's columns are the conditions of a cost, so
#: these are not its rows; each names its sources in its own ``source`` field, and its expectations
#: are test cases in group (b)
GENERATING_FILES = {rel(p) for p in FILES if load(rel(p)).generating is not None}


def test_generating_files_live_in_their_folder_and_name_their_sources():
    assert GENERATING_FILES, "the catalog has no generating function"
    for relpath in GENERATING_FILES:
        assert relpath.startswith("generating/"), relpath
        assert "Trudinger 2014" in raw(relpath)["source"], relpath


def test_every_file_belongs_to_a_row():
    mapped = {f for _, f in ROW_FILES} | DEMO_FILES | GENERATING_FILES
    unmapped = sorted(set(rel(p) for p in FILES) - mapped)
    assert not unmapped, f"catalog files not mapped to a check-value row: {unmapped}"


def test_family_has_four_parameter_values():
    family = [f for row, f in ROW_FILES if "|x-y|^p" in row or row.startswith("same, p")]
    values = {float(load(f).params["p"]) for f in family}
    assert len(values) >= 4, values


@pytest.mark.parametrize(("row", "relpath"), ROW_FILES, ids=[f"{f}" for _, f in ROW_FILES])
def test_file_agrees_with_its_row(row, relpath):
    spec = REFERENCE_ROWS[row]
    cost = load(relpath)
    # only the row's verdicts, and exactly them: a '—' entry of the table is never expected
    # the domain-geometry conditions are not columns of the check-value table; a file that expects
    # them names their own source (textbook fact or theorem) in its `source` field
    extra = sorted(set(cost.expect) - set(spec.verdicts) - GEOMETRY_CONDITIONS)
    assert not extra, f"{relpath} expects {extra}, which the row {row!r} leaves open ('—')"
    for condition, verdict in spec.verdicts.items():
        if condition not in cost.expect:
            assert condition in spec.may_omit and cost.n == 1, (
                f"{relpath} leaves out the row's {condition} verdict {verdict!r}")
            continue
        assert cost.expect[condition] == verdict, (
            f"{relpath}: expect.{condition} is {cost.expect[condition]!r}, the row {row!r} says {verdict!r}")
    assert any(s in (cost.source or "") for s in spec.sources), (
        f"{relpath}: source {cost.source!r} does not name the row's source {spec.sources}")
