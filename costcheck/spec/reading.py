"""Reading a cost file up to its validated shape: the stages that need no mathematics.

1. the file itself (size limit, UTF-8), 2. YAML with a *safe* loader that also refuses
duplicate keys (PyYAML would silently keep the last one) and aliases (which can blow a
small file up in memory), 3. the JSON Schema of :mod:`costcheck.spec.schema`.

This module imports only PyYAML and jsonschema, so a run that finds every result in the
cache (:mod:`costcheck.run.cache`) never pays for sympy, SciPy or JAX.  The meaning of a
file (expressions, names, domains) is :mod:`costcheck.spec.loader`'s job.
"""

from __future__ import annotations

import errno
import os
import stat
from functools import lru_cache
from pathlib import Path
from typing import Any, BinaryIO

import jsonschema
import yaml

from ..errors import CostFileError
from .schema import COST_FILE_SCHEMA
from .text import check_printable, field_path

MAX_FILE_BYTES = 256 * 1024
COST_FILE_SUFFIXES = (".yaml", ".yml")


# --------------------------------------------------------------------------- YAML


class _StrictSafeLoader(yaml.SafeLoader):
    """PyYAML's safe loader, refusing aliases and duplicate mapping keys."""

    def compose_node(self, parent, index):  # noqa: D401 - PyYAML hook
        if self.check_event(yaml.AliasEvent):
            event = self.peek_event()
            raise yaml.MarkedYAMLError(None, None, "aliases (*name) are not allowed in cost files", event.start_mark)
        return super().compose_node(parent, index)

    def construct_mapping(self, node, deep=False):
        seen: set = set()
        for key_node, _ in node.value:
            if key_node.tag == "tag:yaml.org,2002:merge":
                raise yaml.MarkedYAMLError(None, None, "merge keys (<<) are not allowed in cost files",
                                           key_node.start_mark)
            key = self.construct_object(key_node, deep=deep)
            try:
                duplicate = key in seen
            except TypeError:  # Fix: a list or mapping as a key crashed here with TypeError
                raise yaml.MarkedYAMLError(
                    None, None, "a key must be a plain value, not a list or mapping", key_node.start_mark
                ) from None
            if not isinstance(key, str):
                # Fix: a key such as 2024 or 2024-01-01 beside a text key crashed later, when an
                # error message sorted the keys (int < str is a TypeError); no cost-file key is
                # anything but a name, so say so here, with the line
                kind = {bool: "true/false", int: "a whole number", float: "a number",
                        type(None): "empty (null)"}.get(type(key), f"a {type(key).__name__}")
                raise yaml.MarkedYAMLError(
                    None, None, f"the key {str(getattr(key_node, 'value', key))[:40]!r} is {kind}; keys must be "
                                f"names (text)",
                    key_node.start_mark)
            if duplicate:
                raise yaml.MarkedYAMLError(
                    None, None, f"the key '{key}' appears twice in one mapping", key_node.start_mark
                )
            seen.add(key)
        return super().construct_mapping(node, deep=deep)


def read_yaml(text: str, file: str | None = None) -> Any:
    data = _load_yaml(text, file)
    check_printable(data, file)
    return data


def _load_yaml(text: str, file: str | None) -> Any:
    try:
        return yaml.load(text, Loader=_StrictSafeLoader)  # noqa: S506 - a SafeLoader subclass
    except yaml.MarkedYAMLError as exc:
        mark = exc.problem_mark
        where = f" (line {mark.line + 1}, column {mark.column + 1})" if mark else ""
        problem = exc.problem or exc.context or "unreadable YAML"
        raise CostFileError(f"bad YAML: {problem}{where}", file=file) from None
    except yaml.YAMLError as exc:
        raise CostFileError(f"bad YAML: {exc}", file=file) from None
    except RecursionError:
        raise CostFileError("bad YAML: nested too deeply", file=file) from None
    except ValueError as exc:
        # Fix: PyYAML's constructors raise plain ValueError for an integer over Python's
        # 4300-digit limit or an impossible date (2001-02-30); this escaped as a traceback.
        detail = "a number has more than 4300 digits" if "digits" in str(exc) else " ".join(str(exc).split())[:120]
        raise CostFileError(f"bad YAML: a value cannot be read ({detail})", file=file) from None


# --------------------------------------------------------------------------- schema


@lru_cache(maxsize=1)
def _validator() -> jsonschema.Draft202012Validator:
    # built once per process: a catalog run validates every file against the same schema
    return jsonschema.Draft202012Validator(COST_FILE_SCHEMA)


_TYPE_WORDS = {"object": "a mapping (key: value lines)", "array": "a list", "string": "text", "number": "a number",
               "integer": "a whole number", "boolean": "true or false", "null": "nothing"}


