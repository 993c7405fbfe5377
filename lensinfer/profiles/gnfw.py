"""The generalized NFW halo with a free inner slope."""

from __future__ import annotations

import dataclasses

import jax
import jax.numpy as jnp

from lensinfer.profiles._units import KPC, MSUN, MSUN_PER_KPC3, to_internal
from lensinfer.profiles.base import SphericalProfile, as_float

__all__ = ["GeneralizedNFW"]


@jax.tree_util.register_dataclass
@dataclasses.dataclass(frozen=True)
class GeneralizedNFW(SphericalProfile):
    r"""Generalized NFW profile with inner logarithmic slope gamma.

    .. math::

        \rho(r) = \frac{\rho_s}{(r/r_s)^\gamma (1 + r/r_s)^{3-\gamma}}

    (Zhao 1996, MNRAS 278, 488, the (alpha, beta, gamma) = (1, 3, gamma) member;
    Wyithe, Turner & Spergel 2001, ApJ 555, 504 for its lensing).  gamma = 1 is
    NFW.  The enclosed mass, surface density and cylinder mass have no
    elementary closed form for general gamma and are computed by the fixed-node
    quadrature of :mod:`lensinfer.profiles._quadrature` (relative accuracy
    better than 1e-8 for 0 <= gamma <= 2.5, checked against scipy in the tests).

    Parameters
    ----------
    rho_s : float or Quantity
        Characteristic density, Msun / kpc^3.
    r_s : float or Quantity
        Scale radius, kpc.
    inner_slope : float
        gamma, with 0 <= gamma < 3.
    """

    rho_s: jax.Array
    r_s: jax.Array
    inner_slope: jax.Array

    def __post_init__(self):
        object.__setattr__(self, "rho_s", to_internal(self.rho_s, MSUN_PER_KPC3))
        object.__setattr__(self, "r_s", to_internal(self.r_s, KPC))

    @classmethod
    def from_m200c(cls, m200c, c200c, inner_slope, z, cosmology) -> GeneralizedNFW:
        r"""Build from M200c and the concentration c200c = r200c / r_{-2}.

        Concentration–mass relations define c through :math:`r_{-2}`, where
        the logarithmic density slope is -2.  For this profile
        :math:`d\ln\rho/d\ln r = -\gamma - (3-\gamma)\,x/(1+x)`, which is -2
        at :math:`x = 2 - \gamma`, so :math:`r_{-2} = (2 - \gamma)\,r_s`
        (NFW: :math:`r_{-2} = r_s`) and

        .. math:: r_s = \frac{r_{200c}}{(2 - \gamma)\, c_{200c}},

        defined for :math:`\gamma < 2` (a steeper cusp has no radius of slope
        -2; NaN is returned).  rho_s follows from M(<r200c) = M200c with the
        quadrature enclosed mass.
        """
        m200c = as_float(to_internal(m200c, MSUN))
        c200c = as_float(c200c)
        inner_slope = as_float(inner_slope)
        rho_c = cosmology.critical_density(z)
        r200 = (3.0 * m200c / (4.0 * jnp.pi * 200.0 * rho_c)) ** (1.0 / 3.0)
        r_minus2_over_rs = jnp.where(inner_slope < 2.0, 2.0 - inner_slope, jnp.nan)
        r_s = r200 / (c200c * r_minus2_over_rs)
        unit = cls(rho_s=1.0, r_s=r_s, inner_slope=inner_slope)
        return cls(rho_s=m200c / unit.enclosed_mass(r200), r_s=r_s, inner_slope=inner_slope)

    @property
    def quadrature_scale(self):
        return self.r_s

    def density(self, r):
        x = as_float(r) / self.r_s
        g = self.inner_slope
        return self.rho_s / (x**g * (1.0 + x) ** (3.0 - g))
