"""Tests of lensinfer.lensing: Sigma_cr, convergence, deflection, Einstein radius."""

import astropy.constants as const
import astropy.units as u
import jax
import jax.numpy as jnp
import numpy as np
import pytest
from astropy.cosmology import FlatLambdaCDM, Planck18
from jax.test_util import check_grads
from scipy.optimize import brentq

from lensinfer.cosmology import Cosmology
from lensinfer.lensing import (
    convergence,
    critical_surface_density,
    deflection,
    einstein_radius,
    einstein_radius_kpc,
    mean_convergence,
)
from lensinfer.profiles import NFW, CoredIsothermal, PointMass, PowerLaw, Sersic, SingularIsothermal

COSMO = Cosmology.default()
ZL, ZS = 0.45, 1.9
ARCSEC = (1 * u.arcsec).to_value(u.rad)


def _astropy_distances(zl, zs, ac=Planck18):
    d_l = ac.angular_diameter_distance(zl)
    d_s = ac.angular_diameter_distance(zs)
    d_ls = ac.angular_diameter_distance(zl, zs)
    return d_l, d_s, d_ls


def test_critical_surface_density_against_astropy():
    # Schneider, Kochanek & Wambsganss (2006), Part 1, eq. 9, with astropy's
    # constants and distances: agreement at the 1e-10 level of the distances.
    d_l, d_s, d_ls = _astropy_distances(ZL, ZS)
    ref = (const.c**2 / (4 * np.pi * const.G) * d_s / (d_l * d_ls)).to_value(u.Msun / u.kpc**2)
    np.testing.assert_allclose(critical_surface_density(ZL, ZS, COSMO), ref, rtol=1e-10)


def test_critical_surface_density_no_lensing_behind_source():
    assert np.isinf(critical_surface_density(1.0, 0.5, COSMO))
    assert np.isinf(critical_surface_density(1.0, 1.0, COSMO))


def test_sis_einstein_radius_handbook():
    # Schneider, Kochanek & Wambsganss (2006), Part 1, eq. 47:
    # theta_E = 4 pi (sigma / c)^2 D_ls / D_s.  Root tolerance: machine precision
    # of the implicit Newton step (the SIS root is exact after one step).
    sigma = 260.0
    _, d_s, d_ls = _astropy_distances(ZL, ZS)
    ref = 4 * np.pi * (sigma / const.c.to_value(u.km / u.s)) ** 2 * (d_ls / d_s).value / ARCSEC
    got = einstein_radius(SingularIsothermal(sigma), ZL, ZS, COSMO)
    np.testing.assert_allclose(got, ref, rtol=1e-10)


def test_point_mass_einstein_radius():
    # Schneider, Kochanek & Wambsganss (2006), Part 1, eq. 24:
    # theta_E^2 = (4 G M / c^2) D_ls / (D_l D_s).
    m = 3e11 * u.Msun
    d_l, d_s, d_ls = _astropy_distances(ZL, ZS)
    ref = np.sqrt((4 * const.G * m / const.c**2 * d_ls / (d_l * d_s)).decompose()).value / ARCSEC
    np.testing.assert_allclose(einstein_radius(PointMass(m), ZL, ZS, COSMO), ref, rtol=1e-10)


@pytest.mark.parametrize("slope", [1.5, 2.0, 2.4])
def test_power_law_einstein_radius_closed_form(slope):
    # M_2D = K R^(3 - gamma) (Keeton 2001, section 3.1) so R_E = (K / (pi Sigma_cr))^(1/(gamma-1)).
    p = PowerLaw(rho_ref=3e8, r_ref=1.0, slope=slope)
    sc = critical_surface_density(ZL, ZS, COSMO)
    k = p.projected_mass(1.0)
    ref = (k / (np.pi * sc)) ** (1.0 / (slope - 1.0))
    np.testing.assert_allclose(einstein_radius_kpc(p, sc), ref, rtol=1e-10)


