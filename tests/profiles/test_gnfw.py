"""Generalized NFW halo: closed-form special cases, NFW limit and from_m200c.

Zhao (1996, MNRAS 278, 488) (alpha, beta, gamma) = (1, 3, gamma) density
rho = rho_s / (x^gamma (1 + x)^(3 - gamma)).  Its enclosed mass
4 pi rho_s r_s^3 I_gamma(x), I_gamma(x) = int_0^x t^(2-gamma) (1+t)^(gamma-3) dt,
is elementary for the slopes below (integrated by hand, each checked by
differentiating with sympy while writing this test):

- gamma = 0:   ln(1+x) + 2/(1+x) - 1/(2 (1+x)^2) - 3/2
- gamma = 1/2: 2 asinh(sqrt x) - 2 sqrt(x) (3 + 4x) / (3 (1+x)^(3/2))
- gamma = 1:   ln(1+x) - x/(1+x)                (NFW)
- gamma = 3/2: 2 asinh(sqrt x) - 2 sqrt(x / (1+x))
- gamma = 2:   ln(1+x)

evaluated here in 40-digit mpmath (they cancel at small x in float64).
lensinfer integrates gNFW numerically and documents a relative accuracy
better than 1e-8 for 0 <= gamma <= 2.5 — the tolerance used throughout.
"""

import math

import _profile_reference as ref
import astropy.units as u
import jax.numpy as jnp
import numpy as np
import pytest
from astropy.cosmology import Planck18

from lensinfer.cosmology import Cosmology
from lensinfer.profiles import NFW, GeneralizedNFW

mpmath = pytest.importorskip("mpmath")

RHO_S, R_S = 1.0e7, 20.0
X = np.array([1e-3, 1e-2, 0.1, 0.5, 1.0, 2.0, 10.0, 100.0, 1e3])
DOCUMENTED_RTOL = 1e-8  # gnfw.py docstring / _quadrature.py module docstring


def _closed_mass(gamma, x):
    x = mpmath.mpf(x)
    sq = mpmath.sqrt(x)
    forms = {
        0.0: lambda: mpmath.log1p(x) + 2 / (1 + x) - 1 / (2 * (1 + x) ** 2) - mpmath.mpf(3) / 2,
        0.5: lambda: 2 * mpmath.asinh(sq) - 2 * sq * (3 + 4 * x) / (3 * (1 + x) ** 1.5),
        1.0: lambda: mpmath.log1p(x) - x / (1 + x),
        1.5: lambda: 2 * mpmath.asinh(sq) - 2 * mpmath.sqrt(x / (1 + x)),
        2.0: lambda: mpmath.log1p(x),
    }
    return forms[gamma]()


@pytest.mark.parametrize("gamma", [0.0, 0.5, 1.0, 1.5, 2.0])
def test_enclosed_mass_matches_closed_forms(gamma):
    p = GeneralizedNFW(RHO_S, R_S, gamma)
    got = np.asarray(p.enclosed_mass(jnp.asarray(X * R_S)))
    with mpmath.workdps(40):
        expected = [float(4 * mpmath.pi * RHO_S * R_S**3 * _closed_mass(gamma, x)) for x in X]
    np.testing.assert_allclose(got, expected, rtol=DOCUMENTED_RTOL)


def test_inner_slope_one_is_nfw():
    # gamma = 1 against the NFW closed forms typed from the papers (NFW 1997
    # density; Wright & Brainerd 2000 eqs. 11 and 13 in 40-digit mpmath).
    p = GeneralizedNFW(RHO_S, R_S, 1.0)
    x = X[X != 1.0]
    r = jnp.asarray(x * R_S)
    np.testing.assert_allclose(
        np.asarray(p.surface_density(r)),
        [2 * RHO_S * R_S * ref.wright_brainerd_mp(xx)[0] for xx in x],
        rtol=DOCUMENTED_RTOL,
    )
    np.testing.assert_allclose(
        np.asarray(p.projected_mass(r)),
        [4 * math.pi * RHO_S * R_S**3 * ref.wright_brainerd_mp(xx)[1] for xx in x],
        rtol=DOCUMENTED_RTOL,
    )
    np.testing.assert_allclose(
        np.asarray(p.density(r)), [ref.nfw_density(xx * R_S, RHO_S, R_S) for xx in x], rtol=1e-14
    )


@pytest.mark.parametrize("gamma", [0.0, 2.5])
def test_documented_slope_range_ends(gamma):
    # The docstring's range is 0 <= gamma <= 2.5; the consistency suite covers
    # 0.5 ... 2; here the two ends, against scipy quad of the density
    # (reference ~1e-13, see _profile_reference).
    p = GeneralizedNFW(RHO_S, R_S, gamma)

    def rho(r):
        return ref.gnfw_density(r, RHO_S, R_S, gamma)

    for x in (1e-3, 0.3, 1.0, 30.0, 1e3):
        r = x * R_S
        assert float(p.enclosed_mass(r)) == pytest.approx(
            ref.volume_mass(rho, r), rel=DOCUMENTED_RTOL, abs=0
        )
        assert float(p.surface_density(r)) == pytest.approx(
            ref.line_of_sight(rho, r, R_S, 3.0), rel=DOCUMENTED_RTOL, abs=0
        )
        assert float(p.projected_mass(r)) == pytest.approx(
            ref.cylinder_mass_from_density(rho, r, R_S, 3.0), rel=DOCUMENTED_RTOL, abs=0
        )


