"""Tests for lensinfer.halo.abundance (the Tinker et al. 2008 halo mass function).

Three kinds of check, kept apart as astropy's cosmology tests do:

- *Comparison to another code*: the ``hmf`` library (Murray, Power & Robotham
  2013), which computes sigma(M), the growth factor and the Tinker parameters
  with its own code, converted from its h-units.
- *Comparison to the paper*: Tinker et al. (2008, ApJ 688, 709) eq. 3 with their
  Table 2 parameters and the redshift evolution of eqs. 5-8, typed again below
  (from memory of the paper; the same three-digit values also appear in
  colossus's source and, to seven digits, in hmf's).  This is checked both on
  the multiplicity function f(sigma) of colossus, the library
  :func:`halo_mass_function` delegates to, and end to end on
  :func:`halo_mass_function` itself, with sigma(M) from hmf.
- *Physics sanity and input validation*: monotonicity in mass and redshift, the
  tabulation grid, and the ValueErrors.
"""

import math

import numpy as np
import pytest
from astropy import units as u
from astropy.cosmology import FlatLambdaCDM, Planck18
from scipy.optimize import brentq

from lensinfer.halo.abundance import MASS_FUNCTIONS, halo_mass_function, log_mass_function_table

H = Planck18.h  # 0.6766
# Planck Collaboration (2020, A&A 641, A6), Table 2, TT,TE,EE+lowE+lensing+BAO, as
# carried by astropy's Planck18 realisation in its meta.
SIGMA8 = 0.8102
NS = 0.9665
# Comoving mean matter density today, Msun Mpc^-3 (no h), from astropy.
RHO_M0 = (Planck18.Om0 * Planck18.critical_density0).to_value(u.Msun / u.Mpc**3)

# Tinker et al. (2008), Table 2 (from memory): Delta (relative to the *mean*
# density) -> (A0, a0, b0, c0).
TINKER08_TABLE2 = {
    200: (0.186, 1.47, 2.57, 1.19),
    300: (0.200, 1.52, 2.25, 1.27),
    400: (0.212, 1.56, 2.05, 1.34),
}


def tinker08_f(sigma, z, delta_m):
    """Tinker et al. (2008) eq. 3 with the z-evolution of eqs. 5-8 (from memory).

    f = A [(sigma/b)^-a + 1] exp(-c/sigma^2),
    A = A0 (1+z)^-0.14 (eq. 5), a = a0 (1+z)^-0.06 (eq. 6), b = b0 (1+z)^-alpha
    (eq. 7), log10 alpha = -[0.75 / log10(Delta/75)]^1.2 (eq. 8); c does not evolve.
    Only exact Table 2 rows are accepted, so no interpolation scheme is assumed.
    """
    a0_amp, a0, b0, c0 = TINKER08_TABLE2[delta_m]
    alpha = 10.0 ** (-((0.75 / math.log10(delta_m / 75.0)) ** 1.2))
    amp = a0_amp * (1.0 + z) ** -0.14
    a = a0 * (1.0 + z) ** -0.06
    b = b0 * (1.0 + z) ** -alpha
    return amp * ((sigma / b) ** -a + 1.0) * np.exp(-c0 / sigma**2)


def redshift_for_mean_overdensity(delta_m):
    """z at which M200c is an exact Delta_m = 200 / Omega_m(z) row (astropy's Om(z))."""
    return brentq(lambda z: 200.0 / Planck18.Om(z) - delta_m, 0.0, 5.0, xtol=1e-14)


def hmf_mass_function(z, log10_m_low_msun, log10_m_high_msun):
    """An hmf MassFunction for M200c on a 0.01-dex grid starting exactly at the given mass.

    hmf's masses are Msun/h, so the grid starts at log10(M h); hmf's Tinker08 takes
    any spherical-overdensity definition directly (no mass conversion).
    """
    hmf = pytest.importorskip("hmf")
    lo = log10_m_low_msun + math.log10(H)
    return hmf.MassFunction(
        z=z,
        hmf_model="Tinker08",
        mdef_model="SOCritical",
        mdef_params={"overdensity": 200},
        transfer_model="EH",
        cosmo_model=Planck18,
        sigma_8=SIGMA8,
        n=NS,
        Mmin=lo,
        # hmf's grid is arange(Mmin, Mmax, dlog10m): stop 0.005 dex past the last mass.
        Mmax=lo + (log10_m_high_msun - log10_m_low_msun) + 0.005,
        dlog10m=0.01,
    )


