"""Tests for lensinfer.halo.concentration_mass.

Comparison to published fits: each relation is re-evaluated here with plain numpy
from the coefficients as printed in the papers (typed again below, independently
of the module), and the virial-definition relations are checked through the
scipy brentq NFW conversion of tests/halo/conftest.py.  Coefficients are quoted
from memory of the papers' tables; see the notes beside them.
"""

import math

import jax
import jax.numpy as jnp
import numpy as np
import pytest
from jax.test_util import check_grads
from scipy.stats import norm

from lensinfer.cosmology import Cosmology
from lensinfer.halo import (
    CONCENTRATION_RELATIONS,
    concentration,
    concentration_log_prior,
    concentration_scatter_dex,
)

PLANCK18 = Cosmology.default()
H = float(PLANCK18.h0) / 100.0

MASSES = np.array([1e11, 1e12, 1e13, 1e14, 1e15])[:, None]
REDSHIFTS = np.array([0.0, 0.5, 1.0, 2.0])[None, :]


# Duffy et al. (2008, MNRAS 390, L64), Table 1, NFW, z = 0-2, full sample:
# c = A (M / 2e12 h^-1 Msun)^B (1+z)^C.
def duffy_by_hand(mass_h, z, a, b, c):
    return a * (mass_h / 2.0e12) ** b * (1.0 + z) ** c


DUFFY_200C = (5.71, -0.084, -0.47)  # Delta_200 row
DUFFY_VIR = (7.85, -0.081, -0.71)  # Delta_vir row


# Dutton & Macciò (2014, MNRAS 441, 3359): log10 c = a + b log10(M / 1e12 h^-1 Msun).
def dutton_200c_by_hand(mass_h, z):
    # Their eq. 7 (NFW, Delta = 200 critical).
    b = -0.101 + 0.026 * z
    a = 0.520 + (0.905 - 0.520) * np.exp(-0.617 * z**1.21)
    return 10.0 ** (a + b * np.log10(mass_h / 1e12))


def dutton_vir_by_hand(mass_h, z):
    # Their eq. 8 (NFW, virial overdensity of Bryan & Norman 1998).
    b = -0.097 + 0.024 * z
    a = 0.537 + (1.025 - 0.537) * np.exp(-0.718 * z**1.08)
    return 10.0 ** (a + b * np.log10(mass_h / 1e12))


# ------------------------------------------------------- hand values, 200c relations


@pytest.mark.parametrize(
    ("relation", "by_hand"),
    [
        ("duffy08", lambda mh, z: duffy_by_hand(mh, z, *DUFFY_200C)),
        ("dutton14", dutton_200c_by_hand),
    ],
)
def test_200c_relations_match_hand_values(relation, by_hand):
    # The paper's formula with its own fit parameters at five masses and four
    # redshifts; the same arithmetic in numpy, so the tolerance is rounding (1e-12).
    expected = by_hand(MASSES * H, REDSHIFTS)
    got = concentration(MASSES, REDSHIFTS, relation, PLANCK18)
    np.testing.assert_allclose(got, expected, rtol=1e-12)


def test_pivot_values_by_hand():
    # At the pivot mass the power laws reduce to their normalisations, computed by
    # hand: Duffy et al. (2008) Table 1 A = 5.71 at z = 0 and 5.71 * 2^-0.47 = 4.1224
    # at z = 1; Dutton & Macciò (2014) eq. 7 10^0.905 = 8.0353 at z = 0.  Tolerance
    # 1e-12 (exact arithmetic) against the closed forms, 1e-4 against the 5-digit
    # hand values.
    assert float(concentration(2e12 / H, 0.0, "duffy08")) == pytest.approx(5.71, rel=1e-12)
    assert float(concentration(2e12 / H, 1.0, "duffy08")) == pytest.approx(4.1224, rel=1e-4)
    assert float(concentration(1e12 / H, 0.0, "dutton14")) == pytest.approx(10.0**0.905, rel=1e-12)
    assert float(concentration(1e12 / H, 0.0, "dutton14")) == pytest.approx(8.0353, rel=1e-4)


