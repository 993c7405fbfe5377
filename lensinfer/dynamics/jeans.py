r"""The spherical Jeans equation: radial velocity dispersion sigma_r(r)."""

import jax
import jax.numpy as jnp
import numpy as np

from lensinfer._constants import G_KPC_KMS2_PER_MSUN as G
from lensinfer.dynamics._rules import unit_rule
from lensinfer.dynamics.anisotropy import Isotropic
from lensinfer.profiles._units import KPC, to_internal
from lensinfer.profiles.base import as_float

__all__ = ["radial_dispersion"]

_ISOTROPIC = Isotropic()

#: Gauss–Legendre nodes of the Jeans integral in x = ln(s/r), with x = X q^2.
N_JEANS = 48
_JEANS_RULE = unit_rule(N_JEANS)
#: Outer limit of the Jeans integral, as a multiple of r; beyond it a
#: power-law tail from the local slope of the integrand is added.
JEANS_OUTER = 1.0e5
#: Smallest decay rate d ln(integrand)/dx assumed for the tail (a slower decay
#: means a divergent integral, i.e. a tracer that falls off too slowly).
MIN_TAIL_SLOPE = 0.1
#: Integrands are floored here before their logarithm is taken, so that a
#: tracer density that underflows to 0 far out (a Sérsic profile of small n)
#: leaves finite logarithms and gradients; the floor's contribution is nil.
TINY = 1.0e-300


def _tail(log_integrand, x_end):
    """int_{x_end}^inf of exp(log_integrand) for a locally exponential integrand."""
    val, slope = jax.jvp(log_integrand, (x_end,), (jnp.ones_like(x_end),))
    return jnp.exp(val) / jnp.maximum(-slope, MIN_TAIL_SLOPE)


def radial_pressure(mass, tracer, r, anisotropy=_ISOTROPIC):
    r""":math:`\nu\sigma_r^2(r)` in (tracer density units) (km/s)^2; see :func:`radial_dispersion`."""
    r = as_float(r)
    x_max = float(np.log(JEANS_OUTER))
    q, w = _JEANS_RULE
    lnf_r = anisotropy.log_integrating_factor(r)[..., None]

    def log_integrand(x):
        # x = ln(s / r) with a trailing node axis; the integrand is
        # (f(s) / f(r)) nu(s) G M(s) / s in dx.
        s = r[..., None] * jnp.exp(x)
        return (
            anisotropy.log_integrating_factor(s)
            - lnf_r
            + jnp.log(jnp.maximum(tracer.density(s) * G * mass.enclosed_mass(s), TINY))
            - x
            - jnp.log(r)[..., None]
        )

    x = jnp.broadcast_to(x_max * q**2, (*r.shape, *q.shape))
    body = jnp.sum(2.0 * x_max * q * w * jnp.exp(log_integrand(x)), axis=-1)
    return body + _tail(log_integrand, jnp.full((*r.shape, 1), x_max))[..., 0]


def radial_dispersion(mass, tracer, r, anisotropy=_ISOTROPIC):
    r"""Radial velocity dispersion (km/s) from the spherical Jeans equation.

    For a tracer of luminosity (or number) density :math:`\nu(r)` in the total
    mass :math:`M(r)`, with anisotropy :math:`\beta(r)`, the Jeans equation
    :math:`d(\nu\sigma_r^2)/dr + 2\beta\nu\sigma_r^2/r = -\nu G M / r^2` with
    :math:`\nu\sigma_r^2 \to 0` at infinity has the solution

    .. math::

        \nu(r)\,\sigma_r^2(r) = \frac{G}{f(r)}\int_r^\infty
            f(s)\,\nu(s)\,\frac{M(s)}{s^2}\,ds,\qquad
        f(r) = \exp\int^r \frac{2\beta(s)}{s}\,ds

    (Binney & Tremaine 2008, Galactic Dynamics, 2nd ed., section 4.8.1,
    eqs. 4.215–4.216 from memory).  The integral is evaluated with 48 fixed Gauss–Legendre
    nodes in :math:`x = \ln(s/r) = X q^2`, :math:`X = \ln 10^5`, plus a
    power-law tail from the local slope of the integrand at
    :math:`s = 10^5 r`.  The tracer's normalisation cancels.

    Parameters
    ----------
    mass : SphericalProfile
        The total mass (stars, dark matter, a central point mass, ...).
    tracer : SphericalProfile
        The tracer's 3-D density (only its shape matters).
    r : float, array or Quantity
        3-D radius, kpc.
    anisotropy : Isotropic, ConstantAnisotropy or OsipkovMerritt, optional
        Defaults to :class:`Isotropic`.

    Returns
    -------
    jax.Array
        :math:`\sigma_r(r)` in km/s, with the shape of r.

    Examples
    --------
    >>> from lensinfer.dynamics import radial_dispersion
    >>> from lensinfer.profiles import Hernquist
    >>> h = Hernquist(1e11, 3.0)
    >>> 0 < float(radial_dispersion(h, h, 3.0)) < 300
    True
    """
    r = as_float(to_internal(r, KPC))
    return jnp.sqrt(radial_pressure(mass, tracer, r, anisotropy) / tracer.density(r))
