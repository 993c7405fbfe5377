"""Power-law density: comparison with Keeton (2001), scipy's Beta function and the SIS.

Keeton (2001, astro-ph/0102341), sect. 3.1 (from memory): the power-law lens
with kappa ∝ R^(1 - gamma) (rho ∝ r^-gamma, his alpha = 3 - gamma) has deflection
alpha(R) = b^(gamma-1) R^(2-gamma), i.e. mean convergence inside R equal to
2 kappa(R) / (3 - gamma).  In mass units: M_2D = 2 pi R^2 Sigma(R) / (3 - gamma).
The line-of-sight factor int (1 + t^2)^(-gamma/2) dt over the real line is the
Beta function B(1/2, (gamma - 1)/2) (Gradshteyn & Ryzhik 2007, 3.251.11, from
memory), evaluated here with scipy.special.beta — independent of lensinfer's
gammaln form.
"""

import math

import astropy.units as u
import jax.numpy as jnp
import numpy as np
import pytest
from scipy import special

from lensinfer._constants import G_KPC_KMS2_PER_MSUN as G
from lensinfer.profiles import PowerLaw, SingularIsothermal

RHO0, R0 = 1.0e8, 2.0
R = np.array([1e-3, 0.1, 2.0, 30.0, 1e3])
SLOPES = [1.2, 1.5, 1.9, 2.0, 2.3, 2.5, 2.9]


@pytest.mark.parametrize("gamma", SLOPES)
def test_surface_density_beta_function(gamma):
    # Sigma(R) = rho0 r0^gamma R^(1-gamma) B(1/2, (gamma-1)/2); 1e-13 (scipy's
    # beta and jax's gammaln each carry ~1e-15; R^(1-gamma) a few ulp).
    p = PowerLaw(RHO0, R0, gamma)
    expected = RHO0 * R0**gamma * R ** (1 - gamma) * special.beta(0.5, 0.5 * (gamma - 1))
    np.testing.assert_allclose(np.asarray(p.surface_density(jnp.asarray(R))), expected, rtol=1e-13)


@pytest.mark.parametrize("gamma", SLOPES)
def test_keeton_mean_convergence_relation(gamma):
    # Keeton (2001): kappa_bar(R) = 2 kappa(R) / (3 - gamma) <=> M_2D = pi R^2
    # * 2 Sigma / (3 - gamma), and M_3D = 4 pi rho0 r0^gamma r^(3-gamma) / (3 - gamma).
    p = PowerLaw(RHO0, R0, gamma)
    sigma = np.asarray(p.surface_density(jnp.asarray(R)))
    np.testing.assert_allclose(
        np.asarray(p.projected_mass(jnp.asarray(R))),
        2 * math.pi * R**2 * sigma / (3 - gamma),
        rtol=1e-14,
    )
    np.testing.assert_allclose(
        np.asarray(p.enclosed_mass(jnp.asarray(R))),
        4 * math.pi * RHO0 * R0**gamma * R ** (3 - gamma) / (3 - gamma),
        rtol=1e-13,
    )


def test_slope_two_is_the_singular_isothermal_sphere():
    # gamma = 2 with rho0 r0^2 = sigma^2 / (2 pi G) is the SIS (Binney &
    # Tremaine 2008, eq. 4.103); all four quantities agree to 1e-13
    # (Gamma(1/2)/Gamma(1) = sqrt(pi) is exact up to rounding).
    sigma = 220.0
    p = PowerLaw(sigma**2 / (2 * math.pi * G * R0**2), R0, 2.0)
    sis = SingularIsothermal(sigma)
    for method in ("density", "enclosed_mass", "surface_density", "projected_mass"):
        np.testing.assert_allclose(
            np.asarray(getattr(p, method)(jnp.asarray(R))),
            np.asarray(getattr(sis, method)(jnp.asarray(R))),
            rtol=1e-13,
        )


def test_constructor_accepts_quantities():
    # rho0 = 0.1 Msun / pc^3 = 1e8 Msun / kpc^3; r0 = 2000 pc; 1e-14.
    q = PowerLaw(0.1 * u.Msun / u.pc**3, 2000.0 * u.pc, 2.2)
    p = PowerLaw(RHO0, R0, 2.2)
    for method in ("density", "enclosed_mass", "surface_density", "projected_mass"):
        np.testing.assert_allclose(
            np.asarray(getattr(q, method)(jnp.asarray(R))),
            np.asarray(getattr(p, method)(jnp.asarray(R))),
            rtol=1e-14,
        )