def test_pivot_uses_the_cosmology_h():
    # Documented choice: the h^-1 Msun pivot is converted with the cosmology's h.
    # For a cosmology with h = 1 the pivot is 1e12 Msun exactly (tolerance 1e-12).
    import dataclasses

    h1 = dataclasses.replace(PLANCK18, h0=jnp.asarray(100.0))
    assert float(concentration(1e12, 0.0, "dutton14", h1)) == pytest.approx(10.0**0.905, rel=1e-12)


# ------------------------------------------------------ virial relations, converted


@pytest.mark.parametrize(
    ("relation", "by_hand"),
    [
        ("duffy08_vir", lambda mh, z: duffy_by_hand(mh, z, *DUFFY_VIR)),
        ("dutton14_vir", dutton_vir_by_hand),
    ],
)
def test_virial_relations_put_the_halo_on_the_published_fit(relation, by_hand, nfw_reference):
    # The returned c200c describes an NFW halo whose virial (M, c) - found here
    # independently with scipy brentq on astropy's cosmology - lies on the published
    # virial fit (Duffy et al. 2008 Table 1; Dutton & Macciò 2014 eq. 8).  The
    # brentq conversion is good to ~1e-12; the relation slope is ~0.1, so 1e-9 is
    # a safe tolerance.
    c200c = np.asarray(concentration(MASSES, REDSHIFTS, relation, PLANCK18))
    m_vir, c_vir = nfw_reference(MASSES, c200c, REDSHIFTS, from_="200c", to="vir")
    np.testing.assert_allclose(c_vir, by_hand(m_vir * H, REDSHIFTS), rtol=1e-9)


@pytest.mark.parametrize(
    ("native", "virial", "tol"),
    [
        ("dutton14", "dutton14_vir", 0.03),
        ("duffy08", "duffy08_vir", 0.08),
    ],
)
def test_the_papers_two_definitions_agree_after_conversion(native, virial, tol):
    # Cross-check of the coefficients (quoted from memory): each paper fitted its
    # 200c and virial relations separately to the same haloes, so after an NFW
    # conversion they should predict nearly the same c200c.  Measured: Dutton &
    # Macciò within 2 per cent, Duffy et al. within 6 per cent (their simulations'
    # Delta_vir differs from Planck18's, and the full sample is less NFW-like).
    # Tolerances 3 and 8 per cent: far inside the 0.11-0.15 dex (29-41 per cent)
    # scatter, yet a mistyped digit in an exponent or normalisation would fail.
    a = concentration(MASSES, REDSHIFTS, native, PLANCK18)
    b = concentration(MASSES, REDSHIFTS, virial, PLANCK18)
    np.testing.assert_allclose(b, a, rtol=tol)


def test_concentration_falls_with_mass_and_redshift():
    # Published behaviour of both fits (B < 0, b(z) < 0 for z < 3.9; C < 0): at fixed
    # redshift c decreases with mass, at fixed mass it decreases with redshift.
    for relation in CONCENTRATION_RELATIONS:
        c = np.asarray(concentration(MASSES, REDSHIFTS, relation, PLANCK18))
        assert np.all(np.diff(c, axis=0) < 0), relation
        assert np.all(np.diff(c, axis=1) < 0), relation


# ------------------------------------------------------------------- scatter, prior


