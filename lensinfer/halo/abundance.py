r"""The abundance of haloes: the halo mass function :math:`dn/d\ln M_{200c}`.

A prior on a lens's halo mass that is uniform in :math:`\log_{10} M_{200c}`
ignores how rare massive haloes are.  Given the stellar mass, the halo-mass
posterior of a galaxy is

.. math::

    p(\log M_h \mid M_*) \propto \frac{dn}{d\log M_h}(z)\;
        p(M_* \mid M_h),

with :math:`dn/d\log M_h` the comoving number density of haloes per unit
log-mass at the lens redshift.  This module tabulates it once per lens (the lens
redshift is fixed), at build time, in numpy; the model layer turns the table
into a smooth prior (:class:`lensinfer.model.priors.TabulatedLogDensity`).

Mass function (static names):

``"tinker08"``
    Tinker et al. (2008), ApJ 688, 709, eqs. 2–3 with the parameters of their
    Table 2, interpolated (cubic spline in :math:`\log_{10}\Delta_m`) to the
    overdensity relative to the *mean* density,
    :math:`\Delta_m = 200\,\rho_c(z)/\bar\rho_m(z) = 200 / \Omega_m(z)` for
    :math:`M_{200c}`, and the redshift evolution of their eqs. 5–8;
    spherical-overdensity masses, calibrated for :math:`10^{11}`–:math:`10^{15}\,
    h^{-1}` Msun at :math:`0 \le z \le 2.5`.

Ingredients:

- the linear matter power spectrum today from the CAMB Boltzmann code (Lewis,
  Challinor & Lasenby 2000; the ``camb`` package on PyPI, compiled, no data
  files, no network), total matter including massive neutrinos, rescaled to
  the cosmology's :math:`\sigma_8`; computed once per cosmology (about 2 s);
- the linear growth factor :math:`D(z)/D(0)` from the growth equation in
  :math:`\ln a` with astropy's expansion rate (:func:`_growth`);
- :math:`\sigma(M)` of the top-hat of comoving radius
  :math:`R = (3M / 4\pi\bar\rho_{m,0})^{1/3}` and its logarithmic slope,
  both by quadrature of :math:`P(k)` on a uniform grid in :math:`\ln k`.

The cosmology is an astropy cosmology; :math:`\sigma_8` and :math:`n_s` come
from its ``meta`` (astropy's Planck and WMAP realisations carry them) unless
given.
"""

from __future__ import annotations

import functools
import math
import threading

import numpy as np

__all__ = ["MASS_FUNCTIONS", "halo_mass_function", "log_mass_function_table"]

#: Names of the halo mass functions :func:`halo_mass_function` knows.
MASS_FUNCTIONS = ("tinker08",)

# Tinker et al. (2008), Table 2 (from memory): Delta relative to the mean density
# and the parameters (A0, a0, b0, c0) of eq. 3 at z = 0.
_TINKER08_DELTA = np.array([200.0, 300.0, 400.0, 600.0, 800.0, 1200.0, 1600.0, 2400.0, 3200.0])
_TINKER08_PARAMS = np.array(
    [
        [0.186, 0.200, 0.212, 0.218, 0.248, 0.255, 0.260, 0.260, 0.260],  # A0
        [1.47, 1.52, 1.56, 1.61, 1.87, 2.13, 2.30, 2.53, 2.66],  # a0
        [2.57, 2.25, 2.05, 1.87, 1.59, 1.51, 1.46, 1.44, 1.41],  # b0
        [1.19, 1.27, 1.34, 1.45, 1.58, 1.80, 1.97, 2.24, 2.44],  # c0
    ]
)

# The Boltzmann code is run under a lock: its Fortran state is global.
_LOCK = threading.Lock()

# Uniform ln k grid (1/Mpc) for the sigma(R) quadrature.  The code's spectrum
# spans 1e-4 to 30 /Mpc; outside it P is extended as k^n_s below and as a power
# law of the last decade's slope above, where the top-hat window (~(kR)^-4)
# leaves < 1e-6 of sigma^2 for R > 0.3 Mpc (M > 1e10 Msun).
_LNK = np.linspace(math.log(1.0e-5), math.log(1.0e3), 6001)
_K_MAX_CODE = 30.0


