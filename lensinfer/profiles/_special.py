"""Numerically safe special functions shared by the closed-form profiles.

Every branch is evaluated on a "safe" argument (the double-``where`` pattern),
so neither the value nor the gradient picks up a NaN from the branch that is not
selected.
"""

import jax.numpy as jnp

__all__: list[str] = []

#: Half-width of the window around x = 1 inside which Taylor series replace the
#: closed forms.  The closed forms lose up to ~1e-16 / d^3 relative accuracy at
#: distance d from 1 (the Hernquist surface density cancels to third order),
#: i.e. ~1e-12 at d = 5e-2, while the degree-10 series truncation error there
#: is ~0.2 d^11 ~ 1e-15.
NEAR_ONE = 5.0e-2


def safe_where(cond, x, fill):
    """Replace ``x`` by ``fill`` where ``cond`` holds (for the double-where trick)."""
    return jnp.where(cond, fill, x)


def polyval_ascending(coeffs, d):
    """Evaluate sum_k coeffs[k] d^k by Horner's rule."""
    out = jnp.zeros_like(d) + coeffs[-1]
    for c in coeffs[-2::-1]:
        out = out * d + c
    return out


# Taylor coefficients of F(x) about x = 1, to d^10 (sympy; verified in the tests).
_F_SERIES = (
    1.0,
    -0.6666666666666666,
    0.4666666666666667,
    -0.34285714285714286,
    0.2634920634920635,
    -0.2106782106782107,
    0.17415917415917415,
    -0.14794094794094795,
    0.12844279903103434,
    -0.11347290480417416,
    0.10165376419246389,
)


def arccosh_ratio(x):
    r"""The function that appears in every cusp-profile projection.

    .. math::

        F(x) = \begin{cases}
            \dfrac{\operatorname{arccosh}(1/x)}{\sqrt{1 - x^2}} & x < 1 \\
            1 & x = 1 \\
            \dfrac{\arccos(1/x)}{\sqrt{x^2 - 1}} & x > 1
        \end{cases}

    (Hernquist 1990, ApJ 356, 359, eq. 33; Wright & Brainerd 2000, ApJ 534, 34,
    eq. 11 in another notation).  A Taylor series is used for |x − 1| < 1e-2.
    """
    x = jnp.asarray(x, dtype=jnp.float64)
    d = x - 1.0
    near = jnp.abs(d) < NEAR_ONE
    lo = x < 1.0
    x_lo = safe_where(lo & ~near, 0.5, x)  # value used only where x < 1 - eps
    x_hi = safe_where(~lo & ~near, 2.0, x)  # value used only where x > 1 + eps
    f_lo = jnp.arccosh(1.0 / x_lo) / jnp.sqrt(1.0 - x_lo**2)
    f_hi = jnp.arccos(1.0 / x_hi) / jnp.sqrt(x_hi**2 - 1.0)
    f_series = polyval_ascending(_F_SERIES, d)
    return jnp.where(near, f_series, jnp.where(lo, f_lo, f_hi))


def near_one(x, direct, series):
    """Evaluate ``direct(x)`` away from x = 1 and a Taylor series inside the window.

    Parameters
    ----------
    x : array
        Argument.
    direct : callable
        Closed form, evaluated on a safe argument (x = 2 inside the window).
    series : sequence of float
        Taylor coefficients in d = x − 1, ascending.
    """
    x = jnp.asarray(x, dtype=jnp.float64)
    d = x - 1.0
    near = jnp.abs(d) < NEAR_ONE
    x_safe = jnp.where(near, 2.0, x)  # the closed form never sees the window
    return jnp.where(near, polyval_ascending(series, d), direct(x_safe))
