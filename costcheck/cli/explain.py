"""``costcheck explain NAME``: print the entry of ``docs/`` for a condition, a code or a term.

The text is the repository's own pages, not a copy: ``docs/conditions.md`` (a section per
condition, ``## twist`` …), ``docs/codes.md`` (``### twist-holds`` …) and ``docs/evidence.md``
(``## proved`` …).  Any section heading of those pages is an entry, found by its anchor (the
heading in lower case, spaces as hyphens: ``sign-convention``), plus a few names readers use
for the same thing (``A3w``, ``cross-curvature``).  Markdown is printed as plain text wrapped
to 80 columns, so the entry reads the same in a terminal, a log or a pipe.

Where the pages are: in a clone (or an editable install) the ``docs/`` folder beside the
package; in an installed wheel, ``share/costcheck/docs`` under the installation prefix
(``pyproject.toml`` ships them as data files), found through the distribution's file list.
"""

from __future__ import annotations

import re
import sys
import textwrap
from dataclasses import dataclass
from pathlib import Path

from ..errors import EXIT_OK, CostcheckError

WIDTH = 80
#: the pages with entries, and the heading level that makes an entry on each
PAGES = {"conditions.md": 2, "codes.md": 3, "evidence.md": 2}
#: names readers use → the entry's anchor
ALIASES = {
    "a1": "twist", "spence-mirrlees": "twist", "collision": "twist",
    "a2": "nondegenerate", "non-degeneracy": "nondegenerate", "nondegeneracy": "nondegenerate",
    "a3": "mtw", "a3w": "mtw", "a3s": "mtw", "ma-trudinger-wang": "mtw", "mtw-tensor": "mtw",
    "cross-curvature": "nncc", "cross_curvature": "nncc",
    "c-segment": "c-segments", "c-convexity": "target_c_convex", "c-convex": "target_c_convex",
    "maximum-principle": "loeper", "index": "index_form", "index-form": "index_form",
    "nestedness": "nested",
    "not-applicable": "not_applicable", "witness": "refuted", "certificate": "proved",
    "enclosure": "refuted", "margin": "margins", "scale-free": "margins", "worst-value": "margins",
    "sign": "sign-convention", "surplus": "sign-convention",
    "holds": "verdict-words", "fails": "verdict-words", "strong": "verdict-words", "weak": "verdict-words",
    "verdict": "verdict-words", "verdicts": "verdict-words",
}


@dataclass(frozen=True)
class Entry:
    anchor: str
    page: str
    title: str
    body: str

    @property
    def link(self) -> str:
        return f"docs/{self.page}#{self.anchor}"


def anchor(heading: str) -> str:
    """The anchor a Markdown renderer gives a heading: lower case, no punctuation, spaces → ``-``."""
    text = heading.strip().lower().replace("`", "")
    text = re.sub(r"[^\w\- ]", "", text)
    return text.replace(" ", "-")


def docs_folder() -> Path:
    """The folder holding the documentation pages (see the module docstring)."""
    beside = Path(__file__).resolve().parents[2] / "docs"
    if (beside / "conditions.md").is_file():
        return beside
    from importlib import metadata

    try:
        files = metadata.distribution("costcheck").files or []
    except metadata.PackageNotFoundError:
        files = []
    for item in files:
        if item.as_posix().endswith("share/costcheck/docs/conditions.md"):
            return Path(item.locate()).resolve().parent
    raise CostcheckError("the documentation pages (docs/*.md) are not installed with this copy of costcheck; "
                         "read them in the repository's docs/ folder")


def entries(folder: Path | None = None) -> dict[str, Entry]:
    """Every entry of the pages, by anchor."""
    folder = folder or docs_folder()
    out: dict[str, Entry] = {}
    for page, level in PAGES.items():
        path = folder / page
        try:
            lines = path.read_text(encoding="utf-8").splitlines()
        except OSError as exc:
            raise CostcheckError(f"cannot read the documentation page {path}: {exc.strerror or exc}") from None
        current: list[str] | None = None
        for line in lines + ["#"]:
            hashes = len(line) - len(line.lstrip("#"))
            if hashes and line[hashes:hashes + 1] in (" ", ""):
                if current is not None and hashes <= level:
                    title, body = current[0], "\n".join(current[1:]).strip()
                    out.setdefault(anchor(title), Entry(anchor(title), page, title, body))
                    current = None
                if hashes == level:
                    current = [line[hashes:].strip()]
                    continue
            if current is not None:
                current.append(line)
    return out


def find(name: str, table: dict[str, Entry]) -> Entry | None:
    """The entry for a name as a reader types it (any case; ``-`` and ``_`` alike), or None."""
    key = anchor(name)
    for candidate in (key, ALIASES.get(key), key.replace("_", "-"), key.replace("-", "_")):
        if candidate in table:
            return table[candidate]
    return None


