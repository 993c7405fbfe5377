"""The Hernquist (1990) sphere."""

import dataclasses

import jax
import jax.numpy as jnp

from lensinfer.profiles._special import arccosh_ratio, near_one
from lensinfer.profiles._units import KPC, MSUN, to_internal
from lensinfer.profiles.base import SphericalProfile, as_float

__all__ = ["Hernquist"]

# Taylor coefficients about s = 1 (sympy; checked in the tests) of
# [(2 + s^2) F(s) - 3] / (1 - s^2)^2 and of s^2 [F(s) - 1] / (1 - s^2).
_SIGMA_SERIES = (4 / 15, -16 / 35, 8 / 15, -368 / 693, 1468 / 3003, -928 / 2145)
_MASS_SERIES = (1 / 3, 4 / 15, -2 / 21, 8 / 315, 2 / 3465, -76 / 9009)


def _sigma_shape(s):
    return near_one(
        s, lambda y: ((2.0 + y**2) * arccosh_ratio(y) - 3.0) / (1.0 - y**2) ** 2, _SIGMA_SERIES
    )


def _mass_shape(s):
    return near_one(s, lambda y: y**2 * (arccosh_ratio(y) - 1.0) / (1.0 - y**2), _MASS_SERIES)


@jax.tree_util.register_dataclass
@dataclasses.dataclass(frozen=True)
class Hernquist(SphericalProfile):
    r"""Hernquist (1990, ApJ 356, 359) profile of total mass M and scale radius a.

    .. math::

        \rho(r) = \frac{M a}{2\pi r (r + a)^3},\qquad
        M(<r) = M\frac{r^2}{(r + a)^2}

        \Sigma(R) = \frac{M}{2\pi a^2 (1 - s^2)^2}\left[(2 + s^2) F(s) - 3\right],\qquad
        M_{2D}(<R) = M\frac{s^2 [F(s) - 1]}{1 - s^2}

    with s = R/a (Hernquist 1990, eqs. 2, 3, 32, 33, 37).  The projected
    half-mass radius is R_eff = 1.8153 a.

    Parameters
    ----------
    mass : float or Quantity
        Total mass, Msun.
    scale_radius : float or Quantity
        Scale radius a, kpc.
    """

    mass: jax.Array
    scale_radius: jax.Array

    def __post_init__(self):
        object.__setattr__(self, "mass", to_internal(self.mass, MSUN))
        object.__setattr__(self, "scale_radius", to_internal(self.scale_radius, KPC))

    @property
    def quadrature_scale(self):
        return self.scale_radius

    def density(self, r):
        r = as_float(r)
        a = self.scale_radius
        return self.mass * a / (2.0 * jnp.pi * r * (r + a) ** 3)

    def enclosed_mass(self, r):
        r = as_float(r)
        return self.mass * (r / (r + self.scale_radius)) ** 2

    def surface_density(self, R):
        a = self.scale_radius
        return self.mass / (2.0 * jnp.pi * a**2) * _sigma_shape(as_float(R) / a)

    def projected_mass(self, R):
        return self.mass * _mass_shape(as_float(R) / self.scale_radius)
