"""``costcheck new NAME``: a commented cost file to start from.

The template is a complete, valid cost (the squared Euclidean distance on two squares, whose
conditions are textbook facts) so that ``costcheck check`` passes on it before any edit; its
comments say what each field means and which are optional.
"""

from __future__ import annotations

import re
from pathlib import Path

from ..errors import UsageError
from .reading import COST_FILE_SUFFIXES

TEMPLATE = """\
# A costcheck cost file.  Check it with:  costcheck check {file}
# Editors can validate and complete it with the schema printed by `costcheck schema`.
id: {id}                              # unique in a catalog; letters, digits, . _ -
title: Squared Euclidean distance     # one line a reader sees in reports
sense: cost                           # cost (minimised) | surplus (maximised; checked as -s)
x: [x1, x2]                           # source coordinates (names used below)
y: [y1, y2]                           # target coordinates
params: {{}}                            # named constants, e.g. {{p: 0.5}}; optional
define:                               # helper expressions; optional
  r2: (x1 - y1)**2 + (x2 - y2)**2
expr: r2 / 2                          # + - * / ** sqrt exp log sin cos ... of the names above
domain:
  x: {{box: [[-1, 1], [-1, 1]]}}          # one [low, high] per coordinate, or {{ball: {{center: [0, 0], radius: 1}}}}
  y: {{box: [[-1, 1], [-1, 1]]}}
  # where: ["x1 + x2 <= 1"]           # constraints on one side's names; optional
  # pairs: ["r2 >= 0.01"]             # constraints on (x, y) jointly, e.g. to leave out x = y
# Expected verdicts (twist, nondegenerate: holds | fails; mtw: strong | weak | fails; nncc: holds | fails).
# Write only what a published source establishes: `costcheck check` exits 1 when one is not met.
expect: {{twist: holds, nondegenerate: holds, mtw: weak, nncc: holds}}
source: "Ma, Trudinger, Wang 2005 (squared distance: MTW weak, not strong); replace with your cost's source"
notes: >
  What the chart and domain are, and why any region is left out.
"""


def template_text(cost_id: str, file: str) -> str:
    return TEMPLATE.format(id=cost_id, file=file)


def write_template(name: str) -> Path:
    """Write the template to ``name`` (``.yaml`` added when it has no YAML suffix); never overwrite."""
    path = Path(name)
    if path.suffix.lower() not in COST_FILE_SUFFIXES:
        path = path.with_name(path.name + ".yaml")
    cost_id = re.sub(r"[^A-Za-z0-9._-]+", "-", path.stem).strip("-._") or "new-cost"
    if not cost_id[0].isalnum():
        cost_id = "c" + cost_id
    try:
        with path.open("x", encoding="utf-8") as handle:  # "x": fails if the file exists
            handle.write(template_text(cost_id, str(path)))
    except FileExistsError:
        raise UsageError(f"{path} already exists; not overwriting it (choose another name or delete it)") from None
    except OSError as exc:
        raise UsageError(f"cannot write {path}: {exc.strerror}") from None
    return path
