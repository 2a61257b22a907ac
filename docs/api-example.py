# %% [markdown]
# # costcheck from Python: a notebook-style walk-through
#
# Each `# %%` block is a notebook cell (editors that read the "percent" format open it as one);
# `python docs/api-example.py` runs it top to bottom.  The budgets are small so that it runs in
# seconds: a real check uses the defaults.

# %%
import json

import costcheck

square = {"x": {"box": [[0, 1], [0, 1]]}, "y": {"box": [[0, 1], [0, 1]]}}

# %% [markdown]
# ## A cost written as an expression
# The same language as a cost file's `expr`.  `check` runs every condition; in a notebook the
# last line of a cell shows the report as a table, here we print its short text form.

# %%
quadratic = costcheck.from_expression("((x1 - y1)**2 + (x2 - y2)**2) / 2", x=["x1", "x2"], y=["y1", "y2"],
                                      domain=square, id="squared-distance")
report = costcheck.check(quadratic, budget=256, conditions=["nondegenerate", "twist", "mtw"])
print(repr(report))

# %% [markdown]
# One condition's verdict, its evidence in words, and the whole report as plain data (the
# cost's entry of `costcheck check --json`).

# %%
mtw = report.verdicts["mtw"]
print(mtw.verdict, "-", mtw.evidence.kind, "-", mtw.evidence.summary)
print(json.dumps(report.to_dict()["checks"]["mtw"]["evidence"], indent=2)[:400])
html = report._repr_html_()  # what a notebook displays
assert html.startswith("<div>") and "squared-distance" in html

# %% [markdown]
# ## A cost written as a Python function
# Any JAX-traceable `f(x, y)` of two 1-D arrays; it has no symbolic form, so `check`
# differentiates it with JAX (chosen for you).  A proof needs a formula to enclose, so here the
# evidence stays `sampled`: no counterexample among the samples, which is evidence, not proof.

# %%
import jax.numpy as jnp  # noqa: E402 - a notebook imports where it needs to


def bilinear(x, y):
    return -jnp.dot(x, y)


function_cost = costcheck.from_function(bilinear, n=2, m=2, domain=square, id="bilinear-function")
print(repr(costcheck.check(function_cost, budget=128, conditions=["nondegenerate", "twist"])))
