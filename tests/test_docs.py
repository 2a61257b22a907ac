"""The repository's own account of its answers (``docs/``) is complete, agrees with the code, and
the repository points nowhere outside itself.

- every condition of the registry, every code and every evidence kind has a section in
  ``docs/`` and an entry that ``costcheck explain`` prints in 80 columns;
- each code's words in ``model/verdict.CODE_MEANINGS`` (the JSON's ``code_meaning``) open its
  entry in ``docs/codes.md``, and the JSON's ``docs`` links land on existing sections;
- ``docs/check-values.md`` holds exactly the check-value rows ``tests/test_catalog.py`` tests;
- ``docs/cost-files.md`` lists exactly the fields of the cost-file JSON Schema, with the same
  required fields and allowed words;
- every relative link in the Markdown pages resolves inside the repository, and no file of the
  repository names a path outside it.
"""

from __future__ import annotations

import io
import os
import re
import subprocess
from contextlib import redirect_stderr, redirect_stdout
from pathlib import Path

import pytest

from costcheck.cli import main
from costcheck.cli.explain import WIDTH, anchor, entries, find, plain_text
from costcheck.conditions import REGISTRY
from costcheck.model.verdict import (
    CODE_MEANINGS,
    CODES,
    EVIDENCE_KINDS,
    UNLISTED_CODE,
    Evidence,
    Verdict,
    docs_links,
)
from costcheck.spec.schema import COST_FILE_SCHEMA, VERDICT_WORDS

ROOT = Path(__file__).resolve().parent.parent
DOCS = ROOT / "docs"
ENTRIES = entries(DOCS)
ALL_CODES = sorted(set(CODES.values()) | {UNLISTED_CODE})


def section(page: str, name: str) -> str:
    entry = ENTRIES.get(anchor(name))
    assert entry is not None and entry.page == page, f"docs/{page} has no section for {name!r}"
    return entry.body


# --------------------------------------------------------------------------- entries


@pytest.mark.parametrize("condition", list(REGISTRY))
def test_every_condition_has_a_section_and_an_explain_entry(condition):
    body = section("conditions.md", condition)
    assert "Verdicts:" in body or "Verdict words:" in body, f"the section {condition} does not list its verdicts"
    for word in [*VERDICT_WORDS[condition], *(v for c, v in CODES if c == condition)]:
        assert f"`{word}`" in body, f"the section {condition} does not name its verdict {word!r}"
    text = plain_text(find(condition, ENTRIES))
    assert max(len(line) for line in text.splitlines()) <= WIDTH


@pytest.mark.parametrize("code", ALL_CODES)
def test_every_code_has_its_meaning_and_an_entry(code):
    body = section("codes.md", code)
    first = body.split("\n\n", 1)[0]
    assert first == f"**{code}** — {CODE_MEANINGS[code]}.", (
        f"docs/codes.md#{code.lower()} must open with the words of CODE_MEANINGS[{code!r}]")
    text = plain_text(find(code, ENTRIES))
    assert max(len(line) for line in text.splitlines()) <= WIDTH


def test_the_codes_and_their_meanings_are_the_same_set():
    assert set(CODE_MEANINGS) == set(ALL_CODES)
    # a code's entry names its condition and verdict word: the meaning of a code is not a guess
    for (condition, verdict), code in CODES.items():
        assert f"Condition `{condition}`, verdict `{verdict}`." in section("codes.md", code), code


@pytest.mark.parametrize("kind", EVIDENCE_KINDS)
def test_every_evidence_kind_has_a_section(kind):
    assert section("evidence.md", kind).strip()


def test_every_verdict_word_is_defined():
    table = section("conditions.md", "verdict-words")
    words = {w for ws in VERDICT_WORDS.values() for w in ws} | {v for _, v in CODES} | {"undecided"}
    for word in sorted(words):
        assert f"| `{word}` |" in table, f"the verdict word {word!r} is not in docs/conditions.md#verdict-words"


def test_every_condition_has_its_worst_value_in_the_margins_table():
    table = section("evidence.md", "margins")
    for condition in REGISTRY:
        assert re.search(rf"^\|[^|]*`{condition}`", table, re.M), f"{condition} is missing from the margins table"


def test_every_field_of_a_verdict_in_json_is_described():
    described = section("evidence.md", "reading-the-json") + section("evidence.md", "refuted")
    document = Verdict("mtw", "fails", Evidence("refuted", "demo")).to_json(["x1"], ["y1"])
    for key in document:
        assert f"`{key}`" in described, f"the JSON field {key!r} is not described in docs/evidence.md"


