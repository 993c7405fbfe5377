"""A point mass (a central black hole or a compact unresolved component)."""

import dataclasses

import jax
import jax.numpy as jnp

from lensinfer.profiles._units import MSUN, to_internal
from lensinfer.profiles.base import SphericalProfile, as_float

__all__ = ["PointMass"]


@jax.tree_util.register_dataclass
@dataclasses.dataclass(frozen=True)
class PointMass(SphericalProfile):
    r"""A point mass at the centre.

    .. math:: M(<r) = M_{2D}(<R) = M, \qquad \rho(r) = \Sigma(R) = 0 \ (r, R > 0)

    Its lensing deflection is :math:`\alpha = M / (\pi \Sigma_{cr} R)` and its
    Einstein radius :math:`R_E = \sqrt{M / (\pi \Sigma_{cr})}` (Schneider,
    Kochanek & Wambsganss 2006, Part 1, eq. 24).

    Parameters
    ----------
    mass : float or Quantity
        Mass in Msun.
    """

    mass: jax.Array

    def __post_init__(self):
        object.__setattr__(self, "mass", to_internal(self.mass, MSUN))

    def density(self, r):
        return jnp.zeros_like(as_float(r)) * self.mass

    def enclosed_mass(self, r):
        return jnp.ones_like(as_float(r)) * self.mass

    def surface_density(self, R):
        return jnp.zeros_like(as_float(R)) * self.mass

    def projected_mass(self, R):
        return jnp.ones_like(as_float(R)) * self.mass
