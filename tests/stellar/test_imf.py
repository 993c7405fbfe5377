"""Tests of lensinfer.stellar.imf: shapes, normalisation, closed-form integrals.

Comparison to outside truth: scipy.integrate.quad of the same dN/dm, and the
slopes and constants of the published IMFs (Salpeter 1955; Kroupa 2001;
Chabrier 2003).  Regression checks are labelled as such.
"""

import itertools
import math

import jax
import jax.numpy as jnp
import numpy as np
import pytest
from scipy.integrate import quad

from lensinfer.stellar import (
    NAMED_IMFS,
    BrokenPowerLawIMF,
    LognormalPowerLawIMF,
    PowerLawIMF,
    get_imf,
)

from ._checks import assert_grads_match_fd

# Every IMF shape exercised below; "bottom_heavy_3" is the free-slope family at
# x_low = 3 (a typical bottom-heavy value), "slope_1" / "slope_2" put a
# segment exactly on the p = -1 singular exponent of the number / mass integral.
IMFS = {
    "salpeter55": get_imf("salpeter55"),
    "kroupa01": get_imf("kroupa01"),
    "chabrier03": get_imf("chabrier03"),
    "bottom_heavy_3": BrokenPowerLawIMF(low_mass_slope=3.0),
    "slope_1": BrokenPowerLawIMF(low_mass_slope=1.0),
    "slope_2": BrokenPowerLawIMF(low_mass_slope=2.0, high_mass_slope=2.0),
    "chabrier_wide": LognormalPowerLawIMF(m_min=0.01, m_max=150.0),
}


def _chabrier_ref(m):
    # Chabrier (2003) Table 1 single-object form, written out independently in
    # NumPy: 0.158 exp[-(log m - log 0.079)^2 / (2 0.69^2)] per log m below
    # 1 Msun, A m^-1.3 per log m above (A from continuity), divided by m ln 10.
    lo = 0.158 * np.exp(-((np.log10(m) - np.log10(0.079)) ** 2) / (2 * 0.69**2))
    a_hi = 0.158 * np.exp(-(np.log10(0.079) ** 2) / (2 * 0.69**2))
    return np.where(m <= 1.0, lo, a_hi * m**-1.3) / (m * np.log(10.0))


def _broken_ref(x1, x2, mb):
    return lambda m: np.where(m < mb, (m / mb) ** -x1, (m / mb) ** -x2)


# Independent NumPy versions of the published shapes (unnormalised), with the
# mass range and the break masses to split quad at.
REFERENCE = {
    "salpeter55": (lambda m: m**-2.35, 0.1, 100.0, []),
    "kroupa01": (_broken_ref(1.3, 2.3, 0.5), 0.1, 100.0, [0.5]),
    "chabrier03": (_chabrier_ref, 0.1, 100.0, [1.0]),
    "bottom_heavy_3": (_broken_ref(3.0, 2.3, 0.5), 0.1, 100.0, [0.5]),
    "slope_1": (_broken_ref(1.0, 2.3, 0.5), 0.1, 100.0, [0.5]),
    "slope_2": (_broken_ref(2.0, 2.0, 0.5), 0.1, 100.0, [0.5]),
    "chabrier_wide": (_chabrier_ref, 0.01, 150.0, [1.0]),
}


# One compiled moment per IMF class (the IMF is a pytree argument), shared by
# all parametrisations below; eager evaluation would dispatch ~100 ops a call.
_moment_jit = jax.jit(lambda imf, k, a, b: imf.moment(k, a, b))


def _quad(f, a, b, breaks):
    """scipy quad in ln m (the integrands are smooth power laws there), split at breaks."""
    edges = [a, *[p for p in breaks if a < p < b], b]
    total = 0.0
    for lo, hi in itertools.pairwise(edges):
        val, _ = quad(
            lambda u: f(math.exp(u)) * math.exp(u),
            math.log(lo),
            math.log(hi),
            epsabs=0.0,
            epsrel=1e-13,
            limit=200,
        )
        total += val
    return total


@pytest.mark.parametrize("name", IMFS)
def test_shape_matches_published_form(name):
    # Comparison to the published formulas (REFERENCE above): our dN/dm divided
    # by the independent NumPy form must be one constant (the normalisation) over
    # the whole range; float64 rounding of powers and exps only, so 1e-12.
    ref, lo, hi, _ = REFERENCE[name]
    m = np.geomspace(lo, hi, 41)
    ratio = np.asarray(jax.jit(IMFS[name].dndm)(m)) / ref(m)
    np.testing.assert_allclose(ratio, ratio[0], rtol=1e-12)


