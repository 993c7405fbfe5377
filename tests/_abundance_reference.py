"""An independent halo mass function for the tests, built the slow, direct way.

Nothing from ``lensinfer.halo.abundance`` is used:

- sigma(R) by adaptive quadrature (scipy ``quad`` over ln k) of a cubic spline
  of ln P(k), normalised to sigma8 by its own quadrature;
- the linear growth factor by integrating the growth ODE
  D'' + (3/a + dlnE/da) D' - 3 Om0 D / (2 a^5 E^2) = 0 with ``solve_ivp``
  (Peebles 1980, sec. 10; common practice), not Heath's integral;
- dln sigma / dln M by central differences of sigma;
- the Tinker et al. (2008) multiplicity f(sigma), eq. 3 with eqs. 5-8 and the
  Table 2 rows typed again (from memory of the paper), with *linear*
  interpolation in log10 Delta between rows (the package uses a cubic spline).

P(k) itself comes either from the CAMB Boltzmann code, run here with its own
settings, or from the "no-wiggle" fitting form of Eisenstein & Hu (1998, ApJ
496, 605), eqs. 26 and 28-31, typed below, which shares no code with CAMB.
"""

from __future__ import annotations

import functools
import itertools
import math

import numpy as np
from astropy import units as u
from astropy.cosmology import Planck18
from scipy.integrate import quad, solve_ivp
from scipy.interpolate import CubicSpline
from scipy.optimize import brentq

SIGMA8 = Planck18.meta["sigma8"]  # 0.8102, Planck 2018 paper VI Table 2 (astropy meta)
NS = Planck18.meta["n"]  # 0.9665
H = Planck18.h
RHO_M0 = float((Planck18.Om0 * Planck18.critical_density0).to_value(u.Msun / u.Mpc**3))

# Tinker et al. (2008), Table 2 (from memory): Delta_m -> (A0, a0, b0, c0).
TINKER08_TABLE2 = {
    200: (0.186, 1.47, 2.57, 1.19),
    300: (0.200, 1.52, 2.25, 1.27),
    400: (0.212, 1.56, 2.05, 1.34),
    600: (0.218, 1.61, 1.87, 1.45),
}


def tinker08_f(sigma, z, delta_m):
    """Eq. 3 with eqs. 5-8; Table 2 interpolated linearly in log10 Delta_m."""
    rows = sorted(TINKER08_TABLE2)
    x = math.log10(delta_m)
    params = [np.interp(x, np.log10(rows), [TINKER08_TABLE2[r][i] for r in rows]) for i in range(4)]
    a0_amp, a0, b0, c0 = params
    alpha = 10.0 ** (-((0.75 / math.log10(delta_m / 75.0)) ** 1.2))
    amp = a0_amp * (1.0 + z) ** -0.14
    a = a0 * (1.0 + z) ** -0.06
    b = b0 * (1.0 + z) ** -alpha
    return amp * ((np.asarray(sigma) / b) ** -a + 1.0) * np.exp(-c0 / np.asarray(sigma) ** 2)


def redshift_for_mean_overdensity(delta_m):
    """z at which M200c is an exact Delta_m = 200 / Omega_m(z) row (astropy's Om(z))."""
    return brentq(lambda z: 200.0 / Planck18.Om(z) - delta_m, 0.0, 5.0, xtol=1e-14)


@functools.cache
def camb_log_power():
    """Spline of ln P(k) (Mpc^3) in ln k (1/Mpc) at z = 0 from CAMB, own settings."""
    import camb

    pars = camb.CAMBparams(WantCls=False, WantTransfer=True)
    pars.set_cosmology(
        H0=Planck18.H0.value,
        ombh2=Planck18.Ob0 * H**2,
        omch2=(Planck18.Om0 - Planck18.Ob0) * H**2,
        mnu=0.06,
        num_massive_neutrinos=1,
        nnu=Planck18.Neff,
        TCMB=Planck18.Tcmb0.value,
    )
    pars.InitPower.set_params(As=2.1e-9, ns=NS)
    pars.set_matter_power(redshifts=[0.0], kmax=60.0)
    k, _, pk = camb.get_results(pars).get_linear_matter_power_spectrum(
        var1="delta_tot", var2="delta_tot", hubble_units=False, k_hunit=False
    )
    return CubicSpline(np.log(k), np.log(pk[0]))


