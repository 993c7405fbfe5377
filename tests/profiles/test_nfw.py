"""NFW halo: comparison with Wright & Brainerd (2000), mpmath and astropy.

Comparison-to-other-truth tests only: every expected number below is either a
published closed form re-typed in numpy (``_profile_reference``), the same
closed form in 40-digit mpmath, or astropy's Planck18 critical density.
"""

import math

import _profile_reference as ref
import astropy.units as u
import jax
import jax.numpy as jnp
import numpy as np
import pytest
from astropy.cosmology import Planck18
from jax.test_util import check_grads

from lensinfer.cosmology import Cosmology
from lensinfer.profiles import NFW, nfw_mass_function

mpmath = pytest.importorskip("mpmath")

RHO_S, R_S = 1.0e7, 20.0  # Msun / kpc^3, kpc
PROFILE = NFW(RHO_S, R_S)

#: x = R / r_s values away from the Taylor window about 1.
X_AWAY = np.array([1e-3, 1e-2, 0.1, 0.3, 0.5, 0.8, 1.25, 2.0, 5.0, 30.0, 300.0, 1e3])


def test_surface_density_matches_wright_brainerd_eq11():
    # Wright & Brainerd (2000) eq. 11, x < 1 and x > 1 branches, in 40-digit
    # mpmath.  Tolerance 1e-12 for a float64 closed form (~1/(1 - F) < 10
    # amplification of rounding at these x).
    expected = [2 * RHO_S * R_S * ref.wright_brainerd_mp(x)[0] for x in X_AWAY]
    got = np.asarray(PROFILE.surface_density(jnp.asarray(X_AWAY * R_S)))
    np.testing.assert_allclose(got, expected, rtol=1e-12)


def test_surface_density_at_the_scale_radius_is_two_thirds_rho_s_r_s():
    # Wright & Brainerd (2000) eq. 11, x = 1 branch: Sigma = 2 rho_s r_s / 3.
    # Exact value; 1e-15 allows one rounding.
    assert float(PROFILE.surface_density(R_S)) == pytest.approx(
        2 * RHO_S * R_S / 3, rel=1e-15, abs=0
    )


def test_cylinder_mass_matches_wright_brainerd():
    # Wright & Brainerd (2000) eq. 13 times pi R^2, x < 1 and x > 1 branches,
    # in 40-digit mpmath (in float64 ln(x/2) and the artanh term cancel to
    # ~x^2 ln x at small x: 3e-9 at x = 1e-3).  Tolerance 1e-12: lensinfer
    # rewrites the x < 1 branch without that cancellation.
    expected = [4 * math.pi * RHO_S * R_S**3 * ref.wright_brainerd_mp(x)[1] for x in X_AWAY]
    got = np.asarray(PROFILE.projected_mass(jnp.asarray(X_AWAY * R_S)))
    np.testing.assert_allclose(got, expected, rtol=1e-12)


def test_cylinder_mass_at_the_scale_radius():
    # Wright & Brainerd (2000), x = 1 branch: 4 pi rho_s r_s^3 (1 - ln 2); exact.
    expected = 4 * math.pi * RHO_S * R_S**3 * (1.0 - math.log(2.0))
    assert float(PROFILE.projected_mass(R_S)) == pytest.approx(expected, rel=1e-15, abs=0)


def _h_mp(x):
    """ln(x/2) + F(x) in 40 digits (Wright & Brainerd 2000, eq. 13 bracket)."""
    x = mpmath.mpf(x)
    if x == 1:
        return mpmath.log(0.5) + 1
    uu = x * x - 1
    w = mpmath.sqrt(uu)
    return mpmath.log(x / 2) + mpmath.re(mpmath.atan(w) / w)


#: Approaching x = 1 from below, where the cylinder-mass closed form has a 0/0
#: (its x < 1 branch divides by sqrt(1 - x^2)).  A sampler proposes such radii
#: as readily as any other.
X_BELOW_ONE = [1.0 - 1e-4, 1.0 - 1e-6, 1.0 - 1e-8, 1.0 - 1e-10, 1.0 - 1e-12]