@pytest.mark.parametrize(("condition", "verdict"), list(CODES))
def test_json_links_land_on_sections(condition, verdict):
    document = Verdict(condition, verdict, Evidence("sampled", "demo")).to_json(["x1"], ["y1"])
    assert document["code_meaning"] == CODE_MEANINGS[document["code"]]
    assert document["docs"] == docs_links(condition, document["code"])
    for link in document["docs"].values():
        page, _, name = link.removeprefix("docs/").partition("#")
        assert ENTRIES[name].page == page, link


# --------------------------------------------------------------------------- the command


def run(*argv: str) -> tuple[int, str, str]:
    out, err = io.StringIO(), io.StringIO()
    with redirect_stdout(out), redirect_stderr(err):
        code = main(list(argv))
    return code, out.getvalue(), err.getvalue()


@pytest.mark.parametrize("name", ["mtw-fails", "MTW-Fails", "mtw", "A3w", "sampled", "not-applicable", "target_c_convex"])
def test_explain_prints_an_entry(name):
    code, out, err = run("explain", name)
    assert code == 0 and not err
    entry = find(name, ENTRIES)
    assert out.splitlines()[0].endswith(entry.link)
    assert max(len(line) for line in out.splitlines()) <= WIDTH


def test_explain_of_a_code_says_its_meaning():
    code, out, _ = run("explain", "mtw-fails")
    assert code == 0 and CODE_MEANINGS["mtw-fails"] in " ".join(out.split())


def test_explain_without_a_name_lists_every_condition_and_code():
    code, out, _ = run("explain")
    flat = " ".join(out.split())
    assert code == 0
    for name in [*REGISTRY, *ALL_CODES, *EVIDENCE_KINDS]:
        assert re.search(rf"(?<![\w-]){re.escape(name)}(?![\w-])", flat), name


def test_explain_of_an_unknown_name_is_one_line_and_exit_2():
    code, out, err = run("explain", "no-such-thing")
    assert code == 2 and not out
    assert len(err.strip().splitlines()) == 1 and "no-such-thing" in err


# --------------------------------------------------------------------------- check values


def check_value_rows() -> dict[str, dict]:
    """``docs/check-values.md`` read back: row name → verdicts, sources and catalog files."""
    rows = {}
    text = (DOCS / "check-values.md").read_text(encoding="utf-8")
    for block in re.split(r"^### ", text, flags=re.M)[1:]:
        head, _, body = block.partition("\n")
        fields = dict(re.findall(r"^- (verdicts|source|catalog): (.*)$", body, re.M))
        rows[head.strip().strip("`")] = {
            "verdicts": dict(item.split(" ") for item in fields["verdicts"].split(", ")),
            "sources": tuple(fields["source"].split(" | ")),
            "files": tuple(re.findall(r"`([^`]+)`", fields["catalog"])),
        }
    return rows


def test_the_check_value_page_is_the_table_the_tests_use():
    # tests/test_catalog.py turns these rows into test cases; the page must say exactly the same
    from test_catalog import REFERENCE_ROWS

    documented = check_value_rows()
    assert list(documented) == list(REFERENCE_ROWS)
    for name, row in REFERENCE_ROWS.items():
        assert documented[name] == {"verdicts": row.verdicts, "sources": row.sources, "files": row.files}, name


# --------------------------------------------------------------------------- cost files


def schema_fields(schema: dict, prefix: str = "") -> dict[str, dict]:
    """Every named field of the schema by dotted path, with whether its parent requires it."""
    out = {}
    required = set(schema.get("required", ()))
    for name, sub in schema.get("properties", {}).items():
        path = f"{prefix}{name}"
        out[path] = {"required": name in required, "schema": sub}
        out.update(schema_fields(sub, f"{path}."))
    return out


def documented_fields() -> dict[str, dict]:
    text = (DOCS / "cost-files.md").read_text(encoding="utf-8")
    table = text.split("## Fields", 1)[1].split("\n\n", 2)[1]
    rows = {}
    for line in table.splitlines()[2:]:
        cells = [c.strip() for c in re.split(r"(?<!\\)\|", line.strip().strip("|"))]
        rows[cells[0].strip("`")] = {"required": cells[1], "text": cells[2]}
    return rows


