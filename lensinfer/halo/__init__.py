"""Halo relations: mass definitions, concentration–mass and stellar-to-halo relations.

- :mod:`~lensinfer.halo.mass_definition` — overdensities (200c, 500c, 200m, virial
  after Bryan & Norman 1998), radii, and :func:`convert_mass` between definitions
  for an NFW halo;
- :mod:`~lensinfer.halo.concentration_mass` — median :math:`c_{200c}` from published
  concentration–mass relations (Duffy et al. 2008; Dutton & Macciò 2014) and their
  scatter;
- :mod:`~lensinfer.halo.stellar_halo` — median reference-IMF stellar mass from
  published stellar-to-halo relations (Moster, Naab & White 2013; Behroozi,
  Wechsler & Conroy 2013) and their scatter;
- :mod:`~lensinfer.halo.baryons` — the cosmic baryon fraction, the default upper
  bound on :math:`M_*/M_{200c}`.

Everything is JAX float64, works on scalars and broadcasting arrays, and is
differentiable; names of definitions and relations are static strings.
"""

from lensinfer.halo.baryons import baryon_fraction, max_galaxy_fraction
from lensinfer.halo.concentration_mass import (
    CONCENTRATION_RELATIONS,
    concentration,
    concentration_log_prior,
    concentration_scatter_dex,
)
from lensinfer.halo.mass_definition import (
    convert_mass,
    mass_from_radius,
    overdensity,
    radius_from_mass,
    virial_overdensity,
)
from lensinfer.halo.stellar_halo import (
    STELLAR_HALO_RELATIONS,
    stellar_mass_from_halo,
    stellar_mass_log_prior,
)

__all__ = [
    "CONCENTRATION_RELATIONS",
    "STELLAR_HALO_RELATIONS",
    "baryon_fraction",
    "concentration",
    "concentration_log_prior",
    "concentration_scatter_dex",
    "convert_mass",
    "mass_from_radius",
    "max_galaxy_fraction",
    "overdensity",
    "radius_from_mass",
    "stellar_mass_from_halo",
    "stellar_mass_log_prior",
    "virial_overdensity",
]
