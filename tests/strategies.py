"""Reusable hypothesis strategies that generate random, smooth transport costs.

Import from a test module in ``tests/`` (pytest puts this folder on ``sys.path``)::

    from strategies import BOX, cost_expressions, costs, dimensions, points_in

What is generated
-----------------
Expression *strings* in the cost-file language (numbers, the coordinate names
``x1..xn`` and ``y1..ym``, ``+ - * / **``, the functions ``sqrt exp log sin cos
tan sinh cosh tanh asin acos atan asinh acosh atanh abs`` and the constants
``pi`` and ``E``), built so that they are

* **defined and C^∞ on the whole box** ``[-1, 1]^n × [-1, 1]^m`` (:data:`BOX`), and in
  fact on a neighbourhood of it, so central finite differences at points near the
  boundary stay inside the domain of definition.  Every function whose domain is
  not all of ℝ, or which is not smooth, only ever sees an argument that is safe
  for *every* real input::

      log(2 + sin(u))      log(1 + u**2)        sqrt(1 + u**2)
      asin(tanh(u)/2)      acos(tanh(u)/2)      atanh(tanh(u)/2)
      acosh(2 + u**2)      tan(tanh(u))         abs(2 + cos(u))
      u / (2 + sin(v))     u / (1 + v**2)       u / sqrt(1 + v**2)
      (2 + cos(u))**v      (1 + u**2)**(1/3)    (2 + sin(u))**E

  and the unbounded-growth functions (``exp sinh cosh``) only see arguments that
  are bounded by construction (``tanh``/``sin``/``atan`` of something), so values
  and derivatives stay moderate (no overflow, no catastrophic scale differences
  between terms);
* **mixing**: every expression contains a summand ``φ(x_i ∘ y_k)`` coupling one
  ``x`` and one ``y`` coordinate, so the mixed derivatives are not trivially zero;
* **cheap**: the nesting depth is small (``max_depth``, default 2), so sympy's
  fourth-order differentiation and JAX's compilation each take about a second.

Nothing here evaluates text: the strings are only ever handed to
:func:`costcheck.from_expression`, which parses them with the safe parser.
"""

from __future__ import annotations

import numpy as np
from hypothesis import strategies as st

import costcheck

__all__ = [
    "BOX",
    "x_names",
    "y_names",
    "dimensions",
    "cost_expressions",
    "box_domain",
    "costs",
    "points_in",
]

#: Every generated cost is smooth on ``[-BOX, BOX]`` in each coordinate (and a little beyond).
BOX = 1.0


def x_names(n: int) -> list[str]:
    """``["x1", ..., "xn"]``."""
    return [f"x{i + 1}" for i in range(n)]


def y_names(m: int) -> list[str]:
    """``["y1", ..., "ym"]``."""
    return [f"y{k + 1}" for k in range(m)]


def dimensions(max_n: int = 3, max_m: int = 3) -> st.SearchStrategy[tuple[int, int]]:
    """Pairs ``(n, m)`` with ``1 <= n <= max_n`` and ``1 <= m <= max_m``."""
    return st.tuples(st.integers(1, max_n), st.integers(1, max_m))


# --- building blocks (each returns a fully parenthesised string) -------------------

_NUMBERS = st.sampled_from(["1", "2", "3", "0.5", "0.25", "1.5", "pi", "E"])

# f(u) defined and smooth for every real u; values bounded for bounded u.
_SAFE_UNARY = [
    "sin({})",
    "cos({})",
    "atan({})",
    "tanh({})",
    "asinh({})",
    "log(2 + sin({}))",
    "log(1 + ({})**2)",
    "sqrt(1 + ({})**2)",
    "asin(tanh({})/2)",
    "acos(tanh({})/2)",
    "atanh(tanh({})/2)",
    "acosh(2 + ({})**2)",
    "tan(tanh({}))",
    "abs(2 + cos({}))",
    # fast-growing functions only of bounded arguments
    "exp(sin({}))",
    "sinh(tanh({}))",
    "cosh(atan({}))",
    "exp(-({})**2)",
    "({})**2",
    "({})**3",
    "(1 + ({})**2)**(1/3)",  # a rational, non-half exponent
    "(2 + sin({}))**(E)",  # an irrational constant exponent
]

# g(u, v) defined and smooth for every real u, v.
_SAFE_BINARY = [
    "({}) + ({})",
    "({}) - ({})",
    "({}) * ({})",
    "({}) / (2 + sin({}))",
    "({}) / (1 + ({})**2)",
    "({}) / sqrt(1 + ({})**2)",  # a power -1/2
    "(2 + cos({}))**({})",  # a power with a non-constant exponent
]


