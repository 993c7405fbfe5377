"""Isothermal spheres: comparison with Keeton (2001) and Binney & Tremaine (2008).

Keeton (2001, astro-ph/0102341, "A catalog of mass models for gravitational
lensing"), sect. 3.1 (from memory): the singular isothermal sphere has
convergence kappa = b / (2 R) and deflection alpha = b; the softened
(cored) isothermal sphere has kappa = b / (2 sqrt(s^2 + R^2)) and
alpha = b [sqrt(s^2 + R^2) - s] / R, with core radius s.  In mass units
Sigma = Sigma_cr kappa and M_2D = pi Sigma_cr R alpha, and Sigma_cr b = sigma^2 / G
(matching rho -> sigma^2 / (2 pi G r^2) at large r, Binney & Tremaine 2008,
eq. 4.103), so the lensing normalisation cancels and the checks are pure
mass-profile identities.
"""

import math

import astropy.units as u
import jax.numpy as jnp
import numpy as np
import pytest

from lensinfer._constants import G_KPC_KMS2_PER_MSUN as G
from lensinfer.profiles import CoredIsothermal, SingularIsothermal

mpmath = pytest.importorskip("mpmath")

SIGMA, RC = 220.0, 0.5  # km/s, kpc
SIS = SingularIsothermal(SIGMA)
CORED = CoredIsothermal(SIGMA, RC)
R = np.array([1e-3, 0.03, 0.5, 1.0, 7.0, 100.0, 1e3])

# Keeton's b times Sigma_cr, in Msun / kpc.
B_SIGMA_CR = SIGMA**2 / G


def test_sis_keeton_convergence_and_deflection():
    # Keeton (2001) SIS: Sigma = Sigma_cr b / (2R); M_2D = pi Sigma_cr b R
    # (alpha = b).  Products only: 1e-14.
    np.testing.assert_allclose(
        np.asarray(SIS.surface_density(jnp.asarray(R))), B_SIGMA_CR / (2 * R), rtol=1e-14
    )
    np.testing.assert_allclose(
        np.asarray(SIS.projected_mass(jnp.asarray(R))), math.pi * B_SIGMA_CR * R, rtol=1e-14
    )


def test_sis_three_dimensional_profile():
    # Binney & Tremaine (2008) eq. 4.103: rho = sigma^2 / (2 pi G r^2), so
    # M(<r) = 2 sigma^2 r / G; 1e-14.
    np.testing.assert_allclose(
        np.asarray(SIS.density(jnp.asarray(R))), SIGMA**2 / (2 * math.pi * G * R**2), rtol=1e-14
    )
    np.testing.assert_allclose(
        np.asarray(SIS.enclosed_mass(jnp.asarray(R))), 2 * SIGMA**2 * R / G, rtol=1e-14
    )


def test_cored_isothermal_keeton_convergence_and_deflection():
    # Keeton (2001) softened isothermal sphere, s = r_c: Sigma = Sigma_cr b /
    # (2 sqrt(s^2 + R^2)), M_2D = pi Sigma_cr b [sqrt(s^2 + R^2) - s]; the
    # latter evaluated here in 40 digits (it cancels for R << s).  1e-13.
    np.testing.assert_allclose(
        np.asarray(CORED.surface_density(jnp.asarray(R))),
        B_SIGMA_CR / (2 * np.sqrt(RC**2 + R**2)),
        rtol=1e-14,
    )
    with mpmath.workdps(40):
        expected = [
            float(mpmath.pi * B_SIGMA_CR * (mpmath.sqrt(RC**2 + mpmath.mpf(x) ** 2) - RC))
            for x in R
        ]
    np.testing.assert_allclose(
        np.asarray(CORED.projected_mass(jnp.asarray(R))), expected, rtol=1e-13
    )


def test_cored_isothermal_central_surface_density():
    # Sigma(0) = sigma^2 / (2 G r_c): finite core (Keeton 2001).
    assert float(CORED.surface_density(0.0)) == pytest.approx(
        SIGMA**2 / (2 * G * RC), rel=1e-14, abs=0
    )


X_CORE = [1e-5, 5e-4, 9.99e-4, 1e-3, 1.001e-3, 2e-3, 1e-2, 0.1, 1.0, 30.0, 1e3]


@pytest.mark.parametrize("x", X_CORE)
def test_cored_isothermal_enclosed_mass_in_mpmath(x):
    # M(<r) = (2 sigma^2 / G) [r - r_c arctan(r / r_c)] (integral of Keeton's
    # density), in 40 digits.  1e-12 for a closed form: the source's own
    # comment says the bracket "loses digits for r << r_c" and switches to a
    # series for that reason, so no cancellation should survive.
    with mpmath.workdps(40):
        xm = mpmath.mpf(x)
        expected = float(2 * SIGMA**2 / G * RC * (xm - mpmath.atan(xm)))
    assert float(CORED.enclosed_mass(x * RC)) == pytest.approx(expected, rel=1e-12, abs=0)


def test_cored_isothermal_tends_to_sis():
    # r_c -> 0: every quantity tends to the SIS (Keeton 2001); at r = 1e4 r_c
    # the relative differences are O(r_c / r) = 1e-4 (M_3D, M_2D) and
    # O((r_c/r)^2) (rho, Sigma).
    r = 1e4 * RC
    assert float(CORED.enclosed_mass(r)) == pytest.approx(
        float(SIS.enclosed_mass(r)), rel=2e-4, abs=0
    )
    assert float(CORED.projected_mass(r)) == pytest.approx(
        float(SIS.projected_mass(r)), rel=2e-4, abs=0
    )
    assert float(CORED.density(r)) == pytest.approx(float(SIS.density(r)), rel=2e-8, abs=0)
    assert float(CORED.surface_density(r)) == pytest.approx(
        float(SIS.surface_density(r)), rel=2e-8, abs=0
    )


def test_constructors_accept_quantities():
    # 220 km/s given in m/s; 0.5 kpc in pc; 1e-14.
    a = CoredIsothermal(2.2e5 * u.m / u.s, 500.0 * u.pc)
    b = SingularIsothermal(220.0 * u.km / u.s)
    r = jnp.asarray([0.1, 1.0, 10.0])
    for method in ("density", "enclosed_mass", "surface_density", "projected_mass"):
        np.testing.assert_allclose(
            np.asarray(getattr(a, method)(r)), np.asarray(getattr(CORED, method)(r)), rtol=1e-14
        )
        np.testing.assert_allclose(
            np.asarray(getattr(b, method)(r)), np.asarray(getattr(SIS, method)(r)), rtol=1e-14
        )
