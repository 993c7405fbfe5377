"""Private helpers shared by the halo modules: default cosmology, units, Newton roots."""

from __future__ import annotations

import functools
import math
from collections.abc import Callable

import jax
import jax.numpy as jnp

from lensinfer.cosmology import Cosmology


@functools.cache
def _default_cosmology() -> Cosmology:
    # Built once: Cosmology.default() goes through astropy (about 1 s on first use).
    return Cosmology.default()


def resolve_cosmology(cosmology: Cosmology | None) -> Cosmology:
    """Return ``cosmology``, or the package default (Planck18) when it is None."""
    return _default_cosmology() if cosmology is None else cosmology


def as_float64(value, unit: str | None = None) -> jax.Array:
    """A float64 array from a number, an array or (when ``unit`` is given) a Quantity.

    An astropy ``Quantity`` is converted to ``unit`` once, here at the edge; jitted
    code only ever sees the plain float.
    """
    if unit is not None and hasattr(value, "unit") and hasattr(value, "to_value"):
        value = value.to_value(unit)
    return jnp.asarray(value, dtype=jnp.float64)


def newton_root(
    residual_and_slope: Callable[..., tuple[jax.Array, jax.Array]],
    u0: jax.Array,
    params: tuple[jax.Array, ...],
    n_steps: int,
) -> jax.Array:
    r"""Solve ``R(u, *params) = 0`` elementwise with a fixed number of Newton steps.

    ``residual_and_slope(u, *params)`` returns :math:`R` and :math:`\partial_u R`
    (elementwise: the Jacobian in ``u`` is diagonal).  The iterations run on
    ``stop_gradient`` copies of the inputs, so no derivative flows through the
    loop.  One more Newton step is then taken from the converged
    (gradient-stopped) iterate ``u*`` with the live parameters and the slope held
    fixed,

    .. math:: u = u^* - R(u^*, \theta) / [\partial_u R(u^*, \theta)]_{\rm stop},

    whose derivative is :math:`-\partial_\theta R / \partial_u R`, the implicit
    function theorem's, exactly at the root.  Its value moves ``u*`` by at most one
    more (quadratically small) Newton correction.  All ``params`` must broadcast
    together; ``u0`` is broadcast to their common shape.
    """
    shape = jnp.broadcast_shapes(jnp.shape(u0), *(jnp.shape(p) for p in params))
    params_stopped = tuple(jax.lax.stop_gradient(p) for p in params)
    u0 = jnp.broadcast_to(jax.lax.stop_gradient(u0), shape)

    def step(_, u):
        r, slope = residual_and_slope(u, *params_stopped)
        return u - r / slope

    u_star = jax.lax.stop_gradient(jax.lax.fori_loop(0, n_steps, step, u0))
    r, slope = residual_and_slope(u_star, *params)
    return u_star - r / jax.lax.stop_gradient(slope)


def normal_logpdf(x, mean, sigma):
    """Log density of a normal distribution (x, mean, sigma broadcast)."""
    return -0.5 * ((x - mean) / sigma) ** 2 - jnp.log(sigma * math.sqrt(2.0 * math.pi))
