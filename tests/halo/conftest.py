"""Reference implementations for the halo tests, independent of lensinfer.

The NFW mass conversion is re-derived here the slow, direct way: build the
density profile in physical units from (M, c) with astropy's critical density and
Omega_m(z), then find the radius where the mean enclosed density equals the new
overdensity with ``scipy.optimize.brentq``.  Nothing from ``lensinfer.halo`` is
used, so agreement is a real check of the Newton solver.
"""

import math

import numpy as np
import pytest
from astropy import units as u
from astropy.cosmology import Planck18
from scipy.optimize import brentq


def _nfw_m(x):
    # Navarro, Frenk & White (1997): M(<r) = 4 pi rho_s r_s^3 [ln(1+x) - x/(1+x)].
    return math.log1p(x) - x / (1.0 + x)


def reference_overdensity(definition, z, cosmo=Planck18):
    """Delta relative to the critical density, from astropy's Om(z)."""
    om = float(cosmo.Om(z))
    if definition == "vir":
        # Bryan & Norman (1998, ApJ 495, 80), eq. 6, flat universe.
        x = om - 1.0
        return 18.0 * math.pi**2 + 82.0 * x - 39.0 * x**2
    factor = float(definition[:-1])
    return factor * om if definition.endswith("m") else factor


def reference_convert(mass, c, z, from_, to, cosmo=Planck18):
    """(mass, concentration) in definition ``to`` by a bracketing root find in radius."""
    rho_c = cosmo.critical_density(z).to_value(u.Msun / u.kpc**3)
    d_from = reference_overdensity(from_, z, cosmo)
    d_to = reference_overdensity(to, z, cosmo)
    r_from = (3.0 * mass / (4.0 * math.pi * d_from * rho_c)) ** (1.0 / 3.0)
    r_s = r_from / c
    rho_s = mass / (4.0 * math.pi * r_s**3 * _nfw_m(c))

    def excess(r):  # mean enclosed density minus the target, in units of rho_c
        m_enc = 4.0 * math.pi * rho_s * r_s**3 * _nfw_m(r / r_s)
        return m_enc / (4.0 / 3.0 * math.pi * r**3) / rho_c - d_to

    r_to = brentq(excess, 1e-3 * r_from, 1e3 * r_from, xtol=1e-14 * r_from, rtol=1e-15)
    m_to = 4.0 * math.pi * rho_s * r_s**3 * _nfw_m(r_to / r_s)
    return m_to, r_to / r_s


@pytest.fixture(scope="session")
def nfw_reference():
    """The reference converter: ``nfw_reference(mass, c, z, from_, to) -> (mass, c)``."""
    return np.vectorize(reference_convert, excluded={"from_", "to", "cosmo"})


@pytest.fixture(scope="session")
def reference_delta():
    """``reference_delta(definition, z)``: overdensity from astropy's Om(z)."""
    return reference_overdensity
