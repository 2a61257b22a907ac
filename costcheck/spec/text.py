"""Printable text: what every key and string of a cost file must be, and how a field is named.

Imports only ``re`` and the errors, so the light path (a run served from the cache) can use it.
"""

from __future__ import annotations

import re
from typing import Any

from ..errors import CostFileError


def field_path(parts) -> str:
    """``domain.x.box[0]`` from the parts of a path into the document."""
    out = ""
    for part in parts:
        out += f"[{part}]" if isinstance(part, int) else (f".{part}" if out else str(part))
    return out


# C0 controls but tab and newline, DEL, C1 controls: an escape sequence in a title would reach
# the terminal raw (rich prints them as given) and can clear or rewrite the screen; and the
# bidirectional overrides and isolates, which make a line display in an order other than the one
# it is read in (Boucher and Anderson, "Trojan Source", USENIX Security 2023)
_CONTROL = re.compile("[\x00-\x08\x0b-\x1f\x7f-\x9f\u202a-\u202e\u2066-\u2069]")
# a lone surrogate ("\ud800" in a double-quoted string) is text no UTF-8 output can hold
_SURROGATE = re.compile("[\ud800-\udfff]")


def check_printable(data: Any, file: str | None, path: tuple = ()) -> None:
    """Refuse non-printing characters and lone surrogates in every key and string of the document."""
    stack = [(data, path)]
    while stack:  # iterative: a deeply nested document cannot overflow the stack here
        value, where = stack.pop()
        if isinstance(value, dict):
            for key, item in value.items():
                _check_string(key, file, where, key=True)
                stack.append((item, where + (key,)))
        elif isinstance(value, list):
            stack.extend((item, where + (k,)) for k, item in enumerate(value))
        else:
            _check_string(value, file, where)


def _check_string(value: Any, file: str | None, where: tuple, key: bool = False) -> None:
    if not isinstance(value, str):
        return
    for pattern, what in ((_SURROGATE, "a lone surrogate"), (_CONTROL, "the non-printing character")):
        found = pattern.search(value)
        if found:
            code = repr(found.group())[1:-1]  # \x1b or \ud800, never the raw character
            place = f"the key {_short(value)}" if key else "the text"
            raise CostFileError(f"{place} contains {what} {code} (at character {found.start() + 1}); "
                                f"cost files hold printable text only", file=file,
                                field=field_path(where) or None)


def _short(value: str, limit: int = 40) -> str:
    text = repr(value)
    return text if len(text) <= limit else text[: limit - 1] + "…"
