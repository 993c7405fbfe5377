r"""Stellar initial mass functions and the stellar-mass normalisation of a lens.

The lens galaxy's SED gives a stellar mass :math:`M_{*,\rm ref}` under a
reference IMF (Chabrier 2003 unless stated); the true stellar mass is
:math:`M_* = \alpha_{\rm IMF} M_{*,\rm ref}`.  This sub-package provides

- IMFs as JAX pytrees (:class:`PowerLawIMF`, :class:`BrokenPowerLawIMF` — the
  family with a free low-mass slope —, :class:`LognormalPowerLawIMF`) and
  named ones via :func:`get_imf` (``"salpeter55"``, ``"kroupa01"``,
  ``"chabrier03"``);
- the stellar-evolution ingredients: main-sequence lifetimes and turn-off
  masses, a mass–luminosity relation, initial–final (remnant) mass relations;
- :func:`imf_mass_factor`, the mass ratio at equal light of two old
  populations, and :func:`stellar_budget`, the mass and light behind it.

The prior on :math:`\log_{10}\alpha_{\rm IMF}` is declared in the model files
and built by :mod:`lensinfer.model`.

Everything is pure JAX in float64, differentiable and ``vmap``-able; units are
Msun, Gyr, Lsun and kpc.  No numpyro here: the model layer wraps the priors.
"""

from lensinfer.stellar.evolution import (
    main_sequence_lifetime_gyr,
    main_sequence_luminosity,
    turnoff_mass,
    turnoff_mass_rate,
)
from lensinfer.stellar.imf import (
    NAMED_IMFS,
    BrokenPowerLawIMF,
    LognormalPowerLawIMF,
    PowerLawIMF,
    get_imf,
)
from lensinfer.stellar.mass_factor import StellarBudget, imf_mass_factor, stellar_budget
from lensinfer.stellar.remnants import (
    NAMED_REMNANT_RELATIONS,
    RemnantMassRelation,
    get_remnant_relation,
)

__all__ = [
    "NAMED_IMFS",
    "NAMED_REMNANT_RELATIONS",
    "BrokenPowerLawIMF",
    "LognormalPowerLawIMF",
    "PowerLawIMF",
    "RemnantMassRelation",
    "StellarBudget",
    "get_imf",
    "get_remnant_relation",
    "imf_mass_factor",
    "main_sequence_lifetime_gyr",
    "main_sequence_luminosity",
    "stellar_budget",
    "turnoff_mass",
    "turnoff_mass_rate",
]
