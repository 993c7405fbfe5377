"""Tests for lensinfer.halo.stellar_halo.

Comparison to published fits: the relations are re-evaluated with plain numpy
from the coefficients as printed in the papers (typed again below), the
Behroozi et al. halo mass is converted independently with the scipy brentq NFW
conversion of tests/halo/conftest.py, and the statements in both papers'
abstracts about where and how efficiently haloes form stars are checked.
Coefficients are quoted from memory of the papers' tables (see the notes).
"""

import math

import jax
import jax.numpy as jnp
import numpy as np
import pytest
from astropy.cosmology import FlatLambdaCDM
from jax.test_util import check_grads
from scipy.stats import norm

import lensinfer.halo.stellar_halo as stellar_halo_module
from lensinfer.cosmology import Cosmology
from lensinfer.halo import (
    STELLAR_HALO_RELATIONS,
    baryon_fraction,
    concentration,
    stellar_mass_from_halo,
    stellar_mass_log_prior,
)

PLANCK18 = Cosmology.default()
MASSES = np.array([1e11, 3e11, 1e12, 1e13, 1e14, 1e15])[:, None]
REDSHIFTS = np.array([0.0, 0.3, 1.0, 2.0])[None, :]


# Moster, Naab & White (2013, MNRAS 428, 3121), eq. 2 with eqs. 11-14 and Table 1.
def moster_by_hand(m200c, z):
    w = z / (1.0 + z)
    m1 = 10.0 ** (11.590 + 1.195 * w)
    n = 0.0351 - 0.0247 * w
    beta = 1.376 - 0.826 * w
    gamma = 0.608 + 0.329 * w
    return m200c * 2.0 * n / ((m200c / m1) ** (-beta) + (m200c / m1) ** gamma)


# Behroozi, Wechsler & Conroy (2013, ApJ 770, 57), eqs. 3-4, section 5 best fit.
def behroozi_by_hand(m_vir, z):
    a = 1.0 / (1.0 + z)
    nu = np.exp(-4.0 * a**2)
    log_m1 = 11.514 + (-1.793 * (a - 1.0) - 0.251 * z) * nu
    log_eps = -1.777 + (-0.006 * (a - 1.0) + 0.000 * z) * nu - 0.119 * (a - 1.0)
    alpha = -1.412 + 0.731 * (a - 1.0) * nu
    delta = 3.508 + (2.608 * (a - 1.0) - 0.043 * z) * nu
    gamma = 0.316 + (1.319 * (a - 1.0) + 0.279 * z) * nu

    def f(x):
        return -np.log10(10.0 ** (alpha * x) + 1.0) + delta * np.log10(1.0 + np.exp(x)) ** gamma / (
            1.0 + np.exp(10.0 ** (-x))
        )

    return 10.0 ** (log_eps + log_m1 + f(np.log10(m_vir) - log_m1) - f(0.0))


# ------------------------------------------------------------ Moster, Naab & White


def test_moster13_matches_hand_values():
    # The paper's eq. 2 with Table 1's parameters at six halo masses and four
    # redshifts; same arithmetic in numpy, so the tolerance is rounding (1e-12).
    mstar, scatter = stellar_mass_from_halo(MASSES, REDSHIFTS, "moster13")
    np.testing.assert_allclose(mstar, moster_by_hand(MASSES, REDSHIFTS), rtol=1e-12)
    # Scatter: constant 0.15 dex (their section 3, from memory).
    np.testing.assert_array_equal(scatter, np.full((6, 4), 0.15))


def test_moster13_at_the_characteristic_mass_by_hand():
    # At M = M1 eq. 2 gives m/M = 2N / (1 + 1) = N: at z = 0, N10 = 0.0351, so
    # M* = 0.0351 * 10^11.590 (exact arithmetic: 1e-12).
    m1 = 10.0**11.590
    mstar, _ = stellar_mass_from_halo(m1, 0.0, "moster13")
    assert float(mstar) == pytest.approx(0.0351 * m1, rel=1e-12)


def _peak(relation, z):
    # Halo mass (log10 M200c) of maximum M*/M200c, and that maximum, on a 0.001 dex grid.
    masses = jnp.geomspace(1e10, 1e15, 5001)
    ratio = np.asarray(stellar_mass_from_halo(masses, z, relation)[0] / masses)
    i = int(np.argmax(ratio))
    return math.log10(float(masses[i])), ratio[i]


