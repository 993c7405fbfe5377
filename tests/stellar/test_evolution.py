"""Tests of lensinfer.stellar.evolution: lifetimes, turn-off masses, luminosities.

Comparison to outside truth is loose by nature (the lifetime fit of Raiteri,
Villata & Navarro 1996 is itself ~10 per cent accurate), so each check says
which published number it uses and why its tolerance is what it is.
Exactness checks (inversion, derivative) are internal consistency.
"""

import math

import astropy.units as u
import jax
import jax.numpy as jnp
import numpy as np
import pytest

from lensinfer.stellar import (
    main_sequence_lifetime_gyr,
    main_sequence_luminosity,
    turnoff_mass,
    turnoff_mass_rate,
)

from ._checks import assert_grads_match_fd


def test_solar_main_sequence_lifetime():
    # A solar-mass star's main-sequence lifetime is ~10 Gyr (textbook value; e.g.
    # Sackmann, Boothroyd & Kraemer 1993, ApJ 418, 457 find ~11 Gyr to the end
    # of core hydrogen burning -- from memory).  The fit gives 9.5 Gyr at
    # Z = 0.02; accept 8-12 Gyr (the spread between stellar-model sets and the
    # fit's own ~10 per cent accuracy).
    t = float(main_sequence_lifetime_gyr(1.0))
    assert 8.0 < t < 12.0


def test_lifetime_scaling_between_1_and_10_msun():
    # Textbook scaling t_MS ∝ m^-2.5 on ~1-10 Msun (from L ∝ m^3.5: t ∝ m/L;
    # from memory).  The mean logarithmic slope of the fit over that decade
    # must be within ±0.4 of -2.5 (the power-law index itself varies by that
    # much along the main sequence).
    slope = math.log10(
        float(main_sequence_lifetime_gyr(10.0)) / float(main_sequence_lifetime_gyr(1.0))
    )
    assert abs(slope - (-2.5)) < 0.4


def test_massive_star_lifetime():
    # A 20 Msun star lives ~8-10 Myr on the main sequence at solar metallicity
    # (Schaller et al. 1992, A&A Suppl. 96, 269, ~8 Myr -- from memory); accept
    # 6-12 Myr for the same reasons as above.
    t_myr = 1e3 * float(main_sequence_lifetime_gyr(20.0))
    assert 6.0 < t_myr < 12.0


@pytest.mark.parametrize("metallicity", [1e-3, 0.008, 0.02, 0.03])
def test_turnoff_mass_inverts_lifetime(metallicity):
    # Exact inverse (closed-form root of the quadratic): rounding only.
    ages = jnp.array([0.05, 0.5, 2.0, 5.0, 10.0, 13.5])
    m_to = jax.jit(turnoff_mass)(ages, metallicity)
    back = main_sequence_lifetime_gyr(m_to, metallicity)
    np.testing.assert_allclose(np.asarray(back), np.asarray(ages), rtol=1e-12)
    assert np.all(np.diff(np.asarray(m_to)) < 0)  # older -> lower turn-off


def test_old_population_turnoff_near_one_msun():
    # A 10 Gyr solar-metallicity population turns off at ~1 Msun (the classic
    # statement behind "old populations shine by ~1 Msun stars", e.g. Greggio &
    # Renzini 2011, ch. 8 -- from memory); accept 0.9-1.1 Msun.
    assert 0.9 < float(turnoff_mass(10.0)) < 1.1


def test_turnoff_rate_is_minus_derivative():
    # turnoff_mass_rate is the analytic -dm_TO/dt; compare with autodiff.
    ages = jnp.array([1.0, 5.0, 10.0, 13.0])
    auto = -jax.jit(jax.vmap(jax.grad(turnoff_mass)))(ages)
    np.testing.assert_allclose(np.asarray(turnoff_mass_rate(ages)), np.asarray(auto), rtol=1e-12)


def test_quantity_inputs():
    np.testing.assert_allclose(
        float(turnoff_mass(1e10 * u.yr)), float(turnoff_mass(10.0)), rtol=1e-14
    )
    np.testing.assert_allclose(
        float(main_sequence_lifetime_gyr((1.0 * u.Msun).to(u.kg))),
        float(main_sequence_lifetime_gyr(1.0)),
        rtol=1e-13,  # unit conversion round trip only
    )


def test_mass_luminosity_relation():
    # Duric (2004) relation (from memory): L(1 Msun) = 1 Lsun by construction;
    # the pieces join to within 5 per cent at 0.43, 2 and 55 Msun.
    np.testing.assert_allclose(float(main_sequence_luminosity(1.0)), 1.0, rtol=1e-15)
    for m in (0.43, 2.0, 55.0):
        below = float(main_sequence_luminosity(m * (1 - 1e-9)))
        above = float(main_sequence_luminosity(m))
        assert abs(above / below - 1.0) < 0.05
    # Monotonic in mass.
    lum = np.asarray(main_sequence_luminosity(jnp.geomspace(0.1, 100.0, 50)))
    assert np.all(np.diff(lum) > 0)


def test_turnoff_gradients():
    assert_grads_match_fd(turnoff_mass, (11.0, 0.015))
    assert_grads_match_fd(main_sequence_lifetime_gyr, (1.3, 0.01))
