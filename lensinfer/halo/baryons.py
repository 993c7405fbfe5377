r"""The cosmic baryon fraction and the galaxy's largest share of its halo mass."""

from __future__ import annotations

from lensinfer.cosmology import Cosmology
from lensinfer.halo._common import resolve_cosmology

__all__ = ["baryon_fraction", "max_galaxy_fraction"]


def baryon_fraction(cosmology: Cosmology | None = None):
    r"""Cosmic baryon fraction :math:`f_b = \Omega_b / \Omega_m`.

    Parameters
    ----------
    cosmology : Cosmology, optional
        Defaults to Planck18 (:math:`f_b \approx 0.158`).  A cosmology built
        without :math:`\Omega_b` gives NaN.

    Returns
    -------
    array
        :math:`\Omega_{b,0} / \Omega_{m,0}` (the ratio is the same at every
        redshift).

    Notes
    -----
    The default parameters are those of astropy's ``Planck18`` realisation, as
    for :meth:`lensinfer.cosmology.Cosmology.default`.
    """
    cosmology = resolve_cosmology(cosmology)
    return cosmology.ob0 / cosmology.om0


def max_galaxy_fraction(cosmology: Cosmology | None = None):
    r"""Default upper bound on the galaxy's share of the halo mass, :math:`f_{\rm gal}`.

    .. math:: f_{\rm gal} = M_* / M_{200c} \le f_b = \Omega_b / \Omega_m

    A galaxy cannot hold more baryons than its halo brought in.  The bound
    applies to the stellar mass that actually sits in the galaxy, the true
    :math:`M_* = \alpha_{\rm IMF} M_{*,\rm ref}`, unlike the stellar-to-halo
    relations (:func:`~lensinfer.halo.stellar_mass_from_halo`), which
    constrain the reference-IMF mass :math:`M_{*,\rm ref}`.

    Parameters
    ----------
    cosmology : Cosmology, optional
        Defaults to Planck18.

    Returns
    -------
    array
        The bound, equal to :func:`baryon_fraction`.
    """
    return baryon_fraction(cosmology)