def test_moster13_reproduces_its_abstract():
    # Moster, Naab & White (2013), abstract: "the peak star formation efficiency
    # decreases with redshift from 23 per cent at z = 0 to 9 per cent at z = 4 while
    # the corresponding halo mass increases from 10^11.8 Msun to 10^12.5 Msun".
    # The quoted masses are rounded to 0.1 dex (tolerance 0.05 + grid 0.001); the
    # efficiencies (M*/(f_b M)) are rounded to 1 per cent, so their ratio, which
    # does not need the paper's f_b, must lie in [22.5/9.5, 23.5/8.5].
    log_m0, eff0 = _peak("moster13", 0.0)
    log_m4, eff4 = _peak("moster13", 4.0)
    assert abs(log_m0 - 11.8) <= 0.051
    assert abs(log_m4 - 12.5) <= 0.051
    assert 22.5 / 9.5 <= eff0 / eff4 <= 23.5 / 8.5
    # With the baryon fraction of the cosmology their simulations were rescaled to
    # (Omega_m = 0.272, Omega_b = 0.0455; from memory), the efficiencies themselves
    # round to the quoted 23 and 9 per cent.
    sim = Cosmology.from_astropy(FlatLambdaCDM(H0=70.4, Om0=0.272, Ob0=0.0455, Tcmb0=0.0))
    f_b = float(baryon_fraction(sim))
    assert 0.225 <= eff0 / f_b < 0.235
    assert 0.085 <= eff4 / f_b < 0.095


# ------------------------------------------------------- Behroozi, Wechsler & Conroy


def test_behroozi13_matches_hand_values(nfw_reference):
    # Eq. 3 in the virial mass: M200c -> Mvir done here independently (brentq on
    # astropy's cosmology, conftest) with a given c200c, then the paper's formula
    # by hand.  The conversion is good to ~1e-12 and d log M*/d log Mvir < 3, so
    # 1e-9 is safe.
    c200c = 7.0
    mstar, _ = stellar_mass_from_halo(MASSES, REDSHIFTS, "behroozi13", PLANCK18, c200c=c200c)
    m_vir, _ = nfw_reference(MASSES, c200c, REDSHIFTS, from_="200c", to="vir")
    np.testing.assert_allclose(mstar, behroozi_by_hand(m_vir, REDSHIFTS), rtol=1e-9)


def test_behroozi13_at_the_characteristic_mass_by_hand(nfw_reference):
    # At Mvir = M1 eq. 3 gives M* = eps M1 exactly: at z = 0 log10 M* = 11.514 -
    # 1.777 = 9.737.  For a fixed c200c, Mvir / M200c does not depend on the mass,
    # so M200c = M1 / k with k from the brentq conversion (tolerance 1e-9 as above).
    c200c = 6.0
    m_vir_1, _ = nfw_reference(1.0, c200c, 0.0, from_="200c", to="vir")
    m200c = 10.0**11.514 / float(m_vir_1)
    mstar, _ = stellar_mass_from_halo(m200c, 0.0, "behroozi13", PLANCK18, c200c=c200c)
    assert math.log10(float(mstar)) == pytest.approx(9.737, abs=1e-9)


def test_behroozi13_peak_is_near_1e12_at_all_redshifts():
    # Behroozi, Wechsler & Conroy (2013), abstract: "halos near 10^12 Msun are the
    # most efficient at forming stars at all redshifts".  "Near" read as within
    # 0.3 dex (the quoted value has one significant figure in the exponent).
    for z in (0.0, 1.0, 2.0, 4.0):
        log_m, _ = _peak("behroozi13", z)
        assert abs(log_m - 12.0) < 0.3, z


def test_behroozi13_scatter():
    # xi(a) = 0.218 - 0.023 (a - 1) (their section 5, from memory): 0.218 at z = 0,
    # 0.218 + 0.023 / 2 = 0.2295 at z = 1 (exact arithmetic: 1e-12).
    _, scatter = stellar_mass_from_halo(1e12, jnp.array([0.0, 1.0]), "behroozi13")
    np.testing.assert_allclose(scatter, [0.218, 0.2295], rtol=1e-12)


def test_behroozi13_default_concentration_is_the_median_relation():
    # Documented default: c200c from concentration(..., "dutton14").  Same
    # computation, so equality to rounding (1e-14).
    m, z = 2e13, 0.6
    c = concentration(m, z, "dutton14", PLANCK18)
    a, _ = stellar_mass_from_halo(m, z, "behroozi13", PLANCK18)
    b, _ = stellar_mass_from_halo(m, z, "behroozi13", PLANCK18, c200c=c)
    assert float(a) == pytest.approx(float(b), rel=1e-14)