def _cosmology_parameters(cosmology, sigma8, ns) -> tuple:
    """Hashable (H0, Om0, Ob0, Ok0, Tcmb0, Neff, m_nu sum, n massive, sigma8, ns)."""
    meta = getattr(cosmology, "meta", {}) or {}
    sigma8 = meta.get("sigma8") if sigma8 is None else sigma8
    ns = meta.get("n") if ns is None else ns
    name = getattr(cosmology, "name", None) or type(cosmology).__name__
    if sigma8 is None or ns is None:
        raise ValueError(
            f"the halo mass function needs sigma8 and n_s; cosmology {name!r} carries "
            f"sigma8={meta.get('sigma8')!r}, n={meta.get('n')!r} in its meta: pass "
            "sigma8= and ns=, or use a realisation that has them (e.g. Planck18)"
        )
    ob0 = cosmology.Ob0
    if ob0 is None or not ob0 > 0:
        raise ValueError(
            f"the halo mass function needs a baryon density; cosmology {name!r} has Ob0={ob0!r}"
        )
    tcmb0 = float(cosmology.Tcmb0.value)
    if not tcmb0 > 0:
        raise ValueError(
            f"the halo mass function needs the CMB temperature for its power spectrum; "
            f"cosmology {name!r} has Tcmb0={tcmb0!r} K: give it Tcmb0=2.7255 (or use a "
            "realisation such as Planck18)"
        )
    m_nu = np.atleast_1d(cosmology.m_nu.value) if cosmology.has_massive_nu else np.zeros(1)
    return (
        float(cosmology.H0.value),
        float(cosmology.Om0),
        float(ob0),
        float(cosmology.Ok0),
        tcmb0,
        float(cosmology.Neff),
        float(np.sum(m_nu)),
        int(np.count_nonzero(m_nu)),
        float(sigma8),
        float(ns),
    )


@functools.cache
def _linear_power_today(params: tuple) -> np.ndarray:
    r"""ln P(k) at z = 0 (Mpc^3) on :data:`_LNK`, normalised to sigma8.

    Om0 is astropy's (cold dark matter plus baryons, massive neutrinos
    excluded), so the code's cold dark matter density is (Om0 - Ob0) h^2 and
    the neutrinos come from their masses.
    """
    import camb

    h0, om0, ob0, ok0, tcmb0, neff, m_nu, n_massive, sigma8, ns = params
    h = h0 / 100.0
    pars = camb.CAMBparams(WantCls=False, WantTransfer=True)
    pars.set_cosmology(
        H0=h0,
        ombh2=ob0 * h**2,
        omch2=(om0 - ob0) * h**2,
        omk=ok0,
        mnu=m_nu,
        num_massive_neutrinos=max(n_massive, 1) if m_nu > 0 else 0,
        nnu=neff,
        TCMB=tcmb0,
    )
    pars.InitPower.set_params(As=2.0e-9, ns=ns)
    pars.set_matter_power(redshifts=[0.0], kmax=_K_MAX_CODE)
    with _LOCK:
        results = camb.get_results(pars)
        k, _, pk = results.get_linear_matter_power_spectrum(
            var1="delta_tot", var2="delta_tot", hubble_units=False, k_hunit=False
        )
    lnk, lnp = np.log(k), np.log(pk[0])
    grid = np.interp(_LNK, lnk, lnp)
    low = _LNK < lnk[0]
    grid[low] = lnp[0] + ns * (_LNK[low] - lnk[0])
    top = lnk > lnk[-1] - math.log(10.0)
    slope = np.polyfit(lnk[top], lnp[top], 1)[0]
    high = _LNK > lnk[-1]
    grid[high] = lnp[-1] + slope * (_LNK[high] - lnk[-1])
    # Normalise to sigma8 (top-hat of 8 h^-1 Mpc today): P scales as As.
    s8 = math.sqrt(_sigma2(np.array([8.0 / h]), grid)[0])
    return grid + 2.0 * math.log(sigma8 / s8)


def _top_hat(x):
    """W(x) = 3 (sin x - x cos x) / x^3 and x dW/dx, with the small-x series."""
    x = np.asarray(x, dtype=float)
    small = x < 1e-3
    xs = np.where(small, 1.0, x)
    w = np.where(small, 1.0 - x**2 / 10.0, 3.0 * (np.sin(xs) - xs * np.cos(xs)) / xs**3)
    xdw = np.where(
        small, -(x**2) / 5.0, 3.0 * ((xs**2 - 3.0) * np.sin(xs) + 3.0 * xs * np.cos(xs)) / xs**3
    )
    return w, xdw