@pytest.mark.parametrize("x", X_BELOW_ONE, ids=lambda x: f"1-{1 - x:.0e}")
def test_cylinder_mass_just_below_the_scale_radius(x):
    # Value against the 40-digit closed form; 1e-12 as for every closed form.
    got = float(PROFILE.projected_mass(x * R_S))
    with mpmath.workdps(40):
        expected = float(4 * mpmath.pi * RHO_S * R_S**3 * _h_mp(x))
    assert got == pytest.approx(expected, rel=1e-12, abs=0)


@pytest.mark.parametrize("x", X_BELOW_ONE, ids=lambda x: f"1-{1 - x:.0e}")
def test_cylinder_mass_gradient_just_below_the_scale_radius(x):
    # d M_2D / dR from autodiff against the exact identity d M_2D / dR =
    # 2 pi R Sigma(R), with Sigma from Wright & Brainerd eq. 11 in 40 digits
    # (Sigma's bracket is smooth through x = 1).  Tolerance 1e-10: a derivative
    # of a closed form should carry only rounding.
    got = float(jax.grad(PROFILE.projected_mass)(x * R_S))
    with mpmath.workdps(40):
        xm = mpmath.mpf(x)
        w = mpmath.sqrt(xm * xm - 1)
        shape = mpmath.re((1 - mpmath.atan(w) / w) / (xm * xm - 1))
        expected = float(2 * mpmath.pi * x * R_S * 2 * RHO_S * R_S * shape)
    assert got == pytest.approx(expected, rel=1e-10, abs=0)


# ------------------------------------------------------------ m(x) = M / 4 pi rho_s r_s^3

M_POINTS = [1e-8, 1e-5, 1e-4, 5e-4, 9.99e-4, 1e-3, 1.001e-3, 2e-3, 1e-2, 0.1, 1.0, 10.0, 1e3]


@pytest.mark.parametrize("x", M_POINTS)
def test_nfw_mass_function_accuracy_as_documented(x):
    # Navarro, Frenk & White (1997) m(x) = ln(1 + x) - x / (1 + x) in 40
    # digits.  The docstring promises relative 1e-15 "at small x"; we allow
    # 1e-14 (~50 ulp) for the log1p / division roundings.
    with mpmath.workdps(40):
        xm = mpmath.mpf(x)
        expected = float(mpmath.log1p(xm) - xm / (1 + xm))
    assert float(nfw_mass_function(x)) == pytest.approx(expected, rel=1e-14, abs=0)


def test_enclosed_mass_is_4_pi_rho_s_r_s3_m():
    # NFW (1997): M(<r) = 4 pi rho_s r_s^3 m(r / r_s), away from small x where
    # the numpy formula cancels (tested above in mpmath).
    x = np.array([0.05, 0.5, 1.0, 3.0, 50.0, 1e3])
    got = np.asarray(PROFILE.enclosed_mass(jnp.asarray(x * R_S)))
    np.testing.assert_allclose(got, [ref.nfw_mass(xx * R_S, RHO_S, R_S) for xx in x], rtol=1e-13)


# ------------------------------------------------------------ units, pytree


def test_constructor_accepts_quantities():
    # 3e4 pc = 30 kpc; 1e7 Msun/kpc^3 = 1e-2 Msun/pc^3.  Unit conversions are
    # products of exact powers of ten: 1e-14.
    plain = NFW(1.0e7, 30.0)
    for q in (
        NFW(rho_s=1.0e7 * u.Msun / u.kpc**3, r_s=30 * u.kpc),
        NFW(rho_s=1.0e-2 * u.Msun / u.pc**3, r_s=3.0e4 * u.pc),
    ):
        r = jnp.asarray([0.3, 30.0, 3000.0])
        for method in ("density", "enclosed_mass", "surface_density", "projected_mass"):
            np.testing.assert_allclose(
                np.asarray(getattr(q, method)(r)), np.asarray(getattr(plain, method)(r)), rtol=1e-14
            )


def test_constructor_refuses_wrong_dimensions():
    with pytest.raises(u.UnitConversionError):
        NFW(1.0e7, 30 * u.s)


# ------------------------------------------------------------ from_m200c