@pytest.fixture(scope="module")
def cosmo():
    return Cosmology.default()


def test_from_m200c_with_slope_one_equals_nfw(cosmo):
    # rho_s differs only by gNFW's quadrature mass at c = 7 (documented 1e-8);
    # r_s is the same expression in both.
    g = GeneralizedNFW.from_m200c(1e13, 7.0, 1.0, 0.4, cosmo)
    n = NFW.from_m200c(1e13, 7.0, 0.4, cosmo)
    assert float(g.r_s) == pytest.approx(float(n.r_s), rel=1e-15, abs=0)
    assert float(g.rho_s) == pytest.approx(float(n.rho_s), rel=DOCUMENTED_RTOL, abs=0)
    assert float(g.inner_slope) == 1.0


@pytest.mark.parametrize("gamma", [0.0, 0.5, 1.0, 1.5, 1.8])
def test_from_m200c_concentration_is_r200c_over_r_minus2(cosmo, gamma):
    # Concentration-mass relations define c = r200c / r_-2, with r_-2 where the
    # logarithmic density slope is -2 (e.g. Duffy et al. 2008, sec. 2; Dutton &
    # Macciò 2014, sec. 3; common practice).  r_-2 is found here by scipy brentq on
    # a centred finite difference of ln rho (independent of the closed form
    # (2 - gamma) r_s used by the package): brentq xtol 1e-14 kpc, and the
    # difference step 1e-6 in ln r gives a slope error ~1e-12, so 1e-8 relative.
    from scipy.optimize import brentq

    m200c, c200c, z = 2e12, 8.0, 0.3
    rho_c = Planck18.critical_density(z).to_value(u.Msun / u.kpc**3)
    r200 = (3.0 * m200c / (4.0 * math.pi * 200.0 * rho_c)) ** (1.0 / 3.0)
    g = GeneralizedNFW.from_m200c(m200c * u.Msun, c200c, gamma, z, cosmo)
    rho_s, r_s = float(g.rho_s), float(g.r_s)

    def slope(lnr, e=1e-6):
        lo = math.log(ref.gnfw_density(math.exp(lnr - e), rho_s, r_s, gamma))
        hi = math.log(ref.gnfw_density(math.exp(lnr + e), rho_s, r_s, gamma))
        return (hi - lo) / (2 * e) + 2.0

    r_m2 = math.exp(brentq(slope, math.log(1e-3 * r200), math.log(10 * r200), xtol=1e-14))
    assert r200 / r_m2 == pytest.approx(c200c, rel=1e-8, abs=0)


def test_from_m200c_has_no_r_minus2_for_steep_cusps(cosmo):
    # For gamma >= 2 the slope is steeper than -2 everywhere: no concentration.
    g = GeneralizedNFW.from_m200c(2e12, 8.0, 2.2, 0.3, cosmo)
    assert math.isnan(float(g.r_s))


@pytest.mark.parametrize("gamma", [0.5, 1.5, 1.9])
def test_from_m200c_encloses_m200c_at_200_rho_crit(cosmo, gamma):
    # r200 from astropy's Planck18 rho_c(z); M(<r200) by scipy quad of the
    # density (independent of lensinfer's quadrature): 1e-8 documented.
    m200c, c200c, z = 2e12, 8.0, 0.3
    rho_c = Planck18.critical_density(z).to_value(u.Msun / u.kpc**3)
    r200 = (3.0 * m200c / (4.0 * math.pi * 200.0 * rho_c)) ** (1.0 / 3.0)
    g = GeneralizedNFW.from_m200c(m200c * u.Msun, c200c, gamma, z, cosmo)
    assert float(g.r_s) == pytest.approx(r200 / ((2.0 - gamma) * c200c), rel=1e-12, abs=0)
    m_enc = ref.volume_mass(
        lambda r: ref.gnfw_density(r, float(g.rho_s), float(g.r_s), gamma), r200
    )
    assert m_enc == pytest.approx(m200c, rel=DOCUMENTED_RTOL, abs=0)
    assert m_enc / (4 / 3 * math.pi * r200**3) == pytest.approx(
        200 * rho_c, rel=DOCUMENTED_RTOL, abs=0
    )


def test_constructor_accepts_quantities():
    q = GeneralizedNFW(1e-2 * u.Msun / u.pc**3, 2.0e4 * u.pc, 1.3)
    p = GeneralizedNFW(RHO_S, R_S, 1.3)
    r = jnp.asarray([0.2, 20.0, 2000.0])
    for method in ("density", "enclosed_mass", "surface_density", "projected_mass"):
        np.testing.assert_allclose(
            np.asarray(getattr(q, method)(r)), np.asarray(getattr(p, method)(r)), rtol=1e-14
        )