def eh98_no_wiggle_log_power():
    """ln P(k) ∝ n_s ln k + 2 ln T0(k), Eisenstein & Hu (1998) eqs. 26, 28-31."""
    om, ob, h = Planck18.Om0, Planck18.Ob0, H
    theta = Planck18.Tcmb0.value / 2.7
    wm, wb, fb = om * h**2, ob * h**2, ob / om
    s = 44.5 * math.log(9.83 / wm) / math.sqrt(1.0 + 10.0 * wb**0.75)  # eq. 26, Mpc
    alpha = 1.0 - 0.328 * math.log(431.0 * wm) * fb + 0.38 * math.log(22.3 * wm) * fb**2

    def lnp(lnk):
        k = np.exp(lnk)  # 1/Mpc
        gamma = om * h * (alpha + (1.0 - alpha) / (1.0 + (0.43 * k * s) ** 4))  # eq. 30
        q = k * theta**2 / (gamma * h)  # eq. 28 (k in h/Mpc over Gamma)
        l0 = np.log(2.0 * math.e + 1.8 * q)
        c0 = 14.2 + 731.0 / (1.0 + 62.5 * q)
        t0 = l0 / (l0 + c0 * q**2)  # eq. 29
        return NS * lnk + 2.0 * np.log(t0)

    return lnp


def _w(x):
    return 3.0 * (math.sin(x) - x * math.cos(x)) / x**3 if x > 1e-3 else 1.0 - x * x / 10.0


LNK_RANGE = (math.log(1e-5), math.log(60.0))  # 1/Mpc; P beyond adds < 1e-8 to sigma^2


def sigma_today(radius_mpc, lnp, lnk_range=LNK_RANGE):
    """sigma(R) of the spectrum exp(lnp) (unnormalised), adaptive quadrature in ln k."""

    def integrand(lnk):
        k = math.exp(lnk)
        return k**3 * math.exp(float(lnp(lnk))) * _w(k * radius_mpc) ** 2 / (2.0 * math.pi**2)

    lo, hi = lnk_range
    # Split at kR = 1 and 10, where the window turns over and starts to oscillate.
    cuts = sorted(
        {lo, hi, *(c for c in (-math.log(radius_mpc), math.log(10.0 / radius_mpc)) if lo < c < hi)}
    )
    total = sum(
        quad(integrand, a, b, limit=400, epsabs=0, epsrel=1e-8)[0]
        for a, b in itertools.pairwise(cuts)
    )
    return math.sqrt(total)


def growth(z):
    """D(z)/D(0) from the growth ODE in a, with astropy's E(a) (radiation included)."""

    def e(a):
        return Planck18.efunc(1.0 / a - 1.0)

    def rhs(a, y):
        d, dp = y
        dlne_da = (math.log(e(a * 1.0001)) - math.log(e(a / 1.0001))) / (a * 2.0 * math.log(1.0001))
        return [dp, -(3.0 / a + dlne_da) * dp + 1.5 * Planck18.Om0 * d / (a**5 * e(a) ** 2)]

    # Start in the matter era's growing mode D = a; the error of that start (a
    # decaying mode) has fallen below 1e-5 relative by a ~ 0.25.
    a0 = 1e-3
    sol = solve_ivp(rhs, (a0, 1.0), [a0, 1.0], rtol=1e-10, atol=1e-13, dense_output=True)
    return float(sol.sol(1.0 / (1.0 + z))[0] / sol.sol(1.0)[0])


def sigma_m(m_msun, z, lnp):
    """sigma(M, z) normalised to SIGMA8 at z = 0, for a spectrum shape exp(lnp)."""
    norm = SIGMA8 / sigma_today(8.0 / H, lnp)
    radius = (3.0 * np.asarray(m_msun, dtype=float) / (4.0 * math.pi * RHO_M0)) ** (1.0 / 3.0)
    return norm * growth(z) * np.array([sigma_today(r, lnp) for r in np.atleast_1d(radius)])


def dn_dlnm(m_msun, z, lnp, eps=1e-3):
    """Tinker et al. (2008) eq. 2 for M200c, with central differences for the slope."""
    m = np.atleast_1d(np.asarray(m_msun, dtype=float))
    s = sigma_m(m, z, lnp)
    s_hi, s_lo = sigma_m(m * math.exp(eps), z, lnp), sigma_m(m * math.exp(-eps), z, lnp)
    slope = (np.log(s_hi) - np.log(s_lo)) / (2.0 * eps)
    delta_m = 200.0 / float(Planck18.Om(z))
    return tinker08_f(s, z, delta_m) * RHO_M0 / m * np.abs(slope)
