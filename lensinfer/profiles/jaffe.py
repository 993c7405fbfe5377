"""The Jaffe (1983) sphere."""

import dataclasses

import jax
import jax.numpy as jnp

from lensinfer.profiles._special import arccosh_ratio, near_one
from lensinfer.profiles._units import KPC, MSUN, to_internal
from lensinfer.profiles.base import SphericalProfile, as_float

__all__ = ["Jaffe"]

# Taylor coefficients about s = 1 of [1 - (2 - s^2) F(s)] / (1 - s^2) (sympy; tested).
_SIGMA_SERIES = (-4 / 3, 16 / 15, -88 / 105, 208 / 315, -1828 / 3465, 352 / 819)


def _sigma_bracket(s):
    return near_one(
        s, lambda y: (1.0 - (2.0 - y**2) * arccosh_ratio(y)) / (1.0 - y**2), _SIGMA_SERIES
    )


@jax.tree_util.register_dataclass
@dataclasses.dataclass(frozen=True)
class Jaffe(SphericalProfile):
    r"""Jaffe (1983, MNRAS 202, 995) profile of total mass M and scale radius a.

    .. math::

        \rho(r) = \frac{M a}{4\pi r^2 (r + a)^2},\qquad
        M(<r) = M\frac{r}{r + a}

        \Sigma(R) = \frac{M}{4 a^2}\left[\frac{1}{s}
            + \frac{2}{\pi}\,\frac{1 - (2 - s^2) F(s)}{1 - s^2}\right],\qquad
        M_{2D}(<R) = M s\left[\frac{\pi}{2} - s F(s)\right]

    with s = R/a and F as in Hernquist (1990, eq. 33) (Jaffe 1983, eqs. 1, 3 and
    the projections in its section 2).  The projected half-mass radius is
    R_eff = 0.7447 a (Jaffe 1983).

    Parameters
    ----------
    mass : float or Quantity
        Total mass, Msun.
    scale_radius : float or Quantity
        Scale radius a (the 3-D half-mass radius), kpc.
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
        return self.mass * a / (4.0 * jnp.pi * r**2 * (r + a) ** 2)

    def enclosed_mass(self, r):
        r = as_float(r)
        return self.mass * r / (r + self.scale_radius)

    def surface_density(self, R):
        a = self.scale_radius
        s = as_float(R) / a
        return self.mass / (4.0 * a**2) * (1.0 / s + 2.0 / jnp.pi * _sigma_bracket(s))

    def projected_mass(self, R):
        s = as_float(R) / self.scale_radius
        return self.mass * s * (0.5 * jnp.pi - s * arccosh_ratio(s))