def _sigma2(radius, lnp, slope=False):
    r""":math:`\sigma^2(R) = \frac{1}{2\pi^2}\int k^3 P(k) W^2(kR)\,d\ln k`.

    With ``slope=True`` also :math:`d\ln\sigma^2/d\ln R
    = \frac{2}{2\pi^2\sigma^2}\int k^3 P\, W\, (x\,dW/dx)\,d\ln k`.
    Trapezoid rule on the uniform ln k grid (step 0.0037: the integrand is
    smooth on that scale; the tests compare with adaptive quadrature).
    """
    from scipy.integrate import trapezoid

    k3p = np.exp(3.0 * _LNK + lnp) / (2.0 * math.pi**2)
    w, xdw = _top_hat(np.exp(_LNK)[None, :] * np.asarray(radius)[:, None])
    s2 = trapezoid(k3p * w**2, _LNK, axis=1)
    if not slope:
        return s2
    return s2, 2.0 * trapezoid(k3p * w * xdw, _LNK, axis=1) / s2


def _growth(z, cosmology) -> float:
    r"""Linear growth factor D(z) / D(0) of the matter, from the growth equation.

    .. math::

        \frac{d^2 D}{d\ln a^2} + \left(2 + \frac{d\ln E}{d\ln a}\right)
            \frac{dD}{d\ln a} = \frac32\,\Omega_m(a)\,D,
        \qquad \Omega_m(a) = \frac{\Omega_{m,0}\,a^{-3}}{E(a)^2}

    (Peebles 1980, sec. 10; common practice), with astropy's :math:`E(a)`
    (radiation and massive neutrinos included in the expansion, only
    :math:`\Omega_{m,0}` sourcing growth), integrated from :math:`a = 10^{-3}`
    with the matter-era growing mode :math:`D = a`: the decaying-mode error of
    that start has fallen below 1e-5 by :math:`a = 0.25` (it decays as
    :math:`a^{-5/2}` relative to the growing mode).
    """
    from scipy.integrate import solve_ivp

    def ln_e(lna):
        return math.log(cosmology.efunc(math.exp(-lna) - 1.0))

    def rhs(lna, y):
        d, dd = y
        step = 1e-4
        dlne = (ln_e(lna + step) - ln_e(lna - step)) / (2.0 * step)
        om_a = cosmology.Om0 * math.exp(-3.0 * lna - 2.0 * ln_e(lna))
        return [dd, -(2.0 + dlne) * dd + 1.5 * om_a * d]

    lna0 = math.log(1.0e-3)
    lna_z = -math.log1p(z)
    sol = solve_ivp(rhs, (lna0, 0.0), [1.0e-3, 1.0e-3], rtol=1e-10, atol=1e-14, dense_output=True)
    return float(sol.sol(lna_z)[0] / sol.sol(0.0)[0])


def _tinker08_multiplicity(sigma, z, delta_m):
    r"""Tinker et al. (2008) eq. 3 with eqs. 5–8: f(sigma) at mean overdensity Delta_m.

    .. math::

        f = A\left[\left(\frac{\sigma}{b}\right)^{-a} + 1\right] e^{-c/\sigma^2},
        \quad A = A_0 (1+z)^{-0.14},\ a = a_0 (1+z)^{-0.06},\
        b = b_0 (1+z)^{-\alpha},

    :math:`\log_{10}\alpha = -[0.75/\log_{10}(\Delta/75)]^{1.2}`; Table 2
    parameters interpolated by a cubic spline in :math:`\log_{10}\Delta`.
    """
    from scipy.interpolate import CubicSpline

    if not _TINKER08_DELTA[0] <= delta_m <= _TINKER08_DELTA[-1]:
        raise ValueError(
            f"mean overdensity {delta_m:.1f} lies outside Tinker et al. (2008) Table 2 (200-3200)"
        )
    a0_amp, a0, b0, c0 = CubicSpline(np.log10(_TINKER08_DELTA), _TINKER08_PARAMS, axis=1)(
        math.log10(delta_m)
    )
    alpha = 10.0 ** (-((0.75 / math.log10(delta_m / 75.0)) ** 1.2))
    amp = a0_amp * (1.0 + z) ** -0.14
    a = a0 * (1.0 + z) ** -0.06
    b = b0 * (1.0 + z) ** -alpha
    return amp * ((sigma / b) ** -a + 1.0) * np.exp(-c0 / sigma**2)


