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
_SIGMA_SERIES = (
    0.26666666666666666,
    -0.45714285714285713,
    0.5333333333333333,
    -0.5310245310245311,
    0.48884448884448883,
    -0.43263403263403266,
    0.37632432926550574,
    -0.32603433717984803,
    0.283567825363491,
    -0.2486720440684635,
    0.22030018978195046,
)
_MASS_SERIES = (
    0.3333333333333333,
    0.26666666666666666,
    -0.09523809523809523,
    0.025396825396825397,
    0.0005772005772005772,
    -0.008436008436008436,
    0.009368409368409368,
    -0.008044243338360985,
    0.006286249010707215,
    -0.004718501312928557,
    0.0034895781295027494,
)


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
