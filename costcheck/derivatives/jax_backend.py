"""The JAX backend: forward-mode derivatives of one scalar function, ``vmap`` + ``jit``, float64.

The scalar function is either translated from the cost's sympy expression
(:func:`sympy_to_jax`, a walk over the whitelisted node types, nothing evaluated
from text) or is a user's own JAX-traceable ``f(x, y)``.
"""

from __future__ import annotations

from functools import lru_cache
from typing import Callable, Sequence

import numpy as np
import sympy as sp

from ..errors import UsageError
from .fields import Derivatives, fields_up_to


def _compilation_cache_dir() -> str | None:
    """Where compiled XLA programs persist between runs: ``$COSTCHECK_JAX_CACHE`` if set (``0`` or
    empty turns the cache off), else ``$XDG_CACHE_HOME/costcheck/jax`` (``~/.cache/costcheck/jax``)."""
    import os

    chosen = os.environ.get("COSTCHECK_JAX_CACHE")
    if chosen is not None:
        return None if chosen.strip() in ("", "0") else chosen
    base = os.environ.get("XDG_CACHE_HOME") or os.path.join(os.path.expanduser("~"), ".cache")
    return os.path.join(base, "costcheck", "jax")


def _enable_compilation_cache(jax) -> None:
    # JAX's persistent cache is keyed by the program, the JAX/XLA versions and the flags (x64
    # included), so an entry is only reused for the identical computation; an unusable
    # directory just leaves the cache off (compilation then happens every run, as before)
    import os

    path = _compilation_cache_dir()
    if path is None or jax.config.jax_compilation_cache_dir:  # off, or the user chose one already
        return
    try:
        os.makedirs(path, exist_ok=True)
        if not os.access(path, os.W_OK):
            return
        jax.config.update("jax_compilation_cache_dir", path)
        jax.config.update("jax_persistent_cache_min_compile_time_secs", 0.2)
    except (OSError, AttributeError, ValueError):
        return


@lru_cache(maxsize=1)
def jax_modules():
    import jax

    # float64 everywhere: the checks compare margins near zero
    jax.config.update("jax_enable_x64", True)
    _enable_compilation_cache(jax)
    import jax.numpy as jnp

    return jax, jnp


@lru_cache(maxsize=1)
def _kinked():
    # Fix: jnp.abs has derivative 1 at 0 and jnp.sign derivative 0 everywhere, so at a kink
    # (|x1 - y1| on the diagonal) this backend reported finite derivatives and
    # ``defined == True`` where the sympy backend (sign(0) = 0, DiracDelta -> NaN at 0,
    # see sympy_backend._delta) reports NaN.  Same convention here: |u|' = sign(u) with
    # sign(0) = 0, and sign'(u) = 0 off u = 0, undefined (NaN) at u = 0.
    jax, jnp = jax_modules()

    @jax.custom_jvp
    def sign(u):
        return jnp.sign(u)

    @sign.defjvp
    def _sign_jvp(primals, tangents):
        (u,), (t,) = primals, tangents
        return jnp.sign(u), jnp.where(u == 0, jnp.nan, 0.0) * t

    @jax.custom_jvp
    def abs_(u):
        return jnp.abs(u)

    @abs_.defjvp
    def _abs_jvp(primals, tangents):
        (u,), (t,) = primals, tangents
        return abs_(u), sign(u) * t

    return abs_, sign


def _function_table(jnp):
    abs_, sign = _kinked()
    return {
        sp.exp: jnp.exp, sp.log: jnp.log, sp.sin: jnp.sin, sp.cos: jnp.cos, sp.tan: jnp.tan,
        sp.sinh: jnp.sinh, sp.cosh: jnp.cosh, sp.tanh: jnp.tanh, sp.asin: jnp.arcsin,
        sp.acos: jnp.arccos, sp.atan: jnp.arctan, sp.asinh: jnp.arcsinh, sp.acosh: jnp.arccosh,
        sp.atanh: jnp.arctanh, sp.Abs: abs_, sp.sign: sign,
    }


def _translator(jax, jnp, known: dict):
    """``walk(expr)``: the JAX value of a sympy expression, given the values in ``known``
    (symbols, and shared subexpressions already computed); every node is translated once."""
    table = _function_table(jnp)
    roots: dict = {}

    def _root(b, fraction):
        key = (id(b), fraction)
        if key not in roots:
            if fraction == sp.Rational(1, 2):
                r = jnp.sqrt(b)
            elif fraction == sp.Rational(1, 4):
                r = jnp.sqrt(jnp.sqrt(b))
            elif fraction == sp.Rational(3, 4):
                r = jnp.sqrt(b) * jnp.sqrt(jnp.sqrt(b))
            else:
                r = jnp.power(b, float(fraction))
            roots[key] = (b, r)  # holding b keeps its id unique while the key lives
        return roots[key][1]

    def walk(e):
        if e in known:
            return known[e]
        if e.is_Number or e in (sp.pi, sp.E):
            v = jnp.asarray(float(e), dtype=jnp.float64)
        elif e.is_Add:
            v = walk(e.args[0])
            for a in e.args[1:]:
                v = v + walk(a)
        elif e.is_Mul:
            v = walk(e.args[0])
            for a in e.args[1:]:
                v = v * walk(a)
        elif e.is_Pow:
            base, exponent = e.args
            if exponent.is_Integer:
                v = jax.lax.integer_pow(walk(base), int(exponent))
            elif exponent.is_Rational:
                # b^q = b^(q - k) · b^k with k = floor(q): one root per base and fraction, shared
                # by every power of it (derivatives of b^q bring b^(q-1), b^(q-2), ...), and
                # square roots where the fraction allows: a general power is a log and an exp
                k = int(sp.floor(exponent))
                v = _root(walk(base), exponent - k)
                if k:
                    v = v * jax.lax.integer_pow(walk(base), k)
            elif base == sp.E:
                v = jnp.exp(walk(exponent))
            else:
                v = jnp.power(walk(base), walk(exponent))
        elif e.func in table and len(e.args) == 1:
            v = table[e.func](walk(e.args[0]))
        elif isinstance(e, sp.DiracDelta):  # from sign's derivative: 0 off the kink, undefined on it
            u = walk(e.args[0])
            v = jnp.where(u == 0, jnp.nan, 0.0)
        else:
            raise UsageError(f"the JAX backend cannot translate {e.func.__name__}")
        known[e] = v
        return v

    return walk


