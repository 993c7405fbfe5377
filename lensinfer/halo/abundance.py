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
    Tinker et al. (2008), ApJ 688, 709, eq. 3 with the parameters of their
    Table 2 interpolated in the overdensity relative to the *mean* density
    (:math:`\Delta_m = 200\,\rho_c/\bar\rho_m = 200 / \Omega_m(z)` for
    :math:`M_{200c}`), and the redshift evolution of their eqs. 5–8;
    spherical-overdensity masses, calibrated for :math:`10^{11}`–:math:`10^{15}\,
    h^{-1}` Msun at :math:`0 \le z \le 2.5`.

The linear matter power spectrum behind :math:`\sigma(M)` is the Eisenstein &
Hu (1998, ApJ 496, 605) transfer function with baryon acoustic features,
normalised to the cosmology's :math:`\sigma_8`, and grown with the linear
growth factor of the cosmology (integrated exactly, not approximated).  Both
come from the colossus library (Diemer 2018, ApJS 239, 35; MIT licence; pure
Python with numpy and scipy, no data files, no network).  Massive neutrinos
are not modelled by it: for the default Planck18 (one 0.06 eV neutrino) they
change :math:`\sigma_8`-normalised abundances by well under the 5% level that
matters for the shape of a prior (common practice; not measured here).

The cosmology is an astropy cosmology; :math:`\sigma_8` and :math:`n_s` come
from its ``meta`` (astropy's Planck and WMAP realisations carry them) unless
given.
"""

from __future__ import annotations

import functools
import threading

import numpy as np

__all__ = ["MASS_FUNCTIONS", "halo_mass_function", "log_mass_function_table"]

#: Names of the halo mass functions :func:`halo_mass_function` knows.
MASS_FUNCTIONS = ("tinker08",)

# colossus keeps "the current cosmology" as global state; every use here sets
# it under this lock, so two threads cannot interleave cosmologies.
_LOCK = threading.Lock()


def _cosmology_parameters(cosmology, sigma8, ns) -> tuple:
    """(H0, Om0, Ob0, Tcmb0, Neff, sigma8, ns, flat) of an astropy cosmology."""
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
            f"the halo mass function needs the CMB temperature for its power spectrum "
            f"(Eisenstein & Hu 1998); cosmology {name!r} has Tcmb0={tcmb0!r} K: give it "
            "Tcmb0=2.7255 (or use a realisation such as Planck18)"
        )
    flat = bool(abs(cosmology.Ok0) < 1e-12)
    return (
        float(cosmology.H0.value),
        float(cosmology.Om0),
        float(ob0),
        float(cosmology.Tcmb0.value),
        float(cosmology.Neff),
        float(sigma8),
        float(ns),
        flat,
        float(cosmology.Ode0),
    )


@functools.cache
def _colossus_cosmology(params: tuple):
    from colossus.cosmology import cosmology as cc

    h0, om0, ob0, tcmb0, neff, sigma8, ns, flat, ode0 = params
    p = dict(
        flat=flat,
        H0=h0,
        Om0=om0,
        Ob0=ob0,
        Tcmb0=tcmb0,
        Neff=neff,
        sigma8=sigma8,
        ns=ns,
        power_law=False,
    )
    if not flat:
        p["Ode0"] = ode0
    # persistence="": nothing is read from or written to colossus's disk cache.
    return cc.Cosmology(name="lensinfer", persistence="", print_warnings=False, **p)


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

        \frac{dn}{d\ln M} = f(\sigma)\,\frac{\bar\rho_m}{M}\,
            \left|\frac{d\ln\sigma^{-1}}{d\ln M}\right|

    (Tinker et al. 2008, eq. 2), with :math:`f(\sigma)` their eq. 3.

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
        :math:`n_s` or :math:`\Omega_b`.
    """
    if model not in MASS_FUNCTIONS:
        raise ValueError(
            f"unknown halo mass function {model!r}; accepted: {', '.join(MASS_FUNCTIONS)}"
        )
    from colossus.cosmology import cosmology as cc
    from colossus.lss import mass_function

    params = _cosmology_parameters(cosmology, sigma8, ns)
    h = params[0] / 100.0
    m = np.asarray(m200c, dtype=float)
    with _LOCK:
        cc.setCurrent(_colossus_cosmology(params))
        # colossus works in Msun/h and (Mpc/h)^-3; per ln M there is no Jacobian.
        dn = mass_function.massFunction(m * h, float(z), mdef="200c", model=model, q_out="dndlnM")
    return np.asarray(dn, dtype=float) * h**3


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
        at most a few tens per dex\ :sup:`2` below :math:`10^{15.5}` Msun:
        error :math:`h^2 |y''| / 8`).
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
