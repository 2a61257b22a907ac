"""The package's shape: one direction of flow, no import cycles, no private names across modules,
and a condition registry that agrees with its modules, codes and verdict words.

The layers, lowest first (a module may import from its own layer's folder and from lower layers
only): errors and defaults; derivatives; model; spec and numerics; certify; conditions; run,
render and bench; api; sweep; cli.  This is the project's own rule (DEVELOPERS.md), kept by
parsing every import with :mod:`ast`.
"""

from __future__ import annotations

import ast
import importlib
import re
from pathlib import Path

import pytest

PACKAGE = Path(__file__).resolve().parent.parent / "costcheck"

#: top-level folder or module → layer (lowest first); one folder per layer entry
LAYERS = {
    "costcheck": 0, "errors": 0, "defaults": 0,
    "derivatives": 1,
    "model": 2,
    "spec": 3, "numerics": 3,
    "certify": 4,
    "conditions": 5,
    "run": 6, "render": 6, "bench": 6,
    "api": 7,
    "sweep": 8,
    "cli": 9,
    "__main__": 10,
}


def modules() -> dict[str, tuple[Path, bool]]:
    out = {}
    for path in PACKAGE.rglob("*.py"):
        parts = ["costcheck", *path.relative_to(PACKAGE).with_suffix("").parts]
        package = parts[-1] == "__init__"
        if package:
            parts = parts[:-1]
        out[".".join(parts)] = (path, package)
    return out


MODULES = modules()


def imports(name: str):
    """``(target module, imported name or None, line, module-level?)`` for every import of ``name``."""
    path, package = MODULES[name]
    tree = ast.parse(path.read_text(encoding="utf-8"))
    top = {id(node) for node in tree.body}
    for node in ast.walk(tree):
        if isinstance(node, ast.ImportFrom):
            if node.level:
                base = name.split(".") if package else name.split(".")[:-1]
                base = base[: len(base) - (node.level - 1)]
                module = ".".join(base + (node.module.split(".") if node.module else []))
            else:
                module = node.module or ""
            if module != "costcheck" and not module.startswith("costcheck."):
                continue
            for alias in node.names:
                full = f"{module}.{alias.name}"
                if full in MODULES:
                    yield full, None, node.lineno, id(node) in top
                else:
                    yield module, alias.name, node.lineno, id(node) in top
        elif isinstance(node, ast.Import):
            for alias in node.names:
                if alias.name.startswith("costcheck"):
                    yield alias.name, None, node.lineno, id(node) in top


def layer_of(module: str) -> str:
    parts = module.split(".")
    return parts[1] if len(parts) > 1 else "costcheck"


def test_every_top_level_folder_has_a_layer():
    assert {layer_of(m) for m in MODULES} <= set(LAYERS), "a new top-level folder or module needs a place in LAYERS"


def test_imports_point_down_the_layers():
    wrong = []
    for name in MODULES:
        here = layer_of(name)
        for target, _, line, _ in imports(name):
            there = layer_of(target)
            if there != here and LAYERS[there] >= LAYERS[here]:
                wrong.append(f"{name}:{line} imports {target} ({there} is not below {here})")
    assert not wrong, "imports against the flow:\n" + "\n".join(wrong)


def test_no_import_cycles():
    graph = {name: {t for t, _, _, _ in imports(name) if t in MODULES and t != name} for name in MODULES}
    # a package imports its own submodules' names when it re-exports them; that is not a cycle
    # unless the submodule imports the package back, which the graph below still sees
    seen, stack, on_stack, cycles = {}, [], set(), []

    def visit(v, counter=[0]):
        seen[v] = low = counter[0]
        counter[0] += 1
        stack.append(v)
        on_stack.add(v)
        lows = [low]
        for w in graph[v]:
            if w not in seen:
                lows.append(visit(w))
            elif w in on_stack:
                lows.append(seen[w])
        low = min(lows)
        if low == seen[v]:
            component = []
            while True:
                w = stack.pop()
                on_stack.discard(w)
                component.append(w)
                if w == v:
                    break
            if len(component) > 1:
                cycles.append(sorted(component))
        return low

    for v in graph:
        if v not in seen:
            visit(v)
    assert not cycles, f"import cycles: {cycles}"