@pytest.mark.parametrize("name", IMFS)
@pytest.mark.parametrize(
    ("m1", "m2"), [(None, None), (0.15, 0.45), (0.3, 0.9), (0.8, 1.3), (2.0, 40.0)]
)
@pytest.mark.parametrize("k", [0.0, 1.0, 2.3, 4.0])
def test_moments_match_scipy_quad(name, m1, m2, k):
    # Comparison to scipy.integrate.quad of the independent published form,
    # normalised by its quad mass integral.  The closed forms are exact; quad in
    # ln m reaches ~1e-13 relative on these smooth pieces, so rtol = 1e-10
    # leaves room only for rounding.
    ref, lo, hi, breaks = REFERENCE[name]
    a = lo if m1 is None else m1
    b = hi if m2 is None else m2
    norm = _quad(lambda m: m * ref(m), lo, hi, breaks)
    expected = _quad(lambda m: m**k * ref(m), a, b, breaks) / norm
    got = float(_moment_jit(IMFS[name], k, a, b))
    np.testing.assert_allclose(got, expected, rtol=1e-10)


@pytest.mark.parametrize("name", IMFS)
def test_number_and_mass_are_moments_and_normalised(name):
    # Definition (module docstring): one Msun formed between m_min and m_max.
    imf = IMFS[name]
    np.testing.assert_allclose(float(imf.mass()), 1.0, rtol=1e-13)
    np.testing.assert_allclose(float(imf.number(0.2, 3.0)), float(imf.moment(0.0, 0.2, 3.0)))
    np.testing.assert_allclose(float(imf.mass(0.2, 3.0)), float(imf.moment(1.0, 0.2, 3.0)))


@pytest.mark.parametrize("name", IMFS)
def test_outside_range_and_empty_intervals(name):
    imf = IMFS[name]
    lo, hi = float(imf.m_min), float(imf.m_max)
    assert float(imf.dndm(0.5 * lo)) == 0.0
    assert float(imf.dndm(2.0 * hi)) == 0.0
    assert float(imf.number(2.0, 1.0)) == 0.0  # reversed limits: empty
    # Limits beyond the range are clipped to it.
    np.testing.assert_allclose(float(imf.mass(1e-3, 1e4)), 1.0, rtol=1e-13)


@pytest.mark.parametrize(
    ("imf", "break_mass"),
    [
        (get_imf("kroupa01"), 0.5),
        (BrokenPowerLawIMF(low_mass_slope=3.0, break_mass=0.4), 0.4),
        (get_imf("chabrier03"), 1.0),
        (LognormalPowerLawIMF(transition_mass=0.7, high_mass_slope=2.7), 0.7),
    ],
)
def test_continuous_at_breaks(imf, break_mass):
    # dN/dm must be continuous at every break (module convention).  Across a
    # relative step of 2e-10 a slope-3 power law changes by ~6e-10, hence 1e-8.
    eps = 1e-10
    below = float(imf.dndm(break_mass * (1 - eps)))
    above = float(imf.dndm(break_mass * (1 + eps)))
    np.testing.assert_allclose(below, above, rtol=1e-8)


def _log_slope(imf, m):
    return float(jax.grad(lambda lm: jnp.log(imf.dndm(jnp.exp(lm))))(jnp.log(m)))


def test_salpeter_slope():
    # Salpeter (1955, ApJ 121, 161): dN/dm ∝ m^-2.35 (x = 1.35 per ln m).
    for m in (0.2, 1.0, 30.0):
        np.testing.assert_allclose(_log_slope(get_imf("salpeter55"), m), -2.35, rtol=1e-12)


def test_kroupa_slopes():
    # Kroupa (2001, MNRAS 322, 231), eq. 2 (from memory): alpha = 1.3 for
    # 0.08-0.5 Msun and 2.3 above 0.5 Msun.
    imf = get_imf("kroupa01")
    np.testing.assert_allclose(_log_slope(imf, 0.2), -1.3, rtol=1e-12)
    np.testing.assert_allclose(_log_slope(imf, 0.45), -1.3, rtol=1e-12)
    np.testing.assert_allclose(_log_slope(imf, 0.6), -2.3, rtol=1e-12)
    np.testing.assert_allclose(_log_slope(imf, 50.0), -2.3, rtol=1e-12)


def test_chabrier_shape():
    # Chabrier (2003, PASP 115, 763), Table 1, single objects (from memory):
    # xi(log m) = dN/dlog m peaks at m_c = 0.079 Msun with width 0.69 dex, and
    # is ∝ m^-1.3 above 1 Msun.
    imf = LognormalPowerLawIMF(m_min=0.01)  # extend the range to see the peak

    def log_xi(log10_m):
        m = 10.0**log10_m
        return jnp.log10(m * math.log(10.0) * imf.dndm(m))

    d_log_xi = jax.jit(jax.grad(log_xi))
    np.testing.assert_allclose(float(d_log_xi(math.log10(0.079))), 0.0, atol=1e-12)
    np.testing.assert_allclose(float(d_log_xi(math.log10(3.0))), -1.3, rtol=1e-12)
    # Curvature of the lognormal: d^2 ln xi / d(log m)^2 = -1/sigma^2.
    curv = jax.jit(jax.grad(jax.grad(lambda y: log_xi(y) * math.log(10.0))))(math.log10(0.3))
    np.testing.assert_allclose(float(curv), -1.0 / 0.69**2, rtol=1e-10)