# ------------------------------------------------------ comparison to another code


@pytest.mark.parametrize("z", [0.3, 0.7])
def test_against_hmf(z):
    # Comparison to another code: hmf (Murray, Power & Robotham 2013, Astron.
    # Comput. 3, 23) with the same physics -- Eisenstein & Hu (1998) transfer
    # function, Tinker et al. (2008) f(sigma) -- and its own integration of
    # sigma(M) and of the growth factor.  No warnings are filtered: hmf emits none
    # for these settings (Delta_m = 200/Om(z) = 403 and 292 lie inside Table 2).
    #
    # Measured |relative difference| at (1e12, 1e13, 1e14) Msun:
    # z = 0.3: 0.11%, 0.18%, 0.23%; z = 0.7: 0.26%, 0.40%, 0.35%.
    # Where it comes from (measured separately): the Table 2 interpolation to
    # Delta_m differs -- colossus interpolates the three-digit table linearly in
    # Delta at Delta_m rounded to an integer, hmf splines a seven-digit table in
    # log Delta -- which alone gives up to 0.48% in f at equal sigma; sigma itself
    # agrees to < 4e-4 (growth factors to 3.6e-4), worth < 0.15% through
    # |dln f / dln sigma| < 3 at these masses.  Tolerance 1%: that budget (~0.6%)
    # with margin, still far below the ~10% spread between published mass-function
    # fits, which is what a wrong unit of h (a factor h^3 = 0.31 in the density,
    # or a 0.17-dex shift in mass) or a wrong mass definition would exceed.
    mf = hmf_mass_function(z, 12.0, 14.0)
    idx = [0, 100, 200]
    m_msun = mf.m[idx] / H
    np.testing.assert_allclose(m_msun, [1e12, 1e13, 1e14], rtol=1e-12)  # grid landed
    reference = mf.dndlnm[idx] * H**3  # h^3 Mpc^-3 -> Mpc^-3; per ln M needs no Jacobian
    ours = halo_mass_function(m_msun, z, Planck18)
    np.testing.assert_allclose(ours, reference, rtol=1e-2)


# ------------------------------------------------------ comparison to the paper


@pytest.fixture
def colossus_current():
    """A colossus cosmology set current for the test, the previous one restored after."""
    from colossus.cosmology import cosmology as cc

    previous = cc.current_cosmo
    cosmo = cc.Cosmology(
        name="test-planck18",
        flat=True,
        H0=67.66,
        Om0=0.30966,
        Ob0=0.04897,
        sigma8=SIGMA8,
        ns=NS,
        persistence="",
        print_warnings=False,
    )
    cc.setCurrent(cosmo)
    yield cosmo
    cc.current_cosmo = previous


@pytest.mark.parametrize("z", [0.0, 0.5, 1.0, 2.0])
def test_colossus_f_sigma_matches_tinker08_eq3_at_200m(colossus_current, z):
    # Comparison to the paper, for the library we delegate to.  For M200m the
    # overdensity relative to the mean is exactly 200 at every z: a Table 2 row,
    # so eq. 3 and eqs. 5-8 apply with no interpolation in Delta.  (M200c, what
    # halo_mass_function computes, has Delta_m = 200/Om(z), between rows; it is
    # tested end to end at exact rows below.)  Both sides evaluate the same
    # closed form from the same three-digit constants, so only float64 rounding
    # (~1e-15 relative) separates them: tolerance 1e-12.
    from colossus.lss import mass_function

    sigma = np.geomspace(0.3, 3.0, 13)  # ~1e16 down to ~1e10 Msun at z = 0 (Planck18)
    f = mass_function.massFunction(sigma, z, q_in="sigma", mdef="200m", model="tinker08", q_out="f")
    np.testing.assert_allclose(f, tinker08_f(sigma, z, 200), rtol=1e-12)


