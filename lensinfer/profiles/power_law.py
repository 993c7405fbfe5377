"""A power-law density profile with a free slope."""

import dataclasses

import jax
import jax.numpy as jnp
from jax.scipy.special import gammaln

from lensinfer.profiles._units import KPC, MSUN_PER_KPC3, to_internal
from lensinfer.profiles.base import SphericalProfile, as_float

__all__ = ["PowerLaw"]


@jax.tree_util.register_dataclass
@dataclasses.dataclass(frozen=True)
class PowerLaw(SphericalProfile):
    r"""Spherical power-law density :math:`\rho = \rho_0 (r/r_0)^{-\gamma}`.

    For :math:`1 < \gamma < 3`:

    .. math::

        M(<r) = \frac{4\pi\rho_0 r_0^\gamma}{3-\gamma} r^{3-\gamma},\qquad
        \Sigma(R) = \sqrt{\pi}\,
            \frac{\Gamma\left(\frac{\gamma-1}{2}\right)}{\Gamma\left(\frac{\gamma}{2}\right)}
            \rho_0 r_0^\gamma R^{1-\gamma},\qquad
        M_{2D}(<R) = \frac{2\pi}{3-\gamma}\, \Sigma(R)\, R^2

    (the line-of-sight integral :math:`\int_{-\infty}^{\infty}(R^2+z^2)^{-\gamma/2}dz
    = \sqrt{\pi}\,\Gamma(\frac{\gamma-1}{2})/\Gamma(\frac{\gamma}{2})\,R^{1-\gamma}`,
    Gradshteyn & Ryzhik 2007, 3.251.11; Keeton 2001, section 3.1 for the
    lensing power law).  gamma = 2 is the singular isothermal sphere.

    Parameters
    ----------
    rho_ref : float or Quantity
        Density at the reference radius, Msun / kpc^3.
    r_ref : float or Quantity
        Reference radius r_0, kpc.
    slope : float
        Logarithmic slope gamma (1 < gamma < 3 for finite projections).
    """

    rho_ref: jax.Array
    r_ref: jax.Array
    slope: jax.Array

    def __post_init__(self):
        object.__setattr__(self, "rho_ref", to_internal(self.rho_ref, MSUN_PER_KPC3))
        object.__setattr__(self, "r_ref", to_internal(self.r_ref, KPC))

    def density(self, r):
        return self.rho_ref * (as_float(r) / self.r_ref) ** (-self.slope)

    def enclosed_mass(self, r):
        g = self.slope
        r = as_float(r)
        return (
            4.0 * jnp.pi * self.rho_ref * self.r_ref**3 * (r / self.r_ref) ** (3.0 - g) / (3.0 - g)
        )

    def _los_factor(self):
        g = self.slope
        return jnp.sqrt(jnp.pi) * jnp.exp(gammaln(0.5 * (g - 1.0)) - gammaln(0.5 * g))

    def surface_density(self, R):
        R = as_float(R)
        return (
            self._los_factor() * self.rho_ref * self.r_ref * (R / self.r_ref) ** (1.0 - self.slope)
        )

    def projected_mass(self, R):
        R = as_float(R)
        return 2.0 * jnp.pi / (3.0 - self.slope) * self.surface_density(R) * R**2
