"""Circular convergence, mean convergence and deflection of any spherical profile."""

import jax.numpy as jnp

from lensinfer.profiles.base import as_profile

__all__ = ["convergence", "deflection", "mean_convergence"]


def convergence(components, R, sigma_crit):
    r"""Convergence :math:`\kappa(R) = \Sigma(R) / \Sigma_{\rm cr}`.

    Parameters
    ----------
    components : profile, Composite, or list of profiles
    R : float or array
        Projected radius in kpc.
    sigma_crit : float
        Critical surface density in Msun / kpc^2
        (:func:`~lensinfer.lensing.critical_surface_density`).
    """
    return as_profile(components).surface_density(R) / sigma_crit


def mean_convergence(components, R, sigma_crit):
    r"""Mean convergence inside R: :math:`\bar\kappa(R) = M_{2D}(<R) / (\pi R^2 \Sigma_{\rm cr})`.

    (Schneider, Kochanek & Wambsganss 2006, Part 1, eq. 33.)
    """
    R = jnp.asarray(R, dtype=jnp.float64)
    return as_profile(components).projected_mass(R) / (jnp.pi * R**2 * sigma_crit)


def deflection(components, R, sigma_crit):
    r"""Scaled deflection of an axisymmetric lens, in kpc on the lens plane.

    .. math:: \alpha(R) = R\,\bar\kappa(R) = \frac{M_{2D}(<R)}{\pi \Sigma_{\rm cr} R}

    (Schneider, Kochanek & Wambsganss 2006, Part 1, eq. 31).  Divide by
    :meth:`Cosmology.kpc_per_arcsec` at the lens redshift for arcsec; the lens
    equation reads :math:`\beta = \theta - \alpha(\theta)`.
    """
    R = jnp.asarray(R, dtype=jnp.float64)
    return as_profile(components).projected_mass(R) / (jnp.pi * R * sigma_crit)