@pytest.mark.parametrize("delta_m", [300, 400])
def test_m200c_against_tinker08_eq2_at_table_rows(delta_m):
    # Comparison to the paper, end to end.  Tinker et al. (2008) eq. 2:
    #   dn/dlnM = f(sigma) rho_m0 / M |dln sigma / dln M|,
    # with f from eq. 3 at an exact Table 2 row: z is chosen so that
    # Delta_m = 200 / Om(z) equals 300 (z = 0.650) or 400 (z = 0.308).  sigma(M, z)
    # comes from hmf (its EH98 spectrum, normalised to sigma8, times its growth
    # factor), |dln sigma/dln M| by central differences on hmf's 0.01-dex grid
    # (truncation error ~(0.023)^2/6 x the third derivative, < 1e-5 relative),
    # rho_m0 from astropy.  Nothing from colossus enters the reference.
    #
    # Measured |relative difference| at (1e12, 1e13, 1e14) Msun: Delta_m = 300:
    # 0.04%, 0.20%, 0.13%; Delta_m = 400: 0.06%, 0.07%, 0.07%.  What remains is
    # sigma(M) from two codes (< 4e-4 apart, times |dln f/dln sigma| < 3) and
    # the slope of sigma(M) (colossus differentiates a spline of its sigma table).
    # Tolerance 0.5%: about twice that budget; the three-digit rounding of Table 2
    # (e.g. c0 = 1.34 for 1.3352) is common to both sides and does not enter.
    z = redshift_for_mean_overdensity(delta_m)
    mf = hmf_mass_function(z, 11.9, 14.1)
    m = mf.m / H
    sigma = mf.sigma
    dlnsigma_dlnm = np.gradient(np.log(sigma), np.log(m))
    reference = tinker08_f(sigma, z, delta_m) * RHO_M0 / m * np.abs(dlnsigma_dlnm)
    idx = [10, 110, 210]  # 1e12, 1e13, 1e14 Msun, away from the one-sided ends
    np.testing.assert_allclose(m[idx], [1e12, 1e13, 1e14], rtol=1e-12)
    ours = halo_mass_function(m[idx], z, Planck18)
    np.testing.assert_allclose(ours, reference[idx], rtol=5e-3)


# ------------------------------------------------------ physics sanity


@pytest.mark.parametrize("z", [0.1, 0.5, 1.0, 2.0])
def test_decreases_with_mass(z):
    # dn/dlnM falls with mass at every mass in Tinker's calibrated range
    # (1e11-1e15 h^-1 Msun): the 1/M and the exponential cut-off of eq. 3 both fall.
    m = np.geomspace(1e11, 1e15, 41)
    dn = halo_mass_function(m, z, Planck18)
    assert np.all(np.isfinite(dn) & (dn > 0))
    assert np.all(np.diff(dn) < 0)


@pytest.mark.parametrize("mass", [1e13, 1e14, 1e15])
def test_massive_haloes_rarer_at_higher_redshift(mass):
    # Hierarchical growth: above the characteristic mass (M* ~ 1e12.5-1e13 Msun at
    # z = 0, falling with z) the comoving abundance at fixed mass falls with
    # redshift, because sigma(M, z) = D(z) sigma(M, 0) falls.  Below M* it need
    # not (it rises from z = 0 to 0.4 at 1e12 Msun), hence M >= 1e13 Msun.
    zs = [0.1, 0.4, 0.8, 1.5, 2.5]
    dn = np.array([float(halo_mass_function(mass, z, Planck18)) for z in zs])
    assert np.all(np.diff(dn) < 0)


def test_sigma8_and_ns_overrides_match_the_realisation():
    # A cosmology without sigma8 in its meta plus explicit sigma8= and ns= is the
    # same calculation as Planck18 (identical parameters): exact equality up to
    # rounding.  Planck18's m_nu is reproduced so every parameter is the same.
    bare = FlatLambdaCDM(
        H0=67.66, Om0=0.30966, Ob0=0.04897, Tcmb0=2.7255, Neff=3.046, m_nu=[0, 0, 0.06] * u.eV
    )
    m = np.array([1e12, 1e14])
    np.testing.assert_allclose(
        halo_mass_function(m, 0.4, bare, sigma8=SIGMA8, ns=NS),
        halo_mass_function(m, 0.4, Planck18),
        rtol=1e-12,
    )
    # More power means more massive haloes (the exponential tail of eq. 3).
    higher = halo_mass_function(1e14, 0.4, Planck18, sigma8=0.9)
    assert higher > halo_mass_function(1e14, 0.4, Planck18)


