"""The JAX route to a generating function's fields: the implicit function, differentiated by JAX.

The sympy route (:mod:`costcheck.derivatives.generating`) writes each field as a total derivative
along the level set, ``D_k = ∂_{y_k} − (G_{y_k} / G_z) ∂_z``, applied symbolically.  This route
does not use that formula.  At a base point ``(x₀, y₀, z₀)`` it defines ``ζ(y)`` as the solution of

    G(x₀, y, ζ(y)) = G(x₀, y₀, z₀),        ζ(y₀) = z₀,

a JAX function whose derivative is the implicit function theorem's, ``ζ_y = −G_y / G_z`` at
``(x₀, y, ζ(y))`` (a ``custom_jvp`` rule that calls ``ζ`` again, so JAX can differentiate it to
any order), and takes the effective cost ``c̃(x, y) = −G(x, y, ζ(y))`` through the same
forward-mode transforms as an ordinary cost (:func:`.jax_backend.build_scalar`): x-derivatives at
fixed ``(y, z)``, y-derivatives along the level set of ``x₀``.  Two fields follow the sympy
route's conventions rather than ``c̃``'s own derivatives: ``value = −G(x₀, y₀, z₀)`` and
``dy = −ζ_y = G_y / G_z`` (``c̃``'s own y-gradient at ``x₀`` is zero, the level set being
``G``'s); for ``G = −c − z`` both are ``c``'s.  The primal ``ζ(y)`` takes Newton steps from
``z₀``; every field is evaluated at ``y = y₀``, where ``ζ(y₀) = z₀`` holds exactly.

``tests/test_generating.py`` compares the two routes at random points of the catalog's
generating functions: agreement is a check of both.
"""

from __future__ import annotations

from typing import Callable

from .jax_backend import batched_evaluator, build_scalar, jax_modules, sympy_to_jax

#: Newton steps of the primal ζ(y) (exact at y = y₀, the only point the fields use)
NEWTON_STEPS = 2


def _level_function(jax, jnp, g: Callable) -> Callable:
    """``ζ(y, x₀, u₀, z₀)``: the third variable on the level set ``g(x₀, (y, ζ)) = u₀`` near ``z₀``."""

    def joined(y, z):
        return jnp.concatenate([y, jnp.reshape(z, (1,))])

    @jax.custom_jvp
    def zeta(y, x0, u0, z0):
        z = z0
        for _ in range(NEWTON_STEPS):
            residual = g(x0, joined(y, z)) - u0
            slope = jax.grad(lambda t: g(x0, joined(y, t)))(z)
            z = z - residual / slope
        return z

    @zeta.defjvp
    def zeta_jvp(primals, tangents):
        # only y moves: the base point enters through stop_gradient, so its tangents are zero
        y, x0, u0, z0 = primals
        z = zeta(y, x0, u0, z0)
        gw = jax.grad(g, argnums=1)(x0, joined(y, z))
        return z, -jnp.dot(gw[:-1], tangents[0]) / gw[-1]

    return zeta


def build_generating(cost, order: int) -> Callable:
    """A batched evaluator ``(xs (N, n), ws (N, m + 1)) -> Derivatives`` of the effective cost of
    ``cost.expr`` = G, with ``ws`` the points ``(y, z)``."""
    jax, jnp = jax_modules()
    g = sympy_to_jax(cost.expr, cost.x_symbols, cost.y_symbols)
    zeta = _level_function(jax, jnp, g)

    def one(x0, w0):
        y0, z0 = w0[:-1], w0[-1]
        u0 = g(x0, w0)
        frozen = jax.lax.stop_gradient((x0, u0, z0))

        def level(y):
            return zeta(y, *frozen)

        def effective(x, y):
            return -g(x, jnp.concatenate([y, jnp.reshape(level(y), (1,))]))

        out = build_scalar(effective, order)(x0, y0) if order >= 2 else {}
        out["value"] = -u0
        if order >= 1:
            out["dx"] = -jax.grad(g, argnums=0)(x0, w0)
            out["dy"] = -jax.grad(level)(y0)
        return out

    return batched_evaluator(one, order)