def halo_mass_function(
    m200c,
    z: float,
    cosmology,
    *,
    model: str = "tinker08",
    sigma8: float | None = None,
    ns: float | None = None,
) -> np.ndarray:
    r"""Comoving number density of haloes per unit :math:`\ln M_{200c}`.

    .. math::

        \frac{dn}{d\ln M} = f(\sigma)\,\frac{\bar\rho_{m,0}}{M}\,
            \left|\frac{d\ln\sigma}{d\ln M}\right|

    (Tinker et al. 2008, eq. 2), with :math:`f(\sigma)` their eq. 3 and
    :math:`\sigma(M, z) = D(z)\,\sigma(M, 0)`.

    Parameters
    ----------
    m200c : array_like
        Halo masses :math:`M_{200c}`, Msun (no :math:`h`).
    z : float
        Redshift.
    cosmology : astropy.cosmology.FLRW
        The cosmology (``meta`` must carry ``sigma8`` and ``n`` unless given).
    model : str
        One of :data:`MASS_FUNCTIONS`.
    sigma8, ns : float, optional
        Override the cosmology's :math:`\sigma_8` and :math:`n_s`.

    Returns
    -------
    numpy.ndarray
        :math:`dn/d\ln M_{200c}` in comoving Mpc\ :sup:`-3` (no :math:`h`).

    Raises
    ------
    ValueError
        For an unknown model, or a cosmology without :math:`\sigma_8`,
        :math:`n_s`, :math:`\Omega_b` or a CMB temperature.
    """
    if model not in MASS_FUNCTIONS:
        raise ValueError(
            f"unknown halo mass function {model!r}; accepted: {', '.join(MASS_FUNCTIONS)}"
        )
    from astropy import units as u

    lnp = _linear_power_today(_cosmology_parameters(cosmology, sigma8, ns))
    m = np.atleast_1d(np.asarray(m200c, dtype=float))
    rho_m0 = float((cosmology.Om0 * cosmology.critical_density0).to_value(u.Msun / u.Mpc**3))
    radius = (3.0 * m / (4.0 * math.pi * rho_m0)) ** (1.0 / 3.0)
    s2, dlns2_dlnr = _sigma2(radius, lnp, slope=True)
    sigma = _growth(z, cosmology) * np.sqrt(s2)
    dlnsigma_dlnm = dlns2_dlnr / 6.0  # ln sigma = ln(sigma^2)/2, ln R = ln M / 3
    delta_m = 200.0 / float(cosmology.Om(z))
    f = _tinker08_multiplicity(sigma, z, delta_m)
    return (f * rho_m0 / m * np.abs(dlnsigma_dlnm)).reshape(np.shape(m200c))


def log_mass_function_table(
    z: float,
    log10_low: float,
    log10_high: float,
    cosmology,
    *,
    model: str = "tinker08",
    step_dex: float = 0.01,
    sigma8: float | None = None,
    ns: float | None = None,
) -> tuple[np.ndarray, np.ndarray]:
    r"""The mass function tabulated for a prior on :math:`\log_{10} M_{200c}`.

    Parameters
    ----------
    z : float
        Lens redshift.
    log10_low, log10_high : float
        Range of :math:`\log_{10}(M_{200c}/{\rm Msun})`.
    cosmology : astropy.cosmology.FLRW
    model : str
    step_dex : float
        Grid step; 0.01 dex keeps the piecewise-linear interpolation of
        :math:`\ln dn/d\log M` within 1e-4 of the function (its curvature is
        at most ~10 per dex\ :sup:`2` below :math:`10^{15}` Msun at
        :math:`z \approx 0.4`: error :math:`h^2 |y''| / 8`).
    sigma8, ns : float, optional

    Returns
    -------
    log10_m : numpy.ndarray
        Uniform grid from ``log10_low`` to ``log10_high`` (both included).
    log_density : numpy.ndarray
        :math:`\ln(dn/d\log_{10} M)` on the grid, up to a constant (the
        :math:`\ln\ln 10` Jacobian and the normalisation are left to the
        prior).
    """
    if not log10_high > log10_low:
        raise ValueError(f"log10_high = {log10_high} must exceed log10_low = {log10_low}")
    n = max(int(np.ceil((log10_high - log10_low) / step_dex)) + 1, 3)
    grid = np.linspace(log10_low, log10_high, n)
    dn = halo_mass_function(10.0**grid, z, cosmology, model=model, sigma8=sigma8, ns=ns)
    if not np.all(np.isfinite(dn) & (dn > 0)):
        bad = grid[~(np.isfinite(dn) & (dn > 0))]
        raise ValueError(
            f"the halo mass function {model!r} is not positive and finite at z = {z} for "
            f"log10 M200c = {bad[:3].tolist()}: narrow the halo-mass range"
        )
    return grid, np.log(dn)