def test_the_two_relations_roughly_agree():
    # Two abundance-matching calibrations of the same galaxies: near the peak of
    # efficiency (1e12 Msun, z = 0) they agree within 0.1 dex; at 1e14-1e15 the
    # published relations are known to differ more (cluster-scale stellar masses);
    # we require agreement within 2 x the larger scatter there (0.45 dex).
    m_mo, s_mo = stellar_mass_from_halo(MASSES, 0.0, "moster13")
    m_be, s_be = stellar_mass_from_halo(MASSES, 0.0, "behroozi13")
    diff = np.abs(np.log10(np.asarray(m_mo) / np.asarray(m_be)))[:, 0]
    assert diff[2] < 0.1
    assert np.all(diff < 2.0 * np.maximum(s_mo, s_be)[:, 0])


# ------------------------------------------------------------------- prior


@pytest.mark.parametrize("relation", STELLAR_HALO_RELATIONS)
def test_log_prior_is_scipy_normal_in_log10_mstar_ref(relation):
    # Comparison to scipy.stats.norm: a normal in log10 M*_ref (the reference-IMF
    # mass) about the median with the relation's scatter.  Tolerance 1e-12.
    m200c, z = 5e12, 0.4
    median, scatter = stellar_mass_from_halo(m200c, z, relation)
    x = np.array([10.0, 10.8, 11.5])
    expected = norm.logpdf(x, loc=np.log10(float(median)), scale=float(scatter))
    np.testing.assert_allclose(stellar_mass_log_prior(x, m200c, z, relation), expected, rtol=1e-12)


def test_docstrings_say_the_relations_constrain_the_reference_imf_mass():
    # The issue asks for it in the docstrings: the relations are calibrated with
    # Chabrier-like masses, so they constrain M*_ref and not alpha_IMF M*_ref.
    for obj in (stellar_halo_module, stellar_mass_from_halo, stellar_mass_log_prior):
        doc = obj.__doc__
        assert "Chabrier" in doc and "alpha_{\\rm IMF}" in doc, obj


# ------------------------------------------------------------------- gradients


@jax.jit
def _log_mstar_all(log10_m200c, z, c200c):
    # log10 M*_ref in one compiled program: both relations with a given c200c, and
    # the virial one with c200c from a virial-fitted concentration relation (then
    # the derivative runs through two nested implicit solves).
    m200c = 10.0**log10_m200c
    moster, _ = stellar_mass_from_halo(m200c, z, "moster13", PLANCK18)
    behroozi, _ = stellar_mass_from_halo(m200c, z, "behroozi13", PLANCK18, c200c=c200c)
    behroozi_c_m, _ = stellar_mass_from_halo(
        m200c, z, "behroozi13", PLANCK18, concentration_relation="dutton14_vir"
    )
    return jnp.log10(jnp.stack([moster, behroozi, behroozi_c_m]))


def test_gradients():
    # Automatic derivatives against central finite differences (log10 mass, z and
    # c200c; O(1) inputs), forward and reverse mode.  eps = 1e-6, tolerance 1e-6
    # (FD error ~1e-10).
    for args in [(11.5, 0.3, 8.0), (13.8, 1.5, 4.0)]:
        check_grads(
            _log_mstar_all, args, order=1, modes=("fwd", "rev"), eps=1e-6, atol=1e-6, rtol=1e-6
        )


# ------------------------------------------------- regression: jit, vmap, errors


def test_jit_and_vmap_agree_with_eager():
    # Regression: jit and jit(vmap) reproduce the eager values (1e-13: XLA may
    # reorder floating-point operations).
    lm = jnp.linspace(11.0, 15.0, 4)
    zs = jnp.linspace(0.0, 2.0, 4)
    cs = jnp.full(4, 8.0)
    eager = jnp.log10(
        jnp.stack(
            [
                stellar_mass_from_halo(10.0**lm, zs, "moster13", PLANCK18)[0],
                stellar_mass_from_halo(10.0**lm, zs, "behroozi13", PLANCK18, c200c=cs)[0],
            ]
        )
    )
    np.testing.assert_allclose(_log_mstar_all(lm, zs, cs)[:2], eager, rtol=1e-13)
    mapped = jax.jit(jax.vmap(_log_mstar_all, out_axes=1))(lm, zs, cs)
    np.testing.assert_allclose(mapped[:2], eager, rtol=1e-13)


@pytest.mark.parametrize("bad", ["moster", "behroozi19", "", None])
def test_unknown_relation_is_refused_with_the_accepted_names(bad):
    with pytest.raises(ValueError, match="accepted: 'moster13', 'behroozi13'"):
        stellar_mass_from_halo(1e12, 0.5, bad)
