"""Tests for lensinfer.halo.abundance (the Tinker et al. 2008 halo mass function).

Three kinds of check:

- *Comparison to the paper*: Tinker et al. (2008, ApJ 688, 709) eq. 2 and eq. 3
  with their Table 2 parameters and the redshift evolution of eqs. 5-8, typed
  again in ``tests/_abundance_reference.py`` (from memory of the paper), with
  sigma(M), its slope and the growth factor computed there independently
  (adaptive quadrature, the growth ODE in a, central differences).
- *Comparison to a second power spectrum*: the same reference on the
  "no-wiggle" fitting form of Eisenstein & Hu (1998) eqs. 26 and 28-31, which
  shares no code with the Boltzmann code behind the package's P(k).
- *Physics sanity and input validation*: monotonicity in mass and redshift, the
  tabulation grid, and the ValueErrors.
"""

import math

import _abundance_reference as ref
import numpy as np
import pytest
from astropy import units as u
from astropy.cosmology import FlatLambdaCDM, Planck18

from lensinfer.halo import abundance
from lensinfer.halo.abundance import MASS_FUNCTIONS, halo_mass_function, log_mass_function_table

SIGMA8, NS = ref.SIGMA8, ref.NS
MASSES = np.array([1e12, 1e13, 1e14])


# ------------------------------------------------------ comparison to the paper


@pytest.mark.parametrize("delta_m", [300, 400])
def test_m200c_against_tinker08_eq2_at_table_rows(delta_m):
    # Tinker et al. (2008) eq. 2, dn/dlnM = f(sigma) rho_m0 / M |dln sigma/dln M|,
    # with f from eq. 3 at an exact Table 2 row: z is chosen so that
    # Delta_m = 200 / Om(z) equals 300 (z = 0.650) or 400 (z = 0.308), so no
    # interpolation in Delta enters.  sigma(M, z) by adaptive quadrature of the
    # same linear spectrum (run separately), times the growth ODE's D(z).
    # Measured |relative difference| at 1e12, 1e13, 1e14 Msun: <= 4.8e-4, from
    # the package's trapezoid rule for sigma (2e-4 in sigma) through
    # |dln f/dln sigma| < 3.  Tolerance 2e-3: four times that.
    z = ref.redshift_for_mean_overdensity(delta_m)
    expected = ref.dn_dlnm(MASSES, z, ref.camb_log_power())
    np.testing.assert_allclose(halo_mass_function(MASSES, z, Planck18), expected, rtol=2e-3)


@pytest.mark.parametrize("z", [0.3, 0.7])
def test_m200c_between_table_rows(z):
    # Between Table 2 rows (Delta_m = 403 at z = 0.3, 292 at z = 0.7) the package
    # splines the parameters in log Delta, the reference interpolates linearly.
    # Measured 0.02-0.07% at z = 0.3 and 0.24-0.32% at z = 0.7; Tinker et al. leave
    # the interpolation scheme open, and the two schemes differ by up to ~0.5% in
    # f at equal sigma.  Tolerance 1%.
    expected = ref.dn_dlnm(MASSES, z, ref.camb_log_power())
    np.testing.assert_allclose(halo_mass_function(MASSES, z, Planck18), expected, rtol=1e-2)


@pytest.mark.parametrize("z", [0.3, 0.7])
def test_against_eisenstein_hu_no_wiggle_spectrum(z):
    # The reference on the Eisenstein & Hu (1998) no-wiggle transfer function
    # (eqs. 26, 28-31), normalised to the same sigma8: no code in common with the
    # Boltzmann code.  That fitting form is good to a few per cent in P(k) and has
    # no massive neutrinos; measured 0.6-1.7% in dn/dlnM.  Tolerance 4%: it still
    # catches a wrong unit of h (a factor h^3 = 0.31 in the density or 0.17 dex in
    # mass) or a wrong mass definition, each a change of tens of per cent.
    expected = ref.dn_dlnm(MASSES, z, ref.eh98_no_wiggle_log_power())
    np.testing.assert_allclose(halo_mass_function(MASSES, z, Planck18), expected, rtol=4e-2)


@pytest.mark.parametrize("z", [0.3, 0.7, 2.0])
def test_growth_factor_against_the_growth_ode_in_a(z):
    # The package integrates the growth equation in ln a, the reference in a with
    # its own finite-difference dlnE/da: same equation, independent integration.
    # Measured agreement 1e-10; tolerance 1e-7 (solve_ivp rtol 1e-10 on both).
    assert abundance._growth(z, Planck18) == pytest.approx(ref.growth(z), rel=1e-7)
    # Structure grows: D(z) < D(0) and, in the matter era, D ~ 1/(1+z) from below.
    assert 1.0 / (1.0 + z) < abundance._growth(z, Planck18) < 1.0


def test_sigma_normalised_to_sigma8():
    # sigma(8 h^-1 Mpc, z = 0) of the package's spectrum equals the cosmology's
    # sigma8 (Planck 2018, 0.8102) by construction; the check is on the package's
    # trapezoid quadrature against the reference's adaptive one on the same
    # spectrum: measured 2e-4 in sigma at 1e12 Msun.  Tolerance 1e-3.
    lnp = abundance._linear_power_today(abundance._cosmology_parameters(Planck18, None, None))
    assert math.sqrt(abundance._sigma2(np.array([8.0 / ref.H]), lnp)[0]) == pytest.approx(
        SIGMA8, rel=1e-12
    )
    radius = (3.0 * MASSES / (4.0 * math.pi * ref.RHO_M0)) ** (1.0 / 3.0)
    ours = np.sqrt(abundance._sigma2(radius, lnp))
    np.testing.assert_allclose(ours, ref.sigma_m(MASSES, 0.0, ref.camb_log_power()), rtol=1e-3)


@pytest.mark.parametrize("delta_m", [200, 300, 400, 600])
def test_multiplicity_passes_through_table2_rows(delta_m):
    # The cubic spline in log Delta reproduces Table 2 at its rows: eq. 3 with
    # eqs. 5-8 typed independently in the reference; same closed form and
    # constants, so float64 rounding only: tolerance 1e-12.
    sigma = np.geomspace(0.3, 3.0, 13)
    for z in (0.0, 0.5, 2.0):
        np.testing.assert_allclose(
            abundance._tinker08_multiplicity(sigma, z, delta_m),
            ref.tinker08_f(sigma, z, delta_m),
            rtol=1e-12,
        )


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
    # not (it rises at low z at 1e12 Msun), hence M >= 1e13 Msun.
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