@pytest.fixture(scope="module")
def cosmo():
    return Cosmology.default()


def test_default_cosmology_is_planck18(cosmo):
    # Cosmology.default() must be astropy's Planck18 realisation.
    assert float(cosmo.h0) == pytest.approx(
        Planck18.H0.to_value(u.km / u.s / u.Mpc), rel=1e-15, abs=0
    )
    assert float(cosmo.om0) == pytest.approx(Planck18.Om0, rel=1e-15, abs=0)
    assert float(cosmo.ode0) == pytest.approx(Planck18.Ode0, rel=1e-15, abs=0)
    assert float(cosmo.ob0) == pytest.approx(Planck18.Ob0, rel=1e-15, abs=0)


@pytest.mark.parametrize("z", [0.0, 0.3, 0.7, 2.0])
def test_critical_density_matches_astropy_planck18(cosmo, z):
    # astropy's Planck18.critical_density(z) converted to Msun / kpc^3.
    # Tolerance 1e-12: both are 3 H(z)^2 / 8 pi G with the same constants; the
    # E(z) neutrino term is the same fitting formula (measured ~5e-14).
    expected = Planck18.critical_density(z).to_value(u.Msun / u.kpc**3)
    assert float(cosmo.critical_density(z)) == pytest.approx(expected, rel=1e-12, abs=0)


@pytest.mark.parametrize(
    ("m200c", "c200c", "z"), [(1e12, 10.0, 0.2), (3e13, 6.0, 0.5), (1e15, 4.0, 1.0)]
)
def test_from_m200c_encloses_m200c_at_200_rho_crit(cosmo, m200c, c200c, z):
    # Definition (DESIGN.md; NFW 1997): r200 is where the mean enclosed density
    # is 200 rho_c(z), with rho_c from astropy; M(<r200) = M200c.  r200 is
    # computed here from astropy's rho_c, independently of lensinfer.
    rho_c = Planck18.critical_density(z).to_value(u.Msun / u.kpc**3)
    r200 = (3.0 * m200c / (4.0 * math.pi * 200.0 * rho_c)) ** (1.0 / 3.0)
    halo = NFW.from_m200c(m200c, c200c, z, cosmo)
    # 1e-12: rho_c agrees to 1e-12 (above), and m(c) is evaluated in closed form.
    assert float(halo.r_s) == pytest.approx(r200 / c200c, rel=1e-12, abs=0)
    m_enc = float(halo.enclosed_mass(r200))
    assert m_enc == pytest.approx(m200c, rel=1e-12, abs=0)
    mean_density = m_enc / (4.0 / 3.0 * math.pi * r200**3)
    assert mean_density == pytest.approx(200.0 * rho_c, rel=1e-12, abs=0)


def test_from_m200c_accepts_a_mass_quantity(cosmo):
    a = NFW.from_m200c(1e13 * u.Msun, 7.0, 0.4, cosmo)
    b = NFW.from_m200c(1e13, 7.0, 0.4, cosmo)
    assert float(a.rho_s) == pytest.approx(float(b.rho_s), rel=1e-14, abs=0)
    assert float(a.r_s) == pytest.approx(float(b.r_s), rel=1e-14, abs=0)


def test_from_m200c_is_jittable_and_differentiable(cosmo):
    # A sampled (log10 M200c, c200c, z) must give finite, finite-difference-
    # consistent gradients of e.g. the cylinder mass at 5 kpc.  check_grads
    # uses central differences with eps = 1e-4 in these O(1) variables;
    # 1e-6 is far above the O(eps^2) error.
    def m2d(log10_m, c, z):
        halo = NFW.from_m200c(10.0**log10_m, c, z, cosmo)
        return jnp.log(halo.projected_mass(5.0))

    jitted = jax.jit(m2d)
    assert float(jitted(13.0, 7.0, 0.4)) == pytest.approx(
        float(m2d(13.0, 7.0, 0.4)), rel=1e-13, abs=0
    )
    check_grads(m2d, (13.0, 7.0, 0.4), order=1, modes=["fwd", "rev"], atol=1e-6, rtol=1e-6)