def test_no_private_name_crosses_a_module():
    crossing = []
    for name, (path, _) in MODULES.items():
        bound = {}
        for target, imported, line, _ in imports(name):
            if imported and imported.startswith("_") and not imported.startswith("__"):
                crossing.append(f"{name}:{line} imports {target}.{imported}")
        tree = ast.parse(path.read_text(encoding="utf-8"))
        for node in ast.walk(tree):
            if isinstance(node, ast.ImportFrom):
                for alias in node.names:
                    bound[alias.asname or alias.name] = alias.name
        for node in ast.walk(tree):
            if (isinstance(node, ast.Attribute) and isinstance(node.value, ast.Name) and node.value.id in bound
                    and node.attr.startswith("_") and not node.attr.startswith("__")):
                module_names = {m.rsplit(".", 1)[-1] for m in MODULES}
                if bound[node.value.id] in module_names:
                    crossing.append(f"{name}:{node.lineno} reads {node.value.id}.{node.attr}")
    assert not crossing, "private names used outside their module:\n" + "\n".join(crossing)


# --------------------------------------------------------------------------- the condition registry

def test_registry_agrees_with_the_condition_modules_codes_and_words():
    from costcheck.conditions import REGISTRY
    from costcheck.model.verdict import CODES
    from costcheck.spec.schema import VERDICT_WORDS

    for condition, module_name in REGISTRY.items():
        module = importlib.import_module(f"costcheck.conditions.{module_name}")
        assert module.CONDITION == condition
        assert callable(module.check)
        doc = module.__doc__ or ""
        assert re.search(r"\b(19|20)\d\d\b", doc), f"{module_name}: the docstring cites no paper with its year"
        assert condition in VERDICT_WORDS, f"{condition} has no verdict words a file can expect"
        for word in (*VERDICT_WORDS[condition], "undecided"):
            assert (condition, word) in CODES, f"no code for {condition}: {word}"


def test_every_public_module_of_conditions_is_registered():
    from costcheck.conditions import REGISTRY

    folder = PACKAGE / "conditions"
    public = {p.stem for p in folder.glob("*.py") if not p.stem.startswith("_")}
    public |= {p.name for p in folder.iterdir() if p.is_dir() and (p / "__init__.py").exists()}
    helpers = {"context", "engines"}  # what every check reads, and the steps two conditions share
    assert public - helpers == set(REGISTRY.values())


@pytest.mark.parametrize("name", sorted(n for n in MODULES if n.startswith("costcheck.conditions.")
                                        and n.count(".") == 2 and not n.endswith((".context", ".engines"))))
def test_condition_modules_stay_short(name):
    path, package = MODULES[name]
    files = [path] if not package else sorted(path.parent.glob("*.py"))
    for file in files:
        lines = len(file.read_text(encoding="utf-8").splitlines())
        assert lines <= 300, f"{file.relative_to(PACKAGE)} has {lines} lines; split a named step out of it"


def test_catalog_verdicts_are_those_of_the_snapshot():
    """No change altered a catalog verdict unnoticed: every file's verdicts, codes and evidence
    kinds equal the stored snapshot (tests/catalog_snapshot.py says how and when to renew it)."""
    from catalog_snapshot import SNAPSHOT, verdict_table

    expected = SNAPSHOT.read_text(encoding="utf-8").splitlines()
    got = verdict_table().splitlines()
    first = next((i for i, (a, b) in enumerate(zip(expected, got)) if a != b), min(len(expected), len(got)))
    assert got == expected, (f"the catalog's results differ from the snapshot from line {first + 1}: "
                             f"expected {expected[first:first + 3]}, got {got[first:first + 3]}")


def test_every_folder_is_a_regular_package():
    # setuptools installs only folders with an __init__.py: without one, a folder works from the
    # work tree (a namespace package) and is missing from an installed copy
    missing = sorted({str(p.parent.relative_to(PACKAGE)) for p in PACKAGE.rglob("*.py")
                      if "__pycache__" not in p.parts and not (p.parent / "__init__.py").exists()})
    assert not missing, f"folders without __init__.py: {missing}"