def test_the_cost_file_page_lists_exactly_the_schema_fields():
    fields, documented = schema_fields(COST_FILE_SCHEMA), documented_fields()
    assert set(documented) == set(fields), (
        f"in the schema only: {sorted(set(fields) - set(documented))}; "
        f"in docs/cost-files.md only: {sorted(set(documented) - set(fields))}")
    for path, field in fields.items():
        said = documented[path]["required"]
        if said == "—":  # one of two alternatives: the schema's exactly-one-of (min = max = 1 property, or
            # "not both" when an optional companion such as data.*.layout may stand beside one of them)
            parent = COST_FILE_SCHEMA
            for part in path.split(".")[:-1]:
                parent = parent["properties"][part]
            exclusive = parent.get("maxProperties") == 1 or path.split(".")[-1] in parent.get("not", {}).get("required", ())
            assert not field["required"] and exclusive, f"{path} is not an alternative"
        else:
            assert said == ("yes" if field["required"] else "no"), f"docs/cost-files.md: {path} required {said!r}"
        for word in field["schema"].get("enum", ()):
            assert f"`{word}`" in documented[path]["text"], f"docs/cost-files.md: {path} does not name {word!r}"


# --------------------------------------------------------------------------- links and paths


def repository_files() -> list[Path]:
    """The repository's files: tracked and new ones (not ignored), or every file outside caches."""
    try:
        listed = subprocess.run(["git", "ls-files", "-co", "--exclude-standard"], cwd=ROOT, capture_output=True,
                                text=True, check=True, timeout=60).stdout.splitlines()
        return [ROOT / name for name in listed if (ROOT / name).is_file()]
    except (OSError, subprocess.SubprocessError):
        skip = {".git", ".venv", "__pycache__", ".pytest_cache", ".hypothesis", "build"}
        return [p for p in ROOT.rglob("*") if p.is_file() and not skip & set(p.relative_to(ROOT).parts)
                and not p.name.endswith(".egg-info")]


def text_of(path: Path) -> str | None:
    try:
        return path.read_text(encoding="utf-8")
    except (UnicodeDecodeError, OSError):
        return None


#: what names a place outside the repository (written in pieces so this file does not match itself)
OUTSIDE = re.compile("|".join([r"/" + "work/", r"/" + "home/", r"/" + "Users/", "shared" + "/reference",
                               "file" + "://"]))
RELATIVE = re.compile(r"(?:\.\./)+[\w./-]*")


def test_no_file_points_outside_the_repository():
    offending = []
    for path in repository_files():
        text = text_of(path)
        if text is None:
            continue
        rel = path.relative_to(ROOT).as_posix()
        for match in OUTSIDE.finditer(text):
            offending.append(f"{rel}: {match.group(0)!r}")
        for match in RELATIVE.finditer(text):
            target = os.path.normpath(path.parent / match.group(0))
            if not Path(target).is_relative_to(ROOT):
                offending.append(f"{rel}: {match.group(0)!r} leaves the repository")
    assert not offending, "files that point outside the repository:\n" + "\n".join(offending)


MARKDOWN_LINK = re.compile(r"\[[^\]]+\]\(([^)\s]+)\)")


def test_every_relative_link_in_the_pages_resolves():
    pages = [ROOT / "README.md", ROOT / "DEVELOPERS.md", *sorted(DOCS.glob("*.md"))]
    broken = []
    for page in pages:
        for target in MARKDOWN_LINK.findall(page.read_text(encoding="utf-8")):
            if "://" in target or target.startswith("mailto:"):
                continue
            file, _, name = target.partition("#")
            resolved = (page.parent / file).resolve() if file else page
            if not resolved.is_relative_to(ROOT) or not resolved.exists():
                broken.append(f"{page.relative_to(ROOT)}: {target}")
            elif name and resolved.parent == DOCS and resolved.suffix == ".md":
                headings = {anchor(h) for h in re.findall(r"^#+ (.*)$", resolved.read_text(encoding="utf-8"), re.M)}
                if name not in headings:
                    broken.append(f"{page.relative_to(ROOT)}: {target} (no such section)")
    assert not broken, broken


def test_every_code_says_its_condition_and_verdict():
    # issue 20: a code is read without a table — the condition and the verdict word it stands for
    assert all(code == f"{condition}-{verdict}" for (condition, verdict), code in CODES.items())


def test_explain_shows_code_spans_verbatim():
    # a power written `d1**2` must not lose its asterisks to the removal of bold markup
    from costcheck.cli.explain import Entry

    body = ("The cost `d1**2 + d2**2` is **smooth**; ``a`b`` quotes a tick; see "
            "[`twist`](conditions.md#twist) and [the margins](#margins).")
    text = " ".join(plain_text(Entry("demo", "evidence.md", "A `c**2` **demo**", body)).split())
    assert text.startswith("A c**2 demo — docs/evidence.md#demo")
    assert ("The cost d1**2 + d2**2 is smooth; a`b quotes a tick; see twist (docs/conditions.md#twist) and "
            "the margins (docs/evidence.md#margins).") in text
