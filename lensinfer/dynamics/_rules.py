"""Fixed Gauss–Legendre rules shared by the dynamics integrals.

Every rule is built with numpy at import (never during a trace: a jnp array
created inside a trace would leak it), so the nodes are compile-time constants
and every integral is a smooth, differentiable function of its limits and of
the integrand's parameters.
"""

import jax.numpy as jnp
import numpy as np

__all__: list[str] = []


def unit_rule(n: int) -> tuple[np.ndarray, np.ndarray]:
    """n-point Gauss–Legendre nodes and weights on [0, 1] (numpy)."""
    x, w = np.polynomial.legendre.leggauss(n)
    return 0.5 * (x + 1.0), 0.5 * w


def mapped_rule(lo, hi, rule):
    """A [0, 1] rule mapped linearly to [lo, hi], broadcast over the limits.

    Returns nodes and weights with a trailing axis of the rule's length.
    """
    x, w = rule
    lo = jnp.asarray(lo, dtype=jnp.float64)[..., None]
    hi = jnp.asarray(hi, dtype=jnp.float64)[..., None]
    return lo + (hi - lo) * x, (hi - lo) * w


def log_cosh(x):
    """ln cosh x without overflow: |x| + ln(1 + e^{-2|x|}) - ln 2."""
    x = jnp.abs(x)
    return x + jnp.log1p(jnp.exp(-2.0 * x)) - jnp.log(2.0)
