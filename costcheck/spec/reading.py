"""Reading a cost file up to its validated shape: the stages that need no mathematics.

1. the file itself (size limit, UTF-8), 2. YAML with a *safe* loader that also refuses
duplicate keys (PyYAML would silently keep the last one) and aliases (which can blow a
small file up in memory), 3. the JSON Schema of :mod:`costcheck.spec.schema`.

This module imports only PyYAML and jsonschema, so a run that finds every result in the
cache (:mod:`costcheck.run.cache`) never pays for sympy, SciPy or JAX.  The meaning of a
file (expressions, names, domains) is :mod:`costcheck.spec.loader`'s job.
"""

from __future__ import annotations

from functools import lru_cache
from pathlib import Path
from typing import Any

import jsonschema
import yaml

from ..errors import CostFileError
from .schema import COST_FILE_SCHEMA

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
            key = self.construct_object(key_node, deep=deep)
            try:
                duplicate = key in seen
            except TypeError:  # Fix: a list or mapping as a key crashed here with TypeError
                raise yaml.MarkedYAMLError(
                    None, None, "a key must be a plain value, not a list or mapping", key_node.start_mark
                ) from None
            if duplicate:
                raise yaml.MarkedYAMLError(
                    None, None, f"the key '{key}' appears twice in one mapping", key_node.start_mark
                )
            seen.add(key)
        return super().construct_mapping(node, deep=deep)


def read_yaml(text: str, file: str | None = None) -> Any:
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
        raise CostFileError(f"bad YAML: a value cannot be read ({exc})", file=file) from None


# --------------------------------------------------------------------------- schema


def _field_path(parts) -> str:
    out = ""
    for part in parts:
        out += f"[{part}]" if isinstance(part, int) else (f".{part}" if out else str(part))
    return out


@lru_cache(maxsize=1)
def _validator() -> jsonschema.Draft202012Validator:
    # built once per process: a catalog run validates every file against the same schema
    return jsonschema.Draft202012Validator(COST_FILE_SCHEMA)


def validate_shape(data: Any, file: str | None = None) -> None:
    """Check ``data`` against the cost-file JSON Schema; raise on the most relevant error."""
    if not isinstance(data, dict):
        raise CostFileError("a cost file must be a YAML mapping (key: value lines)", file=file)
    error = jsonschema.exceptions.best_match(_validator().iter_errors(data))
    if error is None:
        return
    path = list(error.absolute_path)
    if error.validator == "additionalProperties":
        allowed = sorted(error.schema.get("properties", {}))
        extra = sorted(set(error.instance) - set(allowed)) if isinstance(error.instance, dict) else []
        message = f"unknown key '{extra[0] if extra else '?'}'; allowed here: {', '.join(allowed)}"
    elif error.validator == "required":
        message = error.message.replace("is a required property", "is missing (it is required)")
    elif error.validator in ("minProperties", "maxProperties") and path and path[-1] in ("x", "y"):
        message = "give exactly one of 'box' or 'ball'"
    elif error.validator in ("minProperties", "maxProperties") and path[:1] == ["data"] and len(path) == 2:
        message = "give exactly one of 'density' or 'points'"
    elif error.validator == "pattern" and path[:1] == ["data"] and path[-1] == "points":
        message = f"{error.instance!r} must name a .csv file"
    elif error.validator == "pattern" and path and path[0] in ("x", "y", "params", "define"):
        message = f"{error.instance!r} is not a valid name (letters, digits and _, not starting with a digit)"
    elif error.validator == "propertyNames":
        message = f"not a valid name: {error.message}"
    else:
        message = error.message
    raise CostFileError(message, file=file, field=_field_path(path) or None)


def read_cost_text(path: str | Path) -> str:
    """The text of one cost file, or a :class:`CostFileError` naming it."""
    path = Path(path)
    file = str(path)
    try:
        size = path.stat().st_size
        if size > MAX_FILE_BYTES:
            raise CostFileError(f"the file is {size} bytes; cost files are limited to {MAX_FILE_BYTES}", file=file)
        return path.read_text(encoding="utf-8")
    except FileNotFoundError:
        raise CostFileError("no such file", file=file) from None
    except IsADirectoryError:
        raise CostFileError("is a folder, not a cost file", file=file) from None
    except UnicodeDecodeError:
        raise CostFileError("not UTF-8 text", file=file) from None
    except OSError as exc:
        raise CostFileError(f"cannot read: {exc.strerror}", file=file) from None


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
        if path.is_dir():
            found.extend(sorted(
                p for p in path.rglob("*")
                if p.suffix.lower() in COST_FILE_SUFFIXES and p.is_file()
                # hidden files and folders (.git, editor swap files) are not part of a catalog
                and not any(part.startswith(".") for part in p.relative_to(path).parts)
            ))
        elif path.exists():
            found.append(path)
        else:
            raise CostFileError("no such file or folder", file=str(path))
    return found