def sympy_to_jax(expr: sp.Expr, xs: Sequence[sp.Symbol], ys: Sequence[sp.Symbol]) -> Callable:
    """A JAX-traceable ``f(x, y)`` computing ``expr`` (x, y are 1-D arrays)."""
    jax, jnp = jax_modules()

    def f(x, y):
        known = {s: x[i] for i, s in enumerate(xs)}
        known.update({s: y[k] for k, s in enumerate(ys)})
        return _translator(jax, jnp, known)(expr)

    return f


def sympy_columns_to_jax(exprs: Sequence[sp.Expr], symbols: Sequence[sp.Symbol]) -> Callable:
    """A JAX-traceable ``f(columns)`` returning the list of ``exprs`` evaluated on the columns (one
    array per symbol).  Common subexpressions are found once by ``sympy.cse`` and computed once:
    the symbolic route to derivatives, which for high orders does far less arithmetic than
    nesting forward-mode transforms."""
    from .sympy_backend import shared_cse

    jax, jnp = jax_modules()
    replacements, reduced = shared_cse(list(exprs))

    def f(columns):
        known = dict(zip(symbols, columns))
        walk = _translator(jax, jnp, known)
        for symbol, e in replacements:
            known[symbol] = walk(e)
        return [jnp.broadcast_to(walk(e), columns[0].shape) for e in reduced]

    return f


def build_scalar(f: Callable, order: int) -> Callable:
    """``(x (n,), y (m,)) -> dict`` of derivatives of the scalar ``f`` up to ``order``."""
    jax, _ = jax_modules()
    grad_x = jax.grad(f, argnums=0)
    mixed = jax.jacfwd(grad_x, argnums=1)  # M[i, k]

    def one(x, y):
        out = {"value": f(x, y)}
        if order >= 1:
            out["dx"] = grad_x(x, y)
            out["dy"] = jax.grad(f, argnums=1)(x, y)
        if order >= 2:
            out["dxy"] = mixed(x, y)
        if order >= 3:
            # jacfwd appends the new index last: d/dx_j of M[i,k] has shape (n, m, n)
            out["dxxy"] = jax.numpy.moveaxis(jax.jacfwd(mixed, argnums=0)(x, y), 2, 1)
            out["dxyy"] = jax.jacfwd(mixed, argnums=1)(x, y)
        if order >= 4:
            d_mxx = jax.jacfwd(jax.jacfwd(mixed, argnums=0), argnums=1)(x, y)  # [i, k, j, l]
            out["dxxyy"] = jax.numpy.transpose(d_mxx, (0, 2, 1, 3))
        return out

    return one


def build_from_function(f: Callable, order: int) -> Callable:
    """A batched evaluator ``(xs, ys) -> Derivatives`` for a JAX-traceable scalar ``f(x, y)``."""
    return batched_evaluator(build_scalar(f, order), order)


def batched_evaluator(one: Callable, order: int) -> Callable:
    """``(xs, ys) -> Derivatives`` from ``one(x, y) -> dict`` of the fields at one pair (``vmap`` + ``jit``)."""
    jax, jnp = jax_modules()
    batched = jax.jit(jax.vmap(one))
    names = fields_up_to(order)

    def evaluate(x: np.ndarray, y: np.ndarray) -> Derivatives:
        # jit compiles once per input shape; padding to a power of two bounds the number of
        # compilations when callers ask for many different batch sizes (refinement steps)
        count = x.shape[0]
        size = 1 << max(0, (count - 1).bit_length())
        if size != count:
            x = np.concatenate([x, np.repeat(x[:1], size - count, axis=0)])
            y = np.concatenate([y, np.repeat(y[:1], size - count, axis=0)])
        out = batched(jnp.asarray(x, dtype=jnp.float64), jnp.asarray(y, dtype=jnp.float64))
        return Derivatives(**{name: np.asarray(out[name], dtype=float)[:count] for name in names})

    return evaluate


def build_from_cost(cost, order: int) -> Callable:
    if cost.function is not None:
        return build_from_function(cost.function, order)
    return build_from_function(sympy_to_jax(cost.expr, cost.x_symbols, cost.y_symbols), order)
