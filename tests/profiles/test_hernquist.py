"""Hernquist sphere: comparison with Hernquist (1990, ApJ 356, 359).

Equations re-typed in numpy in ``_profile_reference`` (eqs. 2, 3, 32, 33, 37,
from memory of the paper's numbering); values at s = 1 come from the exact
series (test_special.py) and the projected half-mass radius from a scipy root
of eq. 37.
"""

import math

import _profile_reference as ref
import astropy.units as u
import jax.numpy as jnp
import numpy as np
import pytest
from scipy import optimize

from lensinfer.profiles import Hernquist

MASS, A = 1.0e11, 3.0  # Msun, kpc
PROFILE = Hernquist(MASS, A)

#: s = R / a away from 1, where the numpy eq. 32 / 37 have no cancellation
#: worse than ~1e3 ulp ((2 + s^2) X - 3 cancels to ~(1 - s)^2 near s = 1).
S_AWAY = np.array([1e-3, 1e-2, 0.1, 0.4, 0.7, 1.4, 2.0, 5.0, 20.0, 100.0, 1e3])


def test_density_and_mass_are_eqs_2_and_3():
    # Hernquist (1990) eqs. 2 and 3: products and quotients only, 1e-14.
    r = S_AWAY * A
    np.testing.assert_allclose(
        np.asarray(PROFILE.density(jnp.asarray(r))),
        [ref.hernquist_density(x, MASS, A) for x in r],
        rtol=1e-14,
    )
    np.testing.assert_allclose(
        np.asarray(PROFILE.enclosed_mass(jnp.asarray(r))),
        [ref.hernquist_mass(x, MASS, A) for x in r],
        rtol=1e-14,
    )


def test_surface_density_is_eq_32():
    # Hernquist (1990) eq. 32 with X(s) of eq. 33 (numpy, log / arctan form).
    # Tolerance 1e-12: both sides are closed forms; the eq. 32 bracket cancels
    # by at most a factor ~30 at these s.
    got = np.asarray(PROFILE.surface_density(jnp.asarray(S_AWAY * A)))
    np.testing.assert_allclose(
        got, [ref.hernquist_sigma(s * A, MASS, A) for s in S_AWAY], rtol=1e-12
    )


def test_cylinder_mass_is_eq_37():
    # Hernquist (1990) eq. 37, numpy; 1e-12 as above.
    got = np.asarray(PROFILE.projected_mass(jnp.asarray(S_AWAY * A)))
    np.testing.assert_allclose(
        got, [ref.hernquist_cylinder_mass(s * A, MASS, A) for s in S_AWAY], rtol=1e-12
    )


def test_values_at_the_scale_radius():
    # s -> 1 limits of eqs. 32 and 37 (leading terms of the exact series in
    # test_special.py): Sigma(a) = M / (2 pi a^2) * 4/15, M_2D(a) = M / 3.
    # Exact constants: 1e-15.
    assert float(PROFILE.surface_density(A)) == pytest.approx(
        MASS / (2 * math.pi * A**2) * 4 / 15, rel=1e-15, abs=0
    )
    assert float(PROFILE.projected_mass(A)) == pytest.approx(MASS / 3, rel=1e-15, abs=0)


def test_total_projected_mass():
    # eq. 37 -> M as s -> inf, as M s^2 (1 - X) / (s^2 - 1) with X ~ pi / (2 s):
    # M_2D(1e6 a) = M (1 - pi/2e6 + O(1e-12)); we check the 1e-6 deficit to 1e-9.
    got = float(PROFILE.projected_mass(1e6 * A)) / MASS
    assert got == pytest.approx(1.0 - math.pi / 2e6, abs=1e-9, rel=0)


def test_projected_half_mass_radius_is_1_8153_a():
    # Hernquist (1990) quotes R_e = 1.8153 a (from memory).  Root of
    # lensinfer's M_2D(R) = M / 2 by brentq; compared with the root of eq. 37
    # in numpy (to 1e-10: both closed forms, brentq xtol 1e-14) and with the
    # paper's 4-decimal value (to half a unit in the 4th decimal, 5e-5 a).
    root_lib = optimize.brentq(
        lambda s: float(PROFILE.projected_mass(s * A)) / MASS - 0.5, 1.2, 3.0, xtol=1e-14
    )
    root_ref = optimize.brentq(
        lambda s: ref.hernquist_cylinder_mass(s, 1.0, 1.0) - 0.5, 1.2, 3.0, xtol=1e-14
    )
    assert root_ref == pytest.approx(1.8153, abs=5e-5, rel=0)
    assert root_lib == pytest.approx(root_ref, abs=1e-10, rel=0)


def test_constructor_accepts_quantities():
    # 1e11 Msun given in kg, 3 kpc given in pc; astropy's conversion factors
    # round-trip to ~1e-16, so 1e-14.
    q = Hernquist((1e11 * u.Msun).to(u.kg), 3000.0 * u.pc)
    r = jnp.asarray([0.1, 3.0, 30.0])
    for method in ("density", "enclosed_mass", "surface_density", "projected_mass"):
        np.testing.assert_allclose(
            np.asarray(getattr(q, method)(r)), np.asarray(getattr(PROFILE, method)(r)), rtol=1e-14
        )
