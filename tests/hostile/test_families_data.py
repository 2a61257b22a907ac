"""Broken data files (the CSV points of ``data:``) and data paths that leave the cost file's
folder: exit status 2 and one line naming the CSV file (or the cost file and its field) and
the row or column; a spreadsheet's own habits (a byte-order mark, CRLF) are read as plain CSV.

CSV as RFC 4180 describes it (CRLF line ends allowed); the BOM habit is common practice.
"""

from __future__ import annotations

import json
import os

import pytest
from families import GOOD_CSV, MODEL, QUICK, assert_refused, run

NESTED = ["--only", "nested", *QUICK]


def _model(folder, name: str, csv_text: str | bytes | None, written: str | None = None):
    """A cost file ``m-NAME.yaml`` whose source is ``NAME.csv`` (or the path ``written``)."""
    if csv_text is not None:
        csv_path = folder / f"{name}.csv"
        if isinstance(csv_text, bytes):
            csv_path.write_bytes(csv_text)
        else:
            csv_path.write_text(csv_text, encoding="utf-8", newline="")
    path = folder / f"m-{name}.yaml"
    path.write_text(MODEL.format(id=f"m-{name}", csv=written or f"{name}.csv"), encoding="utf-8")
    return path


BROKEN = {  # name -> (CSV text, phrase)
    "no-rows": ("", "the CSV file is empty"),
    "header-only": ("a,b\n", "no data rows after the header"),
    "missing-column": ("a,weight\n0.1,1\n", "row 1: the column 'b' is missing"),
    "unknown-column": ("a,b,c\n0.1,0.2,0.3\n", "row 1: unknown column 'c'"),
    "escape-sequence-column": ("a,b,\x1b[2Jc\n0.1,0.2,0.3\n", "row 1: unknown column '\\x1b[2Jc'"),
    "column-twice": ("a,b,a\n0.1,0.2,0.3\n", "row 1: a column is named twice"),
    "semicolons": ("a;b\n0.1;0.2\n", "row 1: unknown column 'a;b'"),
    "text-cell": ("a,b\n0.1,abc\n", "row 2, column 'b': 'abc' is not a number"),
    "100kB-text-cell": ("a,b\n0.1,x" + "y" * 100_000 + "\n", "row 2, column 'b': 'xyyy"),
    "cell-over-the-csv-limit": ("a,b\n0.1," + "9" * 200_000 + "\n", "unreadable CSV (field larger than field limit"),
    "short-row": ("a,b\n0.1,0.2\n0.3\n", "row 3: 1 cells, but the header has 2"),
    "long-row": ("a,b\n0.1,0.2,0.5\n", "row 2: 3 cells, but the header has 2"),
    "unclosed-quote": ("a,b\n\"0.1,0.2\n", "row 2: 1 cells, but the header has 2"),
    "nan-cell": ("a,b\n0.1,nan\n", "row 2, column 'b': 'nan' is not a finite number"),
    "inf-cell": ("a,b\n-inf,0.1\n", "row 2, column 'a': '-inf' is not a finite number"),
    "nul-in-a-cell": ("a,b\n0.1,0\x002\n", "row 2, column 'b': '0\\x002' is not a number"),
    "negative-weight": ("a,b,weight\n0.1,0.2,-1\n", "row 2, column 'weight': negative weight -1"),
    "zero-weights": ("a,b,weight\n0.1,0.2,0\n0.3,0.4,0\n", "the weights sum to zero"),
    "point-outside-the-domain": ("a,b\n5,0.2\n0.3,0.4\n", "row 2: the point (a=5, b=0.2) lies outside"),
    "windows-1252": ("a,b\n0.1,0.2 caf\xe9\n".encode("latin-1"), "not UTF-8 text"),
}


@pytest.mark.parametrize("name", sorted(BROKEN))
def test_a_broken_data_file_is_one_line_naming_it_and_the_row(capsys, tmp_path, name):
    text, phrase = BROKEN[name]
    cost = _model(tmp_path, name, text)
    assert_refused(capsys, ["check", str(cost), *NESTED], str(tmp_path / f"{name}.csv"), phrase)


def _nested(capsys, cost) -> tuple[str, str]:
    code, out, lines = run(capsys, ["check", str(cost), *NESTED, "--json"])
    assert code in (0, 1), lines
    check = json.loads(out)["costs"][0]["checks"]["nested"]
    # the summary counts the points and levels read: the same text means the same data
    return check["verdict"], check["evidence"]["summary"]


def test_a_spreadsheets_bom_and_crlf_are_read_as_plain_csv(capsys, tmp_path):
    plain = _nested(capsys, _model(tmp_path, "plain", GOOD_CSV))
    assert "N = 60 effective points" in plain[1]
    for name, text in {"bom": "\ufeff" + GOOD_CSV, "crlf": GOOD_CSV.replace("\n", "\r\n")}.items():
        assert _nested(capsys, _model(tmp_path, name, text)) == plain, name


@pytest.fixture
def outside(tmp_path):
    """A project folder ``repo/`` with a good CSV beside it, outside it."""
    (tmp_path / "secret.csv").write_text(GOOD_CSV, encoding="utf-8")
    repo = tmp_path / "repo"
    (repo / "data").mkdir(parents=True)
    return repo


def test_a_data_path_may_not_be_absolute(capsys, outside):
    cost = _model(outside, "abs", None, str(outside.parent / "secret.csv"))
    assert_refused(capsys, ["show", str(cost)], f"{cost}: field 'data.source.points'", "is an absolute path")


def test_a_data_path_may_not_climb_out_of_the_folder(capsys, outside):
    cost = _model(outside, "up", None, "../secret.csv")
    assert_refused(capsys, ["show", str(cost)], f"{cost}: field 'data.source.points'",
                   "'../secret.csv' leads out of the cost file's folder")


def test_a_link_out_of_the_folder_is_refused_too(capsys, outside):
    os.symlink(outside.parent / "secret.csv", outside / "data" / "inside.csv")
    cost = _model(outside, "link", None, "data/inside.csv")
    assert_refused(capsys, ["show", str(cost)], f"{cost}: field 'data.source.points'", "leads out of")


def test_a_path_that_climbs_and_comes_back_is_accepted(capsys, outside):
    (outside / "data" / "w.csv").write_text(GOOD_CSV, encoding="utf-8")
    cost = _model(outside, "back", None, "../repo/data/w.csv")
    code, out, lines = run(capsys, ["show", str(cost)])
    assert code == 0 and not lines, lines


def test_a_data_path_that_is_a_folder_is_refused(capsys, outside):
    (outside / "folder.csv").mkdir()
    cost = _model(outside, "folder", None, "folder.csv")
    assert_refused(capsys, ["show", str(cost)], str(outside / "folder.csv"), "is a folder")


def test_a_data_path_in_a_link_loop_is_named_as_one(capsys, outside):
    loop = outside / "loop.csv"
    loop.symlink_to(loop.name)
    cost = _model(outside, "loop", None, "loop.csv")
    assert_refused(capsys, ["show", str(cost)], str(loop), "link loop")