def test_scatter_values():
    # Duffy et al. (2008): sigma(log10 c200) = 0.15 for the full sample, 0.11 for
    # relaxed haloes; Dutton & Macciò (2014): about 0.11 dex for relaxed haloes
    # (they fit no unrelaxed sample, so "all" borrows Duffy's 0.15).  From memory.
    # The default is all haloes: a lens is not selected for a relaxed halo.
    for rel in ("duffy08", "duffy08_vir", "dutton14", "dutton14_vir"):
        assert concentration_scatter_dex(rel) == 0.15
        assert concentration_scatter_dex(rel, "all") == 0.15
        assert concentration_scatter_dex(rel, "relaxed") == 0.11
    with pytest.raises(ValueError, match="unknown halo population 'young'"):
        concentration_scatter_dex("dutton14", "young")


def test_log_prior_is_scipy_normal_in_log10_c():
    # Comparison to scipy.stats.norm: a normal in log10 c about the median with the
    # relation's scatter.  Tolerance 1e-12 (same closed form).
    m200c, z = 3e12, 0.4
    median = float(concentration(m200c, z, "dutton14"))
    x = np.log10([3.0, 7.0, 12.0])
    expected = norm.logpdf(x, loc=math.log10(median), scale=0.15)
    got = concentration_log_prior(x, m200c, z, "dutton14")
    np.testing.assert_allclose(got, expected, rtol=1e-12)
    expected = norm.logpdf(x, loc=math.log10(median), scale=0.11)
    got = concentration_log_prior(x, m200c, z, "dutton14", population="relaxed")
    np.testing.assert_allclose(got, expected, rtol=1e-12)


# ------------------------------------------------------------------- gradients


@jax.jit
def _log_c_all(log10_mass, z):
    # ln c200c for every relation in one compiled program (compiling the nested
    # virial solvers dominates this file's run time, so it is done once).
    return jnp.stack(
        [
            jnp.log(concentration(10.0**log10_mass, z, relation, PLANCK18))
            for relation in CONCENTRATION_RELATIONS
        ]
    )


def test_gradients():
    # Automatic derivatives against central finite differences in log10 mass and z
    # (O(1) inputs), every relation; for the virial ones they pass through two
    # nested implicit Newton solves.  eps = 1e-6, tolerance 1e-6 (FD error ~1e-10).
    for args in [(11.3, 0.3), (13.7, 1.6)]:
        check_grads(_log_c_all, args, order=1, modes=("fwd", "rev"), eps=1e-6, atol=1e-6, rtol=1e-6)


def test_gradient_at_zero_redshift_is_finite():
    # z^1.21 and z^1.08 in Dutton & Macciò's a(z): the derivative at z = 0 must be
    # finite (the z-power term contributes 0 there).  One forward-mode product in
    # both arguments: a NaN or inf in either partial derivative would show.
    _, tangent = jax.jvp(_log_c_all, (12.0, 0.0), (1.0, 1.0))
    assert np.all(np.isfinite(tangent))


# ------------------------------------------------- regression: jit, vmap, errors


def test_jit_and_vmap_agree_with_eager():
    # Regression: jit and jit(vmap) reproduce the eager values for the most involved
    # relation (XLA may reorder floating-point operations: 1e-13).
    def f(m, z):
        return concentration(m, z, "dutton14_vir", PLANCK18)

    m = np.broadcast_to(MASSES, (5, 4))
    z = np.broadcast_to(REDSHIFTS, (5, 4))
    eager = f(m, z)
    np.testing.assert_allclose(jax.jit(f)(m, z), eager, rtol=1e-13)
    np.testing.assert_allclose(jax.jit(jax.vmap(f))(m, z), eager, rtol=1e-13)


def test_default_cosmology_is_planck18():
    assert float(concentration(1e12, 0.5)) == float(concentration(1e12, 0.5, "dutton14", PLANCK18))


@pytest.mark.parametrize("bad", ["duffy", "Dutton14", "", None])
def test_unknown_relation_is_refused_with_the_accepted_names(bad):
    with pytest.raises(ValueError, match="accepted: 'duffy08'"):
        concentration(1e12, 0.5, bad)
    with pytest.raises(ValueError, match="unknown concentration-mass relation"):
        concentration_scatter_dex(bad)
