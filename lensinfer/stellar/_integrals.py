"""Closed-form integrals shared by the IMFs, the light and the remnant budgets.

Everything here is private: the public objects in :mod:`lensinfer.stellar` call
these helpers.  All functions work on scalars (and broadcast), are smooth in
their parameters, and never branch in Python on a traced value.
"""

from __future__ import annotations

import math

import jax.numpy as jnp
from jax.scipy.special import erfc

_LN10 = math.log(10.0)
_SQRT_HALF_PI = math.sqrt(0.5 * math.pi)

# Below this |z|, (e^z - 1)/z is taken from its Taylor series 1 + z/2 + z^2/6,
# whose truncation error z^3/24 is < 1e-19 there (far below float64 epsilon).
_EXPREL_SERIES = 1e-6


def as_float(x):
    """``x`` as a float64 JAX array (works on tracers)."""
    return jnp.asarray(x, dtype=jnp.float64)


def exprel(z):
    r"""The relative exponential :math:`(e^z - 1)/z`, equal to 1 at z = 0.

    Evaluated with ``expm1`` away from zero and with its Taylor series near
    zero, using the "double where" pattern so that gradients stay finite at
    z = 0.
    """
    z = as_float(z)
    small = jnp.abs(z) < _EXPREL_SERIES
    z_safe = jnp.where(small, 1.0, z)
    return jnp.where(small, 1.0 + z / 2.0 + z * z / 6.0, jnp.expm1(z_safe) / z_safe)


def power_integral(p, a, b):
    r"""Integral of :math:`u^p` from a to b, for 0 < a <= b and any real p.

    .. math::

        \int_a^b u^p\,du = a^{p+1}\,\ln(b/a)\,
        \frac{e^{(p+1)\ln(b/a)} - 1}{(p+1)\ln(b/a)} ,

    which equals :math:`(b^{p+1} - a^{p+1})/(p+1)` and tends smoothly to
    :math:`\ln(b/a)` at p = -1 (no division by zero, finite gradients in p).
    """
    p, a, b = as_float(p), as_float(a), as_float(b)
    q = p + 1.0
    log_ratio = jnp.log(b) - jnp.log(a)
    return a**q * log_ratio * exprel(q * log_ratio)


def clip_interval(m1, m2, lo, hi):
    """The interval [m1, m2] intersected with [lo, hi], as (a, b) with a <= b.

    An empty intersection gives a == b (a zero-length interval), so integrals
    over it vanish without any Python branching.
    """
    # lax-level min/max (not jnp.clip) keep the traced graph small.
    a = jnp.minimum(jnp.maximum(as_float(m1), lo), hi)
    b = jnp.minimum(jnp.maximum(as_float(m2), a), hi)
    return a, b


def power_segment_moment(k, amplitude, slope, pivot, lo, hi, m1, m2):
    r"""Moment of a power-law segment of an IMF.

    The segment is :math:`dN/dm = A\,(m/m_p)^{-x}` on [lo, hi]; the result is

    .. math::

        \int_{\max(m_1, lo)}^{\min(m_2, hi)} m^k\,A\,(m/m_p)^{-x}\,dm
        = A\,m_p^{k+1} \int_{a/m_p}^{b/m_p} u^{k-x}\,du .
    """
    a, b = clip_interval(m1, m2, lo, hi)
    pivot = as_float(pivot)
    return amplitude * pivot ** (k + 1.0) * power_integral(k - slope, a / pivot, b / pivot)


def _erf_difference(xa, xb):
    """erf(xb) - erf(xa) for xa <= xb, accurate in both tails.

    When both arguments are negative erf is close to -1 and the plain difference
    cancels; erf(x) = erfc(-x) - 1 = 1 - erfc(x) lets each tail be written with
    small erfc values instead.
    """
    negative = (xa + xb) < 0.0
    return jnp.where(negative, erfc(-xb) - erfc(-xa), erfc(xa) - erfc(xb))


def lognormal_segment_moment(k, amplitude, log10_mc, sigma, lo, hi, m1, m2):
    r"""Moment of a lognormal segment of an IMF.

    The segment is :math:`\xi(\log m) = dN/d\log_{10} m =
    A \exp[-(\log_{10} m - \log_{10} m_c)^2 / (2\sigma^2)]` on [lo, hi]; with
    :math:`y = \log_{10} m`, :math:`s = k \ln 10` and
    :math:`\mu_k = \log_{10} m_c + s\sigma^2` (completing the square),

    .. math::

        \int m^k\,\frac{dN}{dm}\,dm = \int 10^{k y}\,\xi\,dy
        = A\,\sigma\sqrt{\pi/2}\; e^{s \log_{10} m_c + s^2\sigma^2/2}
          \left[\operatorname{erf}\frac{y_b - \mu_k}{\sqrt2\,\sigma}
              - \operatorname{erf}\frac{y_a - \mu_k}{\sqrt2\,\sigma}\right].
    """
    a, b = clip_interval(m1, m2, lo, hi)
    s = as_float(k) * _LN10
    mu_k = log10_mc + s * sigma**2
    scale = math.sqrt(2.0) * sigma
    xa = (jnp.log10(a) - mu_k) / scale
    xb = (jnp.log10(b) - mu_k) / scale
    prefactor = amplitude * sigma * _SQRT_HALF_PI * jnp.exp(s * log10_mc + 0.5 * (s * sigma) ** 2)
    return prefactor * _erf_difference(xa, xb)
