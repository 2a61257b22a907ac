"""Hostile and odd cost files the corpus cannot hold as text: encodings, line endings, names
that mean something to sympy.  What a careless editor or a spreadsheet writes must be read as
the clean file is (the same verdicts); what cannot be read is exit status 2 and one line.

Common practice of the trade (no source needed): Windows editors write CRLF line ends and
often a UTF-8 byte-order mark; old Macs wrote a lone CR; YAML 1.2 §5.2 allows a BOM.
"""

from __future__ import annotations

import pytest
from families import CLEAN, QUICK, assert_refused, run, verdicts

CONDITIONS = ["--only", "twist", "--only", "nondegenerate"]


_CLEAN_VERDICTS: dict = {}


def _clean(capsys, folder):
    """The clean file's verdicts, computed once for every comparison below."""
    if not _CLEAN_VERDICTS:
        path = folder / "clean.yaml"
        path.write_text(CLEAN, encoding="utf-8")
        _CLEAN_VERDICTS["clean"] = verdicts(capsys, ["check", str(path), *CONDITIONS, *QUICK])
    return _CLEAN_VERDICTS["clean"]


ACCEPTED = {
    "utf8-byte-order-mark": ("\ufeff" + CLEAN).encode("utf-8"),
    "crlf-line-ends": CLEAN.replace("\n", "\r\n").encode("utf-8"),
    "bom-and-crlf": ("\ufeff" + CLEAN.replace("\n", "\r\n")).encode("utf-8"),
    "numbers-as-text": CLEAN.replace("{p: 1}", "{p: '1'}").replace("[[0, 1]]}\n  y", "[['0', '1']]}\n  y").encode(),
    # sympy's names for i, infinity, complex infinity: as coordinates they are plain symbols here
    "sympy-names-as-coordinates": CLEAN.replace("x1", "I").replace("y1", "zoo").encode(),
}


@pytest.mark.parametrize("name", sorted(ACCEPTED))
def test_an_odd_but_valid_file_gives_the_clean_files_verdicts(capsys, tmp_path, name):
    path = tmp_path / f"{name}.yaml"
    path.write_bytes(ACCEPTED[name])
    assert verdicts(capsys, ["check", str(path), *CONDITIONS, *QUICK]) == _clean(capsys, tmp_path)


REFUSED = {
    "utf16-with-bom": (CLEAN.encode("utf-16"), "not UTF-8 text"),
    "utf8-bom-only": ("\ufeff".encode("utf-8"), "must be a YAML mapping"),
    "zero-bytes": (b"", "must be a YAML mapping"),
    "blank-lines-only": (b"  \n\n\t\n", "bad YAML"),
    "lone-cr-line-ends-with-a-tab": (CLEAN.replace("\n", "\r").replace("  x:", "\tx:").encode(), "bad YAML"),
    "windows-1252-quotes": (CLEAN.replace("id: clean", "id: clean\ntitle: \x93c\x94").encode("latin-1"),
                            "not UTF-8 text"),
    "escape-sequence-in-file-name": (CLEAN.replace("id: clean", "id: [unclosed").encode(), "bad YAML"),
}


@pytest.mark.parametrize("name", sorted(REFUSED))
def test_an_unreadable_file_is_one_line_naming_it(capsys, tmp_path, name):
    data, phrase = REFUSED[name]
    stem = "\x1b[31mred" if name == "escape-sequence-in-file-name" else name
    path = tmp_path / f"{stem}.yaml"
    path.write_bytes(data)
    # the line names the file with its escape character as a code, never raw
    shown = str(path).replace("\x1b", "\\x1b")
    assert_refused(capsys, ["check", str(path)], shown, phrase)


def test_an_unknown_option_of_any_length_is_one_short_line(capsys):
    line = assert_refused(capsys, ["check", "x.yaml", "--" + "x" * 5000], "--xxx", "unrecognized arguments")
    assert len(line) <= 700


def test_no_command_prints_the_list_and_says_what_is_missing(capsys):
    code, out, lines = run(capsys, [])
    assert code == 2 and "COMMAND" in out
    assert len(lines) == 1 and lines[0].startswith("costcheck: usage error: give a command"), lines


@pytest.mark.parametrize("argv, names, phrase", [
    (["check", "a\x00b.yaml"], "a\\x00b.yaml", "NUL character"),
    (["check", "/tmp/" + "a" * 5000 + ".yaml"], "/tmp/aaaa", "File name too long"),
    (["show", "/tmp/" + "b" * 5000 + ".yaml"], "/tmp/bbbb", "File name too long"),
    (["explain", "x" * 10000], "'xxxx", "nothing to explain"),
])
def test_an_impossible_path_or_name_is_one_short_line(capsys, argv, names, phrase):
    line = assert_refused(capsys, argv, names, phrase)
    assert len(line) <= 700
