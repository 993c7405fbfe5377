"""Tests for lensinfer.halo.baryons (comparison to astropy and to common practice)."""

import dataclasses

import jax
import jax.numpy as jnp
import pytest
from astropy.cosmology import FlatLambdaCDM, Planck18
from jax.test_util import check_grads

import lensinfer.halo as halo
from lensinfer.cosmology import Cosmology
from lensinfer.halo import baryon_fraction, max_galaxy_fraction

PLANCK18 = Cosmology.default()


def test_baryon_fraction_matches_astropy():
    # Comparison to astropy: Ob0 / Om0 of the same realisation (exact ratio of the
    # same two floats: tolerance 1e-15).
    assert float(baryon_fraction()) == pytest.approx(Planck18.Ob0 / Planck18.Om0, rel=1e-15)
    other = FlatLambdaCDM(H0=70.0, Om0=0.3, Ob0=0.05)
    assert float(baryon_fraction(Cosmology.from_astropy(other))) == pytest.approx(
        0.05 / 0.3, rel=1e-15
    )


def test_dark_matter_is_about_85_per_cent_of_matter():
    # Common practice, no source: "dark matter makes up about 85 per cent of all
    # matter".  A statement rounded to 5 per cent is matched by any value in
    # [0.825, 0.875); Planck18 gives 1 - 0.0490 / 0.3097 = 0.842.
    dark_fraction = 1.0 - float(baryon_fraction(PLANCK18))
    assert 0.825 <= dark_fraction < 0.875


def test_max_galaxy_fraction_is_the_baryon_fraction():
    # The issue: the cosmic baryon fraction is the default upper bound on
    # f_gal = M* / M200c.
    assert float(max_galaxy_fraction(PLANCK18)) == float(baryon_fraction(PLANCK18))


def test_baryon_fraction_gradient():
    # d f_b / d Omega_b = 1 / Omega_m, d f_b / d Omega_m = -Omega_b / Omega_m^2:
    # finite differences of an exact ratio (eps 1e-6, tolerance 1e-6).
    def f(ob0, om0):
        return baryon_fraction(dataclasses.replace(PLANCK18, ob0=ob0, om0=om0))

    check_grads(jax.jit(f), (0.049, 0.31), order=1, eps=1e-6, atol=1e-6, rtol=1e-6)
    assert float(jax.grad(f)(0.049, 0.31)) == pytest.approx(1.0 / 0.31, rel=1e-14)


def test_public_names():
    # Regression: the sub-package exports what its __all__ says, all of it public.
    for name in halo.__all__:
        assert hasattr(halo, name), name
        assert not name.startswith("_")
    assert jnp.asarray(halo.concentration(1e12, 0.5)).dtype == jnp.float64
