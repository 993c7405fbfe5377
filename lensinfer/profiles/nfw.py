"""The Navarro, Frenk & White (1997) dark-matter halo."""

from __future__ import annotations

import dataclasses

import jax
import jax.numpy as jnp

from lensinfer.profiles._special import NEAR_ONE, arccosh_ratio, near_one
from lensinfer.profiles._units import KPC, MSUN, MSUN_PER_KPC3, to_internal
from lensinfer.profiles.base import SphericalProfile, as_float

__all__ = ["NFW", "nfw_mass_function"]


def nfw_mass_function(x):
    r""":math:`m(x) = \ln(1+x) - x/(1+x)`, so that M(<r) = 4 pi rho_s r_s^3 m(r/r_s).

    Below x = 0.05 the series :math:`m = \sum_{k\ge2} (-1)^k (k-1) x^k / k`
    (to k = 13, truncation ~1e-16 relative) replaces the closed form, whose
    cancellation costs ~1e-16/x^2 relative (4e-14 at x = 0.05).
    """
    x = as_float(x)
    small = x < 0.05
    xs = jnp.where(small, 1.0, x)
    direct = jnp.log1p(xs) - xs / (1.0 + xs)
    xz = jnp.where(small, x, 0.0)
    series = sum((-1.0) ** k * (k - 1) / k * xz**k for k in range(2, 14))
    return jnp.where(small, series, direct)


# Taylor coefficients about x = 1 of (1 - F(x)) / (x^2 - 1) (sympy; checked in tests).
_SIGMA_SERIES = (
    0.3333333333333333,
    -0.4,
    0.37142857142857144,
    -0.31746031746031744,
    0.26406926406926406,
    -0.2191142191142191,
    0.18352758352758353,
    -0.15598519127930893,
    0.13472904804174154,
    -0.11819140611710272,
    0.10514334232196663,
)


def _sigma_shape(x):
    """(1 - F(x)) / (x^2 - 1), the dimensionless NFW surface density / (2 rho_s r_s)."""
    return near_one(x, lambda y: (1.0 - arccosh_ratio(y)) / (y**2 - 1.0), _SIGMA_SERIES)


def _projected_shape(x):
    r"""h(x) = ln(x/2) + F(x), the dimensionless cylinder mass / (4 pi rho_s r_s^3).

    For x < 1 it is evaluated as
    :math:`h = [\ln(1 - (1-s)/2) + (1-s)\ln(2/x)]/s` with :math:`s = \sqrt{1-x^2}`
    and :math:`1 - s = x^2/(1+s)`, which has no cancellation as x -> 0
    (where h ~ x^2 [2 ln(2/x) - 1] / 4).
    """
    x = as_float(x)
    # Below 1 - NEAR_ONE the cancellation-free form; from there on ln(x/2) + F(x),
    # smooth through x = 1 because F uses its Taylor series near 1.
    lo = x < 1.0 - NEAR_ONE
    xl = jnp.where(lo, x, 0.5)
    s = jnp.sqrt(1.0 - xl**2)
    one_minus_s = xl**2 / (1.0 + s)
    h_lo = (jnp.log1p(-0.5 * one_minus_s) + one_minus_s * jnp.log(2.0 / xl)) / s
    xh = jnp.where(lo, 2.0, x)
    h_hi = jnp.log(xh / 2.0) + arccosh_ratio(xh)
    return jnp.where(lo, h_lo, h_hi)


@jax.tree_util.register_dataclass
@dataclasses.dataclass(frozen=True)
class NFW(SphericalProfile):
    r"""Navarro, Frenk & White (1997, ApJ 490, 493) density profile.

    .. math::

        \rho(r) = \frac{\rho_s}{(r/r_s)(1 + r/r_s)^2},\qquad
        M(<r) = 4\pi\rho_s r_s^3\, m(r/r_s),\quad m(x) = \ln(1+x) - \frac{x}{1+x}

    Projected quantities, with x = R / r_s and F(x) as in
    :func:`lensinfer.profiles._special.arccosh_ratio` (Wright & Brainerd 2000,
    ApJ 534, 34, eqs. 11 and 13; Bartelmann 1996, A&A 313, 697):

    .. math::

        \Sigma(R) = 2\rho_s r_s \frac{1 - F(x)}{x^2 - 1},\qquad
        M_{2D}(<R) = 4\pi\rho_s r_s^3 \left[\ln\frac{x}{2} + F(x)\right]

    Parameters
    ----------
    rho_s : float or Quantity
        Characteristic density, Msun / kpc^3.
    r_s : float or Quantity
        Scale radius, kpc.
    """

    rho_s: jax.Array
    r_s: jax.Array

    def __post_init__(self):
        object.__setattr__(self, "rho_s", to_internal(self.rho_s, MSUN_PER_KPC3))
        object.__setattr__(self, "r_s", to_internal(self.r_s, KPC))

    @classmethod
    def from_m200c(cls, m200c, c200c, z, cosmology) -> NFW:
        r"""Build from the mass and concentration at 200 times the critical density.

        .. math::

            r_{200} = \left(\frac{3 M_{200c}}{4\pi\cdot 200\,\rho_c(z)}\right)^{1/3},\quad
            r_s = r_{200}/c_{200},\quad
            \rho_s = \frac{M_{200c}}{4\pi r_s^3\, m(c_{200})}

        Parameters
        ----------
        m200c : float or Quantity
            Mass inside r200c, Msun.
        c200c : float
            Concentration r200c / r_s.
        z : float
            Halo redshift (sets rho_c(z)).
        cosmology : lensinfer.cosmology.Cosmology
        """
        m200c = as_float(to_internal(m200c, MSUN))
        c200c = as_float(c200c)
        rho_c = cosmology.critical_density(z)
        r200 = (3.0 * m200c / (4.0 * jnp.pi * 200.0 * rho_c)) ** (1.0 / 3.0)
        r_s = r200 / c200c
        rho_s = m200c / (4.0 * jnp.pi * r_s**3 * nfw_mass_function(c200c))
        return cls(rho_s=rho_s, r_s=r_s)

    @property
    def quadrature_scale(self):
        return self.r_s

    def density(self, r):
        x = as_float(r) / self.r_s
        return self.rho_s / (x * (1.0 + x) ** 2)

    def enclosed_mass(self, r):
        return 4.0 * jnp.pi * self.rho_s * self.r_s**3 * nfw_mass_function(as_float(r) / self.r_s)

    def surface_density(self, R):
        return 2.0 * self.rho_s * self.r_s * _sigma_shape(as_float(R) / self.r_s)

    def projected_mass(self, R):
        return 4.0 * jnp.pi * self.rho_s * self.r_s**3 * _projected_shape(as_float(R) / self.r_s)