def _kind_of(value: Any) -> str:
    if isinstance(value, bool):
        return "true/false"
    if value is None:
        return "nothing (null)"
    if isinstance(value, (int, float)):
        return "a number"
    if isinstance(value, str):
        return "text"
    if isinstance(value, list):
        return "a list"
    if isinstance(value, dict):
        return "a mapping"
    return f"a {type(value).__name__}"


def _short(value: Any, limit: int = 40) -> str:
    text = repr(value)
    return text if len(text) <= limit else text[: limit - 1] + "…"


def _did_you_mean(extra: list[str], allowed: list[str]) -> str:
    import difflib

    close = difflib.get_close_matches(extra[0], allowed, n=1, cutoff=0.6) if extra and len(extra[0]) <= 40 else []
    return f" (did you mean {close[0]!r}?)" if close else ""


def _plain_message(error: jsonschema.ValidationError, path: list) -> str:
    """One sentence a user can act on, instead of JSON Schema's own wording (which can quote a
    whole list back and says "is not valid under any of the given schemas")."""
    kind, schema, instance = error.validator, error.schema, error.instance
    if kind == "additionalProperties":
        allowed = sorted(schema.get("properties", {}))
        extra = sorted(str(k) for k in set(instance) - set(allowed)) if isinstance(instance, dict) else []
        return f"unknown key {_short(extra[0]) if extra else '?'}{_did_you_mean(extra, allowed)}; " \
               f"allowed here: {', '.join(allowed)}"
    if kind == "required":
        return error.message.replace("is a required property", "is missing (it is required)")
    if kind in ("minProperties", "maxProperties") and path and path[-1] in ("x", "y"):
        found = f" (found: {', '.join(_short(str(k)) for k in instance)})" if instance else ""
        return f"give exactly one of 'box' or 'ball'{found}"
    if kind in ("minProperties", "maxProperties", "not") and path[:1] == ["data"] and len(path) == 2:
        return "give exactly one of 'density' or 'points'"
    if kind == "dependentRequired" and path[:1] == ["data"]:
        return "'layout' says how CSV points are laid out: it goes with 'points', not alone or with 'density'"
    if kind == "minProperties":
        return "must not be empty"
    if kind == "maxProperties":
        return f"{len(instance)} entries; at most {schema['maxProperties']} are allowed"
    if kind == "pattern" and path[:1] == ["data"] and path[-1] == "points":
        return f"{_short(instance)} must name a .csv file"
    if kind == "pattern" and path and path[0] in ("x", "y", "params", "define"):
        return f"{_short(instance)} is not a valid name (letters, digits and _, not starting with a digit)"
    if kind == "pattern" and path == ["id"]:
        return f"{_short(instance)} is not a valid id (letters, digits, '.', '_' and '-', starting with a letter or digit)"
    if kind == "propertyNames":
        return f"{_short(instance)} is not a valid name (letters, digits and _, not starting with a digit)"
    if kind == "anyOf" and schema.get("anyOf") and {"type": "number"} in schema["anyOf"]:
        return f"expected a number or an expression in quotes, got {_kind_of(instance)}"
    if kind == "type":
        wanted = schema["type"] if isinstance(schema["type"], list) else [schema["type"]]
        return f"expected {' or '.join(_TYPE_WORDS.get(t, t) for t in wanted)}, got {_kind_of(instance)}"
    if kind == "enum":
        return f"{_short(instance)} is not allowed here; use one of: {', '.join(map(repr, schema['enum']))}"
    if kind == "maxItems":
        return f"the list has {len(instance)} entries; at most {schema['maxItems']} are allowed"
    if kind == "minItems":
        return f"the list has {len(instance)} entries; at least {schema['minItems']} are needed"
    if kind == "uniqueItems":
        repeated = next((v for i, v in enumerate(instance) if v in instance[:i]), None)
        return f"{_short(repeated)} appears twice in the list" if repeated is not None else "an entry appears twice"
    if kind == "oneOf" and not path and isinstance(instance, dict):
        both = "expr" in instance and "generating" in instance
        return ("give 'expr' (a cost) or 'generating' (a generating function G(x, y, z)), not both" if both
                else "'expr' is missing (or give 'generating' for a generating function)")
    if kind == "minLength":
        return "must not be empty"
    if kind == "maxLength":
        return f"is {len(instance)} characters long; at most {schema['maxLength']} are allowed"
    return " ".join(error.message.split())[:200]


def validate_shape(data: Any, file: str | None = None) -> None:
    """Check ``data`` against the cost-file JSON Schema; raise on the most relevant error."""
    if not isinstance(data, dict):
        raise CostFileError("a cost file must be a YAML mapping (key: value lines)", file=file)
    error = jsonschema.exceptions.best_match(_validator().iter_errors(data))
    if error is None:
        return
    path = list(error.absolute_path)
    raise CostFileError(_plain_message(error, path), file=file, field=field_path(path) or None)