def test_chabrier_published_amplitudes_are_continuous():
    # Chabrier (2003) Table 1 quotes A = 0.158 (lognormal) and 4.43e-2 (power
    # law above 1 Msun), three significant digits each (from memory).  The
    # continuous form used here must reproduce their ratio to the rounding of
    # those digits: 0.5 per cent, so rtol = 1e-2.
    xi_ratio = math.exp(-((math.log10(0.079)) ** 2) / (2 * 0.69**2))  # xi(1)/A_lognormal
    np.testing.assert_allclose(0.158 * xi_ratio, 4.43e-2, rtol=1e-2)
    imf = get_imf("chabrier03")
    # Our xi(log m) at 2 Msun over its value at 1 Msun equals 2^-1.3 (Table 1 form).
    xi = lambda m: m * math.log(10.0) * float(imf.dndm(m))  # noqa: E731
    np.testing.assert_allclose(xi(2.0) / xi(1.0), 2.0**-1.3, rtol=1e-12)


def test_salpeter_mean_mass_closed_form():
    # Independent hand formula (textbook power-law integrals): for dN/dm ∝ m^-2.35
    # on [0.1, 100], <m> = (0.35/1.35) (a^-1.35 - b^-1.35)^-1 ... written out:
    a, b = 0.1, 100.0
    n = (a**-1.35 - b**-1.35) / 1.35
    m = (a**-0.35 - b**-0.35) / 0.35
    imf = get_imf("salpeter55")
    np.testing.assert_allclose(float(imf.number()), n / m, rtol=1e-13)
    # About 0.35 Msun: a widely quoted mean stellar mass for Salpeter on
    # 0.1-100 Msun (from memory).
    assert abs(m / n - 0.35) < 0.005


def test_power_law_special_cases_agree():
    # Regression/consistency: a broken power law with equal slopes is a single
    # power law; x_low = 2.35 everywhere equals Salpeter.
    same = BrokenPowerLawIMF(low_mass_slope=2.35, high_mass_slope=2.35, break_mass=0.5)
    sal = PowerLawIMF(2.35)
    for m in (0.12, 0.5, 7.0):
        np.testing.assert_allclose(float(same.dndm(m)), float(sal.dndm(m)), rtol=1e-13)
    np.testing.assert_allclose(
        float(same.number(0.1, 0.7)), float(sal.number(0.1, 0.7)), rtol=1e-13
    )


def test_get_imf_names_and_errors():
    assert set(NAMED_IMFS) == {"salpeter55", "kroupa01", "chabrier03"}
    imf = BrokenPowerLawIMF(2.8)
    assert get_imf(imf) is imf
    assert isinstance(get_imf(" Chabrier03 "), LognormalPowerLawIMF)
    with pytest.raises(ValueError, match="salpeter55"):
        get_imf("salpeter")
    with pytest.raises(TypeError):
        get_imf(2.35)


def test_jit_matches_eager_and_vmap_matches_loop():
    slopes = jnp.linspace(1.0, 3.5, 6)

    def n_low(x):
        return BrokenPowerLawIMF(low_mass_slope=x).number(0.1, 0.5)

    eager = np.array([float(n_low(x)) for x in slopes])
    np.testing.assert_allclose(np.asarray(jax.jit(jax.vmap(n_low))(slopes)), eager, rtol=1e-14)
    imf = get_imf("chabrier03")
    ms = jnp.geomspace(0.1, 100.0, 7)
    np.testing.assert_allclose(
        np.asarray(jax.jit(imf.dndm)(ms)), np.array([float(imf.dndm(m)) for m in ms]), rtol=1e-14
    )


def test_pytree_round_trip():
    imf = get_imf("chabrier03")
    leaves, tree = jax.tree_util.tree_flatten(imf)
    assert len(leaves) == 6  # every number is a data field
    assert jax.tree_util.tree_unflatten(tree, leaves) == imf


def _integrals(x, mb, m2, mc, sigma):
    broken = BrokenPowerLawIMF(low_mass_slope=x, break_mass=mb)
    lognormal = LognormalPowerLawIMF(characteristic_mass=mc, sigma_log10=sigma)
    return (
        broken.number(0.1, m2)
        + broken.mass(0.3, m2)
        + broken.dndm(0.3)
        + lognormal.moment(4.0, 0.1, m2)
        + lognormal.number(0.2, m2)
    )


@pytest.mark.parametrize(("x_low", "sigma"), [(1.0, 0.69), (1.3, 0.55), (2.0, 0.69), (2.8, 0.8)])
def test_gradients_against_finite_differences(x_low, sigma):
    # Reverse-mode derivatives of IMF integrals with respect to
    # slopes, break mass, integration limit and the lognormal's parameters,
    # against central finite differences (tolerance in _checks.py).  x_low = 1
    # and 2 sit on the p = -1 points of the number and mass integrals, where
    # the series branch is used.
    assert_grads_match_fd(_integrals, (x_low, 0.5, 0.8, 0.079, sigma), forward=False)
