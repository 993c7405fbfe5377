"""Isothermal spheres: singular and cored."""

import dataclasses

import jax
import jax.numpy as jnp

from lensinfer._constants import G_KPC_KMS2_PER_MSUN as G
from lensinfer.profiles._units import KMS, KPC, to_internal
from lensinfer.profiles.base import SphericalProfile, as_float

__all__ = ["CoredIsothermal", "SingularIsothermal"]


@jax.tree_util.register_dataclass
@dataclasses.dataclass(frozen=True)
class SingularIsothermal(SphericalProfile):
    r"""Singular isothermal sphere with one-dimensional velocity dispersion sigma.

    .. math::

        \rho(r) = \frac{\sigma^2}{2\pi G r^2},\quad
        M(<r) = \frac{2\sigma^2 r}{G},\quad
        \Sigma(R) = \frac{\sigma^2}{2 G R},\quad
        M_{2D}(<R) = \frac{\pi\sigma^2 R}{G}

    (Binney & Tremaine 2008, eq. 4.103; Schneider, Kochanek & Wambsganss 2006,
    Part 1, eq. 47).  Its Einstein angle is
    :math:`\theta_E = 4\pi(\sigma/c)^2 D_{ls}/D_s`.

    Parameters
    ----------
    sigma : float or Quantity
        Velocity dispersion in km/s.
    """

    sigma: jax.Array

    def __post_init__(self):
        object.__setattr__(self, "sigma", to_internal(self.sigma, KMS))

    def density(self, r):
        return self.sigma**2 / (2.0 * jnp.pi * G * as_float(r) ** 2)

    def enclosed_mass(self, r):
        return 2.0 * self.sigma**2 * as_float(r) / G

    def surface_density(self, R):
        return self.sigma**2 / (2.0 * G * as_float(R))

    def projected_mass(self, R):
        return jnp.pi * self.sigma**2 * as_float(R) / G


@jax.tree_util.register_dataclass
@dataclasses.dataclass(frozen=True)
class CoredIsothermal(SphericalProfile):
    r"""Non-singular isothermal sphere with a core radius r_c.

    .. math::

        \rho(r) = \frac{\sigma^2}{2\pi G (r^2 + r_c^2)},\qquad
        M(<r) = \frac{2\sigma^2}{G}\left[r - r_c \arctan\frac{r}{r_c}\right],

        \Sigma(R) = \frac{\sigma^2}{2 G \sqrt{R^2 + r_c^2}},\qquad
        M_{2D}(<R) = \frac{\pi\sigma^2}{G}\left[\sqrt{R^2 + r_c^2} - r_c\right]

    (Keeton 2001, astro-ph/0102341, "A catalog of mass models for
    gravitational lensing", section 3.1, the cored isothermal sphere; Hinshaw &
    Krauss 1987).  Its mean convergence falls monotonically from the central
    value :math:`\Sigma(0)/\Sigma_{cr}`, so the lens is sub-critical (no
    Einstein ring) when that central convergence is at most 1.

    Parameters
    ----------
    sigma : float or Quantity
        Asymptotic velocity-dispersion parameter, km/s.
    core_radius : float or Quantity
        Core radius r_c, kpc.
    """

    sigma: jax.Array
    core_radius: jax.Array

    def __post_init__(self):
        object.__setattr__(self, "sigma", to_internal(self.sigma, KMS))
        object.__setattr__(self, "core_radius", to_internal(self.core_radius, KPC))

    def density(self, r):
        r = as_float(r)
        return self.sigma**2 / (2.0 * jnp.pi * G * (r**2 + self.core_radius**2))

    def enclosed_mass(self, r):
        r = as_float(r)
        rc = self.core_radius
        # r - rc arctan(r/rc) loses ~1e-16/x^2 relative for x = r/rc << 1; below
        # x = 0.1 use x - arctan x = sum_k (-1)^(k+1) x^(2k+1) / (2k+1) to x^23.
        x = r / rc
        small = x < 0.1
        xs = jnp.where(small, 1.0, x)
        big = rc * (xs - jnp.arctan(xs))
        xz = jnp.where(small, x, 0.0)
        series = rc * sum((-1.0) ** (k + 1) * xz ** (2 * k + 1) / (2 * k + 1) for k in range(1, 12))
        return 2.0 * self.sigma**2 / G * jnp.where(small, series, big)

    def surface_density(self, R):
        R = as_float(R)
        return self.sigma**2 / (2.0 * G * jnp.sqrt(R**2 + self.core_radius**2))

    def projected_mass(self, R):
        R = as_float(R)
        rc = self.core_radius
        # sqrt(R^2 + rc^2) - rc = R^2 / (sqrt(R^2 + rc^2) + rc), without cancellation.
        return jnp.pi * self.sigma**2 / G * R**2 / (jnp.sqrt(R**2 + rc**2) + rc)