def test_table_grid_and_values():
    # Regression/consistency: the table is ln(dn/dlog10 M) = ln(dn/dlnM) + ln ln 10
    # up to a constant, on a uniform grid with both endpoints included.
    grid, log_density = log_mass_function_table(0.4, 11.5, 15.0, Planck18)
    assert grid[0] == 11.5 and grid[-1] == 15.0
    assert grid.size == 351  # 3.5 dex / 0.01 dex + 1
    np.testing.assert_allclose(np.diff(grid), 0.01, rtol=1e-9)  # linspace rounding only
    offset = log_density - np.log(halo_mass_function(10.0**grid, 0.4, Planck18))
    np.testing.assert_allclose(offset, offset[0], atol=1e-12)  # a constant shift only
    assert np.all(np.diff(log_density) < 0)  # falls with mass, as dn/dlnM does


@pytest.mark.parametrize(("low", "high", "step"), [(11.5, 12.0, 0.03), (12.0, 12.001, 0.01)])
def test_table_grid_step_never_exceeds_request(low, high, step):
    # A range that is not a whole number of steps gets a finer uniform grid, never a
    # coarser one (the 1e-4 interpolation accuracy the docstring quotes depends on
    # the step); at least three knots are always returned.
    grid, _ = log_mass_function_table(0.4, low, high, Planck18, step_dex=step)
    assert grid[0] == low and grid[-1] == high
    assert grid.size >= 3
    h = np.diff(grid)
    assert np.all(h <= step * (1 + 1e-12))
    np.testing.assert_allclose(h, h[0], rtol=1e-9)


# ------------------------------------------------------ input validation


def test_unknown_model_raises():
    assert MASS_FUNCTIONS == ("tinker08",)
    with pytest.raises(ValueError, match=r"unknown halo mass function 'press74'.*tinker08"):
        halo_mass_function(1e12, 0.3, Planck18, model="press74")
    with pytest.raises(ValueError, match="unknown halo mass function"):
        log_mass_function_table(0.3, 11.0, 12.0, Planck18, model="press74")


def test_cosmology_without_sigma8_raises():
    no_sigma8 = FlatLambdaCDM(H0=70, Om0=0.3, Ob0=0.05)  # empty meta
    with pytest.raises(ValueError, match=r"needs sigma8 and n_s.*pass sigma8= and ns="):
        halo_mass_function(1e12, 0.3, no_sigma8)


def test_cosmology_without_baryons_raises():
    # The Eisenstein & Hu (1998) transfer function needs Omega_b > 0.
    no_baryons = FlatLambdaCDM(H0=70, Om0=0.3)
    with pytest.raises(ValueError, match="needs a baryon density"):
        halo_mass_function(1e12, 0.3, no_baryons, sigma8=0.8, ns=0.96)


def test_cosmology_without_cmb_temperature_raises_valueerror():
    # Following the sigma8 error message's advice ("pass sigma8= and ns=") with the
    # same cosmology: Tcmb0 defaults to 0 K in astropy, and EH98 scales with
    # Theta_2.7 = Tcmb0 / 2.7 K throughout (from memory), so it cannot be evaluated.  The
    # contract (Raises: ValueError for unusable cosmologies) asks for a clear
    # ValueError.
    no_cmb = FlatLambdaCDM(H0=70, Om0=0.3, Ob0=0.05)
    with pytest.raises(ValueError, match="Tcmb"):
        halo_mass_function(1e12, 0.3, no_cmb, sigma8=0.8, ns=0.96)


@pytest.mark.parametrize(("low", "high"), [(12.0, 12.0), (13.0, 12.0)])
def test_table_empty_range_raises(low, high):
    with pytest.raises(ValueError, match="must exceed"):
        log_mass_function_table(0.3, low, high, Planck18)