def _leaf(names: list[str]) -> st.SearchStrategy[str]:
    return st.one_of(
        st.sampled_from(names),  # a coordinate, most of the time
        st.sampled_from(names),
        st.sampled_from(names),
        _NUMBERS,
        st.builds(lambda c, v: f"{c}*{v}", _NUMBERS, st.sampled_from(names)),
    )


@st.composite
def _expression(draw, names: list[str], depth: int) -> str:
    """A random smooth expression over ``names`` of nesting depth at most ``depth``."""
    if depth <= 0:
        return draw(_leaf(names))
    kind = draw(st.sampled_from(["leaf", "unary", "binary", "binary"]))
    if kind == "leaf":
        return draw(_leaf(names))
    if kind == "unary":
        template = draw(st.sampled_from(_SAFE_UNARY))
        return template.format(draw(_expression(names, depth - 1)))
    template = draw(st.sampled_from(_SAFE_BINARY))
    return template.format(draw(_expression(names, depth - 1)), draw(_expression(names, depth - 1)))


_COUPLINGS = ["({}) * ({})", "({}) - ({})", "({}) + ({})"]
_COUPLING_WRAPPERS = ["{}", "sin({})", "exp(sin({}))", "({})**2", "log(2 + sin({}))", "sqrt(1 + ({})**2)",
                      "atan({})", "cosh(tanh({}))"]


@st.composite
def cost_expressions(draw, n: int, m: int, max_depth: int = 2) -> str:
    """Expression strings over ``x1..xn, y1..ym``, smooth on a neighbourhood of the box.

    The result is ``body + coupling`` where ``body`` is a random expression of depth
    at most ``max_depth`` over all coordinates and ``coupling = φ(x_i ∘ y_k)`` ties one
    ``x`` coordinate to one ``y`` coordinate, so the cost always mixes ``x`` and ``y``.
    """
    names = x_names(n) + y_names(m)
    body = draw(_expression(names, max_depth))
    xi = draw(st.sampled_from(x_names(n)))
    yk = draw(st.sampled_from(y_names(m)))
    inner = draw(st.sampled_from(_COUPLINGS)).format(xi, yk)
    coupling = draw(st.sampled_from(_COUPLING_WRAPPERS)).format(inner)
    return f"({body}) + ({coupling})"


def box_domain(n: int, m: int, half_width: float = BOX) -> dict:
    """The domain ``[-h, h]^n × [-h, h]^m`` in the form :func:`costcheck.from_expression` takes."""
    return {"x": {"box": [[-half_width, half_width]] * n}, "y": {"box": [[-half_width, half_width]] * m}}


@st.composite
def costs(draw, n: int | None = None, m: int | None = None, max_depth: int = 2,
          sense: str | st.SearchStrategy[str] = "cost") -> costcheck.Cost:
    """Random :class:`costcheck.Cost` objects from :func:`cost_expressions` on :func:`box_domain`.

    ``n``/``m`` default to random values in ``1..3``; ``sense`` may be a strategy
    (e.g. ``st.sampled_from(["cost", "surplus"])``).  The expression string is
    kept on the cost (``cost.raw["expr"]``) and shown in hypothesis' report.
    """
    if n is None:
        n = draw(st.integers(1, 3))
    if m is None:
        m = draw(st.integers(1, 3))
    if not isinstance(sense, str):
        sense = draw(sense)
    expr = draw(cost_expressions(n, m, max_depth=max_depth))
    return costcheck.from_expression(expr, x=x_names(n), y=y_names(m), domain=box_domain(n, m),
                                     sense=sense, id="hypothesis")


@st.composite
def points_in(draw, cost: costcheck.Cost, count: int = 8, margin: float = 0.0) -> tuple[np.ndarray, np.ndarray]:
    """``count`` random pairs ``(xs (count, n), ys (count, m))`` inside the cost's box domain.

    Each coordinate lies in ``[lo + margin, hi - margin]``.  The points come from a
    numpy generator seeded by hypothesis (reproducible, but not shrunk coordinate by
    coordinate, which would cost many re-evaluations for no insight).
    """
    seed = draw(st.integers(0, 2**32 - 1))
    rng = np.random.default_rng(seed)
    sides = []
    for region, dim in ((cost.domain.x, cost.n), (cost.domain.y, cost.m)):
        lo, hi = region.bounds()
        sides.append(rng.uniform(lo + margin, hi - margin, size=(count, dim)))
    return sides[0], sides[1]