def test_cored_isothermal_einstein_radius_and_subcritical():
    # Mean convergence of the cored isothermal sphere (Keeton 2001, section 3.1)
    # equals 1 at R_E = sqrt(b^2 - 2 b r_c), b = sigma^2 / (G Sigma_cr) the SIS
    # value; no ring when b <= 2 r_c (central convergence b / (2 r_c) <= 1).
    g = const.G.to_value(u.kpc * u.km**2 / u.s**2 / u.Msun)
    sc = critical_surface_density(ZL, ZS, COSMO)
    sigma = 250.0
    b = sigma**2 / (g * sc)
    rc = 0.2 * b
    ref = np.sqrt(b**2 - 2 * b * rc)
    np.testing.assert_allclose(einstein_radius_kpc(CoredIsothermal(sigma, rc), sc), ref, rtol=1e-10)
    assert einstein_radius_kpc(CoredIsothermal(sigma, 0.55 * b), sc) == 0.0


def _lens(m200c=10**13.2, c200c=7.0, mstar=10**11.4, r_eff=6.0, n=4.0):
    return Sersic(mstar, r_eff, n) + NFW.from_m200c(m200c, c200c, ZL, COSMO)


def test_composite_einstein_radius_against_scipy_root():
    # Independent root: scipy's brentq on the same projected mass; 1e-10 relative
    # is brentq's xtol scaled to the root.
    lens = _lens()
    sc = float(critical_surface_density(ZL, ZS, COSMO))

    def f(r):
        return float(lens.projected_mass(r)) - np.pi * sc * r**2

    ref = brentq(f, 1e-3, 1e2, xtol=1e-14, rtol=1e-13)
    np.testing.assert_allclose(einstein_radius_kpc(lens, sc), ref, rtol=1e-10)
    np.testing.assert_allclose(mean_convergence(lens, ref, sc), 1.0, rtol=1e-10)


def test_einstein_radius_gradients_against_finite_differences():
    # jax.test_util.check_grads compares with central finite differences
    # (default float64 tolerances); parameters in log10 so steps are well scaled.
    def theta(log_m200, log_mstar, z_s):
        return einstein_radius(_lens(10**log_m200, 7.0, 10**log_mstar), ZL, z_s, COSMO)

    check_grads(theta, (13.2, 11.4, 1.9), order=1, modes=["fwd", "rev"], eps=1e-4)


def test_einstein_radius_jit_matches_eager_and_vmaps():
    def theta(log_mstar):
        return einstein_radius(_lens(mstar=10**log_mstar), ZL, ZS, COSMO)

    x = jnp.array([11.0, 11.3, 11.6])
    eager = np.array([float(theta(v)) for v in x])
    np.testing.assert_allclose(jax.jit(jax.vmap(theta))(x), eager, rtol=1e-13)
    assert np.all(np.diff(eager) > 0)  # more stellar mass, larger ring


def test_convergence_and_deflection_sis():
    # SIS: kappa = b / (2 R), alpha = b (constant), with b the Einstein radius
    # (Schneider, Kochanek & Wambsganss 2006, Part 1, eqs. 47-48).
    sis = SingularIsothermal(230.0)
    sc = critical_surface_density(ZL, ZS, COSMO)
    b = einstein_radius_kpc(sis, sc)
    R = np.geomspace(0.1, 50, 9)
    np.testing.assert_allclose(convergence(sis, R, sc), b / (2 * R), rtol=1e-12)
    np.testing.assert_allclose(deflection(sis, R, sc), b, rtol=1e-12)
    np.testing.assert_allclose(mean_convergence([sis], R, sc), b / R, rtol=1e-12)


def test_einstein_radius_other_cosmology():
    # A different astropy cosmology changes D_ls / D_s as astropy says (SIS case).
    ac = FlatLambdaCDM(H0=70, Om0=0.3)
    c = Cosmology.from_astropy(ac)
    _, d_s, d_ls = _astropy_distances(ZL, ZS, ac)
    ref = 4 * np.pi * (250.0 / const.c.to_value(u.km / u.s)) ** 2 * (d_ls / d_s).value / ARCSEC
    np.testing.assert_allclose(
        einstein_radius(SingularIsothermal(250.0), ZL, ZS, c), ref, rtol=1e-10
    )
