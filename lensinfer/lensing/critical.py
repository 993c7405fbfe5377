"""The critical surface density of a lens–source pair."""

import jax.numpy as jnp

from lensinfer._constants import KPC_PER_MPC, SIGMA_CRIT_PREFACTOR_MSUN_PER_KPC

__all__ = ["critical_surface_density"]


def critical_surface_density(z_lens, z_source, cosmology):
    r"""Critical surface density for lensing, in Msun / kpc^2.

    .. math::

        \Sigma_{\rm cr} = \frac{c^2}{4\pi G}\,\frac{D_s}{D_l D_{ls}}

    with angular-diameter distances to the lens, to the source, and between
    them (Schneider, Kochanek & Wambsganss 2006, Part 1, eq. 9).  Returns
    ``inf`` when z_source <= z_lens (no lensing), so callers can keep it
    inside jitted code; the spec layer rejects such inputs with a message.

    Parameters
    ----------
    z_lens, z_source : float
        Redshifts (traceable, so a photometric source redshift can be sampled).
    cosmology : lensinfer.cosmology.Cosmology
    """
    z_lens = jnp.asarray(z_lens, dtype=jnp.float64)
    z_source = jnp.asarray(z_source, dtype=jnp.float64)
    d_l = cosmology.angular_diameter_distance(z_lens)
    d_s = cosmology.angular_diameter_distance(z_source)
    valid = z_source > z_lens
    z_s_safe = jnp.where(valid, z_source, z_lens + 1.0)
    d_ls = cosmology.angular_diameter_distance_between(z_lens, z_s_safe)
    sigma = SIGMA_CRIT_PREFACTOR_MSUN_PER_KPC * d_s / (d_l * d_ls * KPC_PER_MPC)
    return jnp.where(valid, sigma, jnp.inf)