# --------------------------------------------------------------------------- plain text

_LINK = re.compile(r"\[([^\]]+)\]\(([^)\s]+)\)")
#: a code span (CommonMark: a run of backticks, closed by a run of the same length) or a link
_SPAN_OR_LINK = re.compile(r"(?P<ticks>`+)(?P<code>.+?)(?<!`)(?P=ticks)(?!`)|" + _LINK.pattern)


def _inline(text: str, page: str) -> str:
    """Markdown inline markup as plain text; a code span is shown verbatim (``d1**2`` stays as
    written), and a link into the pages shows its target."""
    def link(label: str, target: str) -> str:
        shown = _inline(label, page)
        if "://" in target:
            return f"{shown} ({target})"
        target = target if not target.startswith("#") else page + target
        return f"docs/{target}" if shown in (target.split("#")[0], target) else f"{shown} (docs/{target})"

    out, at = [], 0
    for match in _SPAN_OR_LINK.finditer(text):
        out.append(text[at:match.start()].replace("**", ""))
        if match.group("ticks"):
            code = match.group("code")
            out.append(code[1:-1] if len(code) > 2 and code[0] == code[-1] == " " else code)
        else:
            out.append(link(match.group(3), match.group(4)))
        at = match.end()
    out.append(text[at:].replace("**", ""))
    return "".join(out)


def _wrap(text: str, first: str = "", rest: str = "") -> list[str]:
    return textwrap.wrap(text, WIDTH, initial_indent=first, subsequent_indent=rest,
                         break_long_words=False, break_on_hyphens=False) or [first.rstrip()]


def plain_text(entry: Entry) -> str:
    """The entry as plain text, no line longer than :data:`WIDTH` (a word longer than that excepted)."""
    out = _wrap(f"{_inline(entry.title, entry.page)} — {entry.link}")
    blocks, block = [], []
    for line in entry.body.splitlines():
        if not line.strip():
            if block:
                blocks.append(block)
            block = []
            continue
        block.append(line)
    if block:
        blocks.append(block)
    for block in blocks:
        out.append("")
        if all(line.startswith("    ") for line in block):  # a formula or command: kept as written
            out.extend(line[:WIDTH] if len(line) > WIDTH else line for line in block)
        elif block[0].lstrip().startswith("|"):  # a table: one wrapped line per row, the header as labels
            rows = [[_inline(c.strip().replace("\\|", "|"), entry.page)
                     for c in re.split(r"(?<!\\)\|", line.strip().strip("|"))] for line in block]
            rows = [r for r in rows if not all(set(c) <= set("-: ") for c in r)]
            header, body = rows[0], rows[1:]
            for head, *tail in body:
                if len(tail) == 1:
                    text = f"{head}: {tail[0]}"
                else:
                    text = f"{head} — " + "; ".join(f"{label}: {cell}" for label, cell in zip(header[1:], tail))
                out.extend(_wrap(text, "  ", "      "))
        else:
            items, current = [], ""
            for line in block:
                stripped = line.strip()
                if stripped.startswith(("- ", "* ")) or re.match(r"\d+\. ", stripped):
                    if current:
                        items.append(current)
                    current = stripped
                else:
                    current = f"{current} {stripped}" if current else stripped
            items.append(current)
            for item in items:
                text = _inline(item, entry.page)
                if text.startswith(("- ", "* ")):
                    out.extend(_wrap(text[2:], "  - ", "    "))
                else:
                    out.extend(_wrap(text))
    return "\n".join(out) + "\n"


def index_text(table: dict[str, Entry]) -> str:
    """What can be explained, page by page."""
    out = ["costcheck explain NAME prints one entry of docs/. Entries:"]
    for page in PAGES:
        names = [e.anchor for e in table.values() if e.page == page]
        out.append("")
        out.extend(_wrap(f"docs/{page}: {', '.join(names)}", "", "  "))
    out.append("")
    out.extend(_wrap("Also: " + ", ".join(sorted(ALIASES)), "", "  "))
    return "\n".join(out) + "\n"


def run(name: str | None) -> int:
    """Print the entry for ``name`` (or the list of entries); an unknown name is bad input (exit 2)."""
    table = entries()
    if name is None:
        sys.stdout.write(index_text(table))
        return EXIT_OK
    entry = find(name, table)
    if entry is None:
        raise CostcheckError(f"nothing to explain under {name[:40]!r}: give a condition (twist, mtw, …), a code "
                             "(twist-holds, mtw-fails, …), an evidence kind (proved, sampled, …) or a term (A3w, margins); "
                             "'costcheck explain' lists them all")
    sys.stdout.write(plain_text(entry))
    return EXIT_OK