def _describe_kind(mode: int) -> str:
    if stat.S_ISDIR(mode):
        return "is a folder, not a cost file"
    if stat.S_ISFIFO(mode):
        return "is a named pipe, not a regular file; only regular files are read"
    if stat.S_ISCHR(mode) or stat.S_ISBLK(mode):
        return "is a device (such as /dev/zero), not a regular file; only regular files are read"
    if stat.S_ISSOCK(mode):
        return "is a socket, not a regular file; only regular files are read"
    return "is not a regular file; only regular files are read"


def open_regular_file(path: str | Path, label: str | None = None) -> BinaryIO:
    """Open ``path`` for reading only if it is a regular file (after following links).

    The one door every input file goes through.  The file is opened without blocking (a named
    pipe with no writer would otherwise wait for ever) and its kind is checked on the open
    descriptor, so a link swapped between a check and the read cannot slip a device through.
    """
    label = label or str(path)
    flags = os.O_RDONLY | getattr(os, "O_NONBLOCK", 0) | getattr(os, "O_NOCTTY", 0)
    try:
        fd = os.open(path, flags)
    except FileNotFoundError:
        if os.path.islink(path):
            raise CostFileError("is a symbolic link to a file that does not exist", file=label) from None
        raise CostFileError("no such file", file=label) from None
    except IsADirectoryError:
        raise CostFileError("is a folder, not a cost file", file=label) from None
    except OSError as exc:
        if exc.errno == errno.ELOOP:
            raise CostFileError("is a symbolic link loop (or a chain of too many links)", file=label) from None
        raise CostFileError(f"cannot read: {exc.strerror or exc}", file=label) from None
    try:
        mode = os.fstat(fd).st_mode
    except OSError as exc:
        os.close(fd)
        raise CostFileError(f"cannot read: {exc.strerror or exc}", file=label) from None
    if not stat.S_ISREG(mode):
        os.close(fd)
        raise CostFileError(_describe_kind(mode), file=label)
    return os.fdopen(fd, "rb")


def read_capped_bytes(path: str | Path, limit: int, label: str | None = None, *, kind: str = "cost files") -> bytes:
    """The bytes of a regular file, refusing it as soon as more than ``limit`` bytes arrive.

    The cap is checked while reading, not from the size the file claims (a link to a device,
    or a file growing while it is read, reports a size that means nothing).
    """
    label = label or str(path)
    with open_regular_file(path, label) as handle:
        try:
            data = handle.read(limit + 1)
        except OSError as exc:
            raise CostFileError(f"cannot read: {exc.strerror or exc}", file=label) from None
    if len(data) > limit:
        raise CostFileError(f"the file is larger than {limit} bytes; {kind} are limited to {limit} bytes", file=label)
    return data


def read_cost_text(path: str | Path) -> str:
    """The text of one cost file, or a :class:`CostFileError` naming it."""
    file = str(path)
    data = read_capped_bytes(path, MAX_FILE_BYTES, file)
    try:
        return data.decode("utf-8")
    except UnicodeDecodeError:
        raise CostFileError("not UTF-8 text", file=file) from None


def read_cost_data(path: str | Path) -> dict:
    """Read one cost file and check its shape: the mapping the loader gives meaning to."""
    file = str(path)
    data = read_yaml(read_cost_text(path), file)
    validate_shape(data, file)
    return data


def find_cost_files(paths) -> list[Path]:
    """Expand files and folders (recursively) into cost files, in a stable order."""
    found: list[Path] = []
    for raw in paths:
        path = Path(raw)
        if "\0" in str(raw):
            raise CostFileError("the path contains a NUL character", file=repr(str(raw))[1:-1][:200])
        try:
            is_dir = path.is_dir()
        except OSError as exc:  # a name too long for the file system (is_dir lets ENAMETOOLONG through)
            raise CostFileError(f"cannot read: {exc.strerror or exc}", file=str(path)) from None
        if is_dir:
            found.extend(sorted(
                p for p in path.rglob("*")
                # not only regular files: a named pipe or a link loop called *.yaml is reported
                # by the reader (open_regular_file), not skipped in silence
                if p.suffix.lower() in COST_FILE_SUFFIXES and not p.is_dir()
                # hidden files and folders (.git, editor swap files) are not part of a catalog
                and not any(part.startswith(".") for part in p.relative_to(path).parts)
            ))
        elif os.path.lexists(path):
            # a symbolic link loop or a dangling link exists but cannot be followed: the reader
            # says which, instead of "no such file"
            found.append(path)
        else:
            raise CostFileError("no such file or folder", file=str(path))
    return found
