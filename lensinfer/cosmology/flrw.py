"""Friedmann–Lemaître–Robertson–Walker background cosmology in JAX."""

from __future__ import annotations

import dataclasses
import math

import jax
import jax.numpy as jnp
import numpy as np

from lensinfer._constants import ARCSEC_RAD, KPC_PER_MPC

__all__ = ["Cosmology"]

# Fixed Gauss–Legendre nodes on [-1, 1] for the line-of-sight integral of 1/E(z).
# 1/E(z) is analytic and slowly varying in ln(1 + z); 64 nodes in ln(1+z) give a
# relative error below 1e-12 for 0 <= z <= 1100 (checked against astropy in tests).
_N_GL = 64
_GL_X, _GL_W = np.polynomial.legendre.leggauss(_N_GL)  # numpy: safe during a trace

# Komatsu et al. (2011, ApJS 192, 18), eq. 26: fitting constants for the energy
# density of massive neutrinos; the same treatment astropy documents for its FLRW
# classes.
_NU_P = 1.83
_NU_K = 0.3173
# 7/8 (4/11)^(4/3): energy density of one massless neutrino species per photon.
_NU_PREFACTOR = 7.0 / 8.0 * (4.0 / 11.0) ** (4.0 / 3.0)


@jax.tree_util.register_dataclass
@dataclasses.dataclass(frozen=True)
class Cosmology:
    r"""An immutable FLRW cosmology whose distances are computed in JAX.

    The expansion rate is

    .. math::

        E^2(z) = \Omega_m (1+z)^3 + \Omega_\gamma (1+z)^4 [1 + f_\nu(z)]
                 + \Omega_k (1+z)^2 + \Omega_\Lambda ,

    with a cosmological constant and the massive-neutrino density ratio
    :math:`f_\nu(z)` of Komatsu et al. (2011, ApJS 192, 18, eq. 26), i.e. the
    treatment astropy documents for ``FLRW.nu_relative_density``.  ``Omega_m``
    is cold dark matter plus baryons at z = 0 (massive neutrinos are counted in
    the radiation-like term), as in astropy.

    All fields are arrays (pytree leaves) so a cosmology can be passed through
    ``jax.jit`` and ``jax.vmap``; build one with :meth:`from_astropy` or
    :meth:`default` rather than by hand.

    Attributes
    ----------
    h0 : float
        Hubble constant in km/s/Mpc.
    om0, ode0, ok0, ogamma0 : float
        Density parameters at z = 0 (matter, dark energy, curvature, photons).
    ob0 : float
        Baryon density parameter at z = 0 (NaN when the cosmology has none).
    neff_per_nu : float
        N_eff / 3, the effective number of species per neutrino.
    nu_y : array of shape (3,)
        m_nu c^2 / (k_B T_nu0) for the three species (0 for massless ones).
    massive : array of shape (3,)
        1.0 for species treated as massive, 0.0 otherwise.
    hubble_distance_mpc : float
        c / H0 in Mpc.
    critical_density0 : float
        3 H0^2 / (8 pi G) in Msun / kpc^3.
    """

    h0: jax.Array
    om0: jax.Array
    ode0: jax.Array
    ok0: jax.Array
    ogamma0: jax.Array
    ob0: jax.Array
    neff_per_nu: jax.Array
    nu_y: jax.Array
    massive: jax.Array
    hubble_distance_mpc: jax.Array
    critical_density0: jax.Array

    # ------------------------------------------------------------------ builders
    @classmethod
    def from_astropy(cls, cosmo) -> Cosmology:
        """Build from an astropy ``FLRW`` cosmology with a cosmological constant.

        Parameters
        ----------
        cosmo : astropy.cosmology.FLRW
            ``LambdaCDM``, ``FlatLambdaCDM`` or a realisation such as
            ``Planck18``.  Dark energy with w != -1 is refused.

        Returns
        -------
        Cosmology
        """
        import astropy.constants as const
        import astropy.units as u
        from astropy.cosmology import LambdaCDM

        if not isinstance(cosmo, LambdaCDM):
            raise TypeError(
                f"Cosmology.from_astropy accepts a LambdaCDM or FlatLambdaCDM astropy "
                f"cosmology (w = -1); got {type(cosmo).__name__}"
            )
        m_nu = cosmo.m_nu
        nu_y = np.zeros(3)
        massive = np.zeros(3)
        if m_nu is not None and cosmo.has_massive_nu:
            tnu0 = cosmo.Tnu0
            y = (m_nu.to(u.eV, u.mass_energy()) / (const.k_B * tnu0)).to_value(
                u.dimensionless_unscaled
            )
            y = np.atleast_1d(y)
            nu_y[: y.size] = y
            massive[: y.size] = (y > 0).astype(float)
        ob0 = cosmo.Ob0 if cosmo.Ob0 is not None else math.nan
        fields = dict(
            h0=cosmo.H0.to_value(u.km / u.s / u.Mpc),
            om0=cosmo.Om0,
            ode0=cosmo.Ode0,
            ok0=cosmo.Ok0,
            ogamma0=cosmo.Ogamma0,
            ob0=ob0,
            neff_per_nu=cosmo.Neff / 3.0,
            nu_y=nu_y,
            massive=massive,
            hubble_distance_mpc=cosmo.hubble_distance.to_value(u.Mpc),
            critical_density0=cosmo.critical_density0.to_value(u.Msun / u.kpc**3),
        )
        return cls(**{k: jnp.asarray(v, dtype=jnp.float64) for k, v in fields.items()})

    @classmethod
    def default(cls) -> Cosmology:
        """The default cosmology: astropy's ``Planck18`` (Planck 2018 VI, Table 2)."""
        from astropy.cosmology import Planck18

        return cls.from_astropy(Planck18)

    # ------------------------------------------------------------- expansion
    def nu_relative_density(self, z):
        r"""Neutrino-to-photon energy density ratio :math:`f_\nu(z)`.

        Komatsu et al. (2011), eq. 26: each massive species contributes
        :math:`(7/8)(4/11)^{4/3} N_{\rm eff}/3\,[1 + (k y)^p]^{1/p}` with
        :math:`y = m_\nu c^2/(k_B T_{\nu}) / (1+z)`, p = 1.83, k = 0.3173.
        """
        z = jnp.asarray(z, dtype=jnp.float64)
        # Massless species (y = 0) are given a safe y = 1 before the power, so
        # derivatives of every order stay finite (0^0.83 has no second derivative).
        y = jnp.where(self.massive > 0, self.nu_y, 1.0) / (1.0 + z)[..., None]
        rel = jnp.where(self.massive > 0, (1.0 + (_NU_K * y) ** _NU_P) ** (1.0 / _NU_P), 1.0)
        return _NU_PREFACTOR * self.neff_per_nu * jnp.sum(rel, axis=-1)

    def efunc(self, z):
        """Dimensionless Hubble rate E(z) = H(z) / H0."""
        zp1 = 1.0 + jnp.asarray(z, dtype=jnp.float64)
        e2 = (
            self.om0 * zp1**3
            + self.ogamma0 * zp1**4 * (1.0 + self.nu_relative_density(z))
            + self.ok0 * zp1**2
            + self.ode0
        )
        return jnp.sqrt(e2)

    # ------------------------------------------------------------- distances
    def _comoving_between(self, z1, z2):
        """Line-of-sight comoving distance between z1 and z2 in units of c/H0.

        Gauss–Legendre quadrature in u = ln(1+z): dz / E = (1+z) du / E.
        """
        u1 = jnp.log1p(jnp.asarray(z1, dtype=jnp.float64))
        u2 = jnp.log1p(jnp.asarray(z2, dtype=jnp.float64))
        half = 0.5 * (u2 - u1)
        mid = 0.5 * (u2 + u1)
        u = mid[..., None] + half[..., None] * _GL_X
        zz = jnp.expm1(u)
        integrand = (1.0 + zz) / self.efunc(zz)
        return half * jnp.sum(_GL_W * integrand, axis=-1)

    def _transverse(self, dc):
        """Comoving transverse distance (units of c/H0) from the line-of-sight one.

        Hogg (1999, astro-ph/9905116), eq. 16, written to be smooth through
        Omega_k = 0 (sinh(x)/x and sin(x)/x series are handled by ``jnp.sinc``
        style expansions).
        """
        ok = self.ok0
        sq = jnp.sqrt(jnp.abs(ok))
        x = sq * dc
        # sinh(x)/x for ok > 0, sin(x)/x for ok < 0, both -> 1 as ok -> 0.
        small = x < 1e-4
        xs = jnp.where(small, 1.0, x)
        ratio_pos = jnp.where(small, 1.0 + x**2 / 6.0, jnp.sinh(xs) / xs)
        ratio_neg = jnp.where(small, 1.0 - x**2 / 6.0, jnp.sin(xs) / xs)
        ratio = jnp.where(ok > 0, ratio_pos, jnp.where(ok < 0, ratio_neg, 1.0))
        return dc * ratio

    def comoving_distance(self, z):
        """Line-of-sight comoving distance to redshift z, in Mpc."""
        return self.hubble_distance_mpc * self._comoving_between(0.0, z)

    def comoving_transverse_distance(self, z):
        """Comoving transverse distance to redshift z, in Mpc."""
        return self.hubble_distance_mpc * self._transverse(self._comoving_between(0.0, z))

    def angular_diameter_distance(self, z):
        r"""Angular diameter distance to redshift z, in Mpc.

        .. math:: D_A(z) = D_M(z) / (1 + z)

        (Hogg 1999, eq. 18).
        """
        z = jnp.asarray(z, dtype=jnp.float64)
        return self.comoving_transverse_distance(z) / (1.0 + z)

    def angular_diameter_distance_between(self, z1, z2):
        r"""Angular diameter distance between z1 < z2, in Mpc.

        .. math::

            D_A(z_1, z_2) = \frac{D_H}{1 + z_2}\,
                S_k\!\left[\frac{D_C(z_2) - D_C(z_1)}{D_H}\right]

        the form astropy uses, exact for Omega_k >= 0 and the usual
        definition for Omega_k < 0 (Hogg 1999, eq. 19).
        """
        z2 = jnp.asarray(z2, dtype=jnp.float64)
        dc12 = self._comoving_between(z1, z2)
        return self.hubble_distance_mpc * self._transverse(dc12) / (1.0 + z2)

    def critical_density(self, z):
        r"""Critical density :math:`3 H(z)^2 / (8 \pi G)` in Msun / kpc^3."""
        return self.critical_density0 * self.efunc(z) ** 2

    def kpc_per_arcsec(self, z):
        """Proper transverse kpc per arcsecond at redshift z (D_A times 1 arcsec)."""
        return self.angular_diameter_distance(z) * KPC_PER_MPC * ARCSEC_RAD

    def omega_m(self, z):
        """Matter density parameter at redshift z: Omega_m (1+z)^3 / E(z)^2."""
        zp1 = 1.0 + jnp.asarray(z, dtype=jnp.float64)
        return self.om0 * zp1**3 / self.efunc(z) ** 2

    @property
    def baryon_fraction(self):
        """Cosmic baryon fraction Omega_b / Omega_m (NaN if Omega_b is unknown)."""
        return self.ob0 / self.om0
