r"""Luminosity-weighted velocity dispersions in a circular aperture or a slit, with seeing."""

import jax
import jax.numpy as jnp
import numpy as np

from lensinfer.dynamics import _grid
from lensinfer.dynamics._rules import mapped_rule, unit_rule
from lensinfer.dynamics._weights import FWHM_PER_SIGMA, circle_weight, slit_weight
from lensinfer.dynamics.anisotropy import Isotropic
from lensinfer.profiles._units import KPC, to_internal
from lensinfer.profiles.base import as_float

__all__ = ["aperture_dispersion", "slit_dispersion"]

_ISOTROPIC = Isotropic()

#: How far (in seeing dispersions s) the blurred light of the aperture is
#: followed beyond its edge: w(A + 6 s) < 1e-8.
N_SIGMA_OUT = 6.0
#: Gauss–Legendre nodes of the projected-radius quadrature: a panel uniform in
#: ln R from the grid's inner cap (R_lo = e^-8.5 R_top) to the start of the
#: edge region max(A - 6 s, A / 2), a linear panel up to the edge, and a panel
#: uniform in ln R across the blurred edge up to R_top = A + 6 s (uniform in
#: ln R so that it also follows the light's fall-off when s >> A); the slit
#: adds two panels between its edges, with nodes clustered at their inner
#: ends (R = lo + (hi - lo) z^2), where the weight has a square-root kink
#: without seeing.  Against the scipy reference (Sérsic n = 1-8, apertures
#: 0.05-3 R_eff, FWHM 0-3 R_eff) these counts give a median error of 2e-6 and
#: a maximum of 9e-5; 12 + 8 + 10 gives 1.2e-4, 24 + 16 + 24 no gain.
N_LOG = 14
N_MID = 8
N_EDGE = 10
N_SLIT = 8
_LOG_RULE = unit_rule(N_LOG)
_MID_RULE = unit_rule(N_MID)
_EDGE_RULE = unit_rule(N_EDGE)
_SLIT_RULE = unit_rule(N_SLIT)


def _log_panel(lo, hi, rule):
    """Nodes R and weights of dR on [lo, hi], uniform in ln R."""
    u, w = mapped_rule(jnp.log(lo), jnp.log(hi), rule)
    R = jnp.exp(u)
    return R, w * R


def _clustered_panel(lo, hi):
    """Nodes and weights on [lo, hi] with R = lo + (hi - lo) z^2."""
    z, w = _SLIT_RULE
    return lo + (hi - lo) * z**2, 2.0 * (hi - lo) * z * w


def _seeing_sigma(seeing_fwhm):
    return as_float(to_internal(seeing_fwhm, KPC)) / FWHM_PER_SIGMA


def _geometry(log_r_top, panels, weight_fn):
    """Everything that depends on the aperture only: nodes, weights, interpolation rows.

    Returns (log_r_top, R dR w(R) at the nodes, interpolation rows, w at the
    inner cap).
    """
    R = jnp.concatenate([p[0] for p in panels])
    dR = jnp.concatenate([p[1] for p in panels])
    log_r0 = log_r_top - _grid.N_BELOW * _grid.H
    rows = _grid.lagrange_rows_jax((jnp.log(R) - log_r0) / _grid.H, _grid.N_R)
    r_lo = jnp.exp(log_r0 + 2.0 * _grid.H)
    return log_r_top, R * dR * weight_fn(R), rows, weight_fn(0.5 * r_lo[None])[0]


def _weighted_dispersion(mass, tracer, anisotropy, geometry):
    r"""sqrt of sum(Sigma sigma^2 w R dR) / sum(Sigma w R dR) over the panels and the inner cap.

    The moments come from the grid of :mod:`lensinfer.dynamics._grid`,
    interpolated in ln R (6-point Lagrange of their logarithms).  Inside the
    grid's inner point R_lo = e^-8.5 R_top the light is the tracer's own
    projected mass (exact) and sigma^2 is continued as a power law: with
    :math:`\Sigma \propto R^{\gamma_\Sigma}` and
    :math:`\Sigma\sigma^2 \propto R^{\gamma_m}` through the grid's first
    two points, the cap's mean :math:`\sigma^2` is
    :math:`\sigma^2(R_{lo})(2 + \gamma_\Sigma)/(2 + \gamma_m)`.
    """
    log_r_top, kernel, rows, w_cap = geometry
    log_R, moment, surface = _grid.los_moments(mass, tracer, anisotropy, log_r_top)
    log_m = jnp.log(moment)
    log_s = jnp.log(surface)
    # Two matrix-vector products (XLA on CPU runs one (n, 34) x (34, 2)
    # product several times slower than two (n, 34) x (34,) ones).
    num = kernel @ jnp.exp(rows @ log_m)
    den = kernel @ jnp.exp(rows @ log_s)
    # Inner cap [0, R_lo], R_lo = grid point 2.
    r_lo = jnp.exp(log_R[2])
    gamma_s = jnp.clip((log_s[3] - log_s[2]) / _grid.H, -1.5, 1.0)
    gamma_m = jnp.clip((log_m[3] - log_m[2]) / _grid.H, -1.9, 4.0)
    light = tracer.projected_mass(r_lo) / (2.0 * jnp.pi) * w_cap
    sigma2 = jnp.exp(log_m[2] - log_s[2]) * (2.0 + gamma_s) / (2.0 + gamma_m)
    sums = jnp.stack([num + light * sigma2, den + light])
    return jnp.sqrt(sums[0] / sums[1])


def _circle_geometry(radius, s):
    r_top = radius + N_SIGMA_OUT * s
    r_lo = r_top * np.exp(-(_grid.N_BELOW - 2) * _grid.H)
    b1 = jnp.maximum(jnp.maximum(radius - N_SIGMA_OUT * s, 0.5 * radius), r_lo)
    b2 = jnp.maximum(radius, r_lo)
    panels = [
        _log_panel(r_lo, b1, _LOG_RULE),
        mapped_rule(b1, b2, _MID_RULE),
        _log_panel(b2, r_top, _EDGE_RULE),
    ]
    n_inner = _LOG_RULE[0].size + _MID_RULE[0].size

    def weight_fn(R):
        if R.shape[0] == 1:
            return circle_weight(R, radius, s, inside=True)
        return jnp.concatenate(
            [
                circle_weight(R[:n_inner], radius, s, inside=True),
                circle_weight(R[n_inner:], radius, s, inside=False),
            ]
        )

    return _geometry(jnp.log(r_top), panels, weight_fn)


def _slit_geometry(hw, hl, s):
    a = jnp.minimum(hw, hl)
    b = jnp.maximum(hw, hl)
    c = jnp.sqrt(a**2 + b**2)
    r_top = c + N_SIGMA_OUT * s
    r_lo = r_top * np.exp(-(_grid.N_BELOW - 2) * _grid.H)
    b1 = jnp.maximum(jnp.maximum(a - N_SIGMA_OUT * s, 0.5 * a), r_lo)
    b2 = jnp.maximum(a, r_lo)
    b3 = jnp.maximum(b, r_lo)
    b4 = jnp.maximum(c, r_lo)
    panels = [
        _log_panel(r_lo, b1, _LOG_RULE),
        mapped_rule(b1, b2, _MID_RULE),
        _clustered_panel(b2, b3),
        _clustered_panel(b3, b4),
        _log_panel(b4, r_top, _EDGE_RULE),
    ]

    def weight_fn(R):
        return slit_weight(R, hw, hl, s)

    return _geometry(jnp.log(r_top), panels, weight_fn)


# Compiled once per process: evaluating the geometry op by op at trace time
# would compile each primitive separately (seconds on first use).
_circle_geometry_jit = jax.jit(_circle_geometry)
_slit_geometry_jit = jax.jit(_slit_geometry)


def aperture_dispersion(mass, tracer, aperture_radius, seeing_fwhm, anisotropy=_ISOTROPIC):
    r"""Luminosity-weighted velocity dispersion (km/s) in a circular aperture, with seeing.

    .. math::

        \sigma_{\rm ap}^2 = \frac{\int_0^\infty \Sigma(R)\,\sigma_{\rm los}^2(R)\,
            w(R)\,2\pi R\,dR}{\int_0^\infty \Sigma(R)\,w(R)\,2\pi R\,dR},\qquad
        w(R) = 1 - Q_1\!\left(\frac{R}{s}, \frac{A}{s}\right)

    :math:`w(R)` is the fraction of the light from a point at projected
    radius R that falls inside the aperture of radius A after convolution
    with a circular Gaussian of dispersion :math:`s = {\rm FWHM}/\sqrt{8\ln2}`
    (:math:`Q_1` is Marcum's Q function, Marcum 1950; see
    :mod:`lensinfer.dynamics._weights`): the luminosity-weighted second
    moment of the line-of-sight velocities of the light that the seeing
    puts into the aperture.

    :math:`\Sigma\sigma_{\rm los}^2` comes from the gridded Jeans solution and
    projection of :mod:`lensinfer.dynamics._grid` (61 evaluations of each
    profile, the same integral as :func:`los_dispersion` done in the
    original order), interpolated to 32 Gauss–Legendre nodes in R: 14
    uniform in ln R from :math:`e^{-8.5}R_{\rm top}` to
    :math:`\max(A - 6s, A/2)`, 8 from there to A and 10 uniform in ln R
    across the blurred edge up to :math:`R_{\rm top} = A + 6s`, where
    :math:`w < 10^{-8}`; the light inside :math:`e^{-8.5}R_{\rm top}` is
    the tracer's projected mass there.  The seeing weights depend on the
    aperture only and are evaluated once, at trace time, when the aperture
    and seeing are concrete numbers.  Against an independent scipy
    computation the relative error is ~2e-6 typically and below 1e-4 for
    Sérsic tracers with 1 <= n <= 8 (tests); the method assumes
    :math:`A \ge 0.01\,s`.

    Parameters
    ----------
    mass : SphericalProfile
        Total mass (stars, dark halo — e.g. a contracted one — black hole, ...).
    tracer : SphericalProfile
        The light profile (``density`` and ``surface_density``; the
        normalisation cancels).
    aperture_radius : float or Quantity
        Aperture radius A, kpc.
    seeing_fwhm : float or Quantity
        FWHM of the Gaussian seeing, kpc; 0 means no seeing.
    anisotropy : Isotropic, ConstantAnisotropy or OsipkovMerritt
        Defaults to isotropic orbits.

    Returns
    -------
    jax.Array
        :math:`\sigma_{\rm ap}` in km/s (a scalar; ``vmap`` for batches).

    Examples
    --------
    >>> from lensinfer.dynamics import aperture_dispersion
    >>> from lensinfer.profiles import Hernquist
    >>> h = Hernquist(1e11, 3.0)
    >>> 50 < float(aperture_dispersion(h, h, 2.0, 1.0)) < 200
    True
    """
    # The geometry is evaluated at trace time when the aperture and seeing are
    # concrete numbers (the usual case: they are data), so a jitted model does
    # not recompute the seeing weights at every call; traced values (e.g. a
    # gradient with respect to the aperture) are traced as usual.
    with jax.ensure_compile_time_eval():
        radius = as_float(to_internal(aperture_radius, KPC))
        geometry = _circle_geometry_jit(radius, _seeing_sigma(seeing_fwhm))
    return _weighted_dispersion(mass, tracer, anisotropy, geometry)


def slit_dispersion(mass, tracer, half_width, half_length, seeing_fwhm, anisotropy=_ISOTROPIC):
    r"""Luminosity-weighted velocity dispersion (km/s) in a centred rectangular slit, with seeing.

    As :func:`aperture_dispersion`, with the weight of a slit of half-width a
    and half-length b (centred on the galaxy; the orientation does not matter
    for a spherical galaxy),

    .. math::

        w(R) = \frac{2}{\pi}\int_0^{\pi/2} P_a(R\cos\phi)\,P_b(R\sin\phi)\,d\phi,
        \qquad P_a(x) = \tfrac12\left[{\rm erf}\frac{a - x}{\sqrt2 s}
                       + {\rm erf}\frac{a + x}{\sqrt2 s}\right],

    the azimuthal average of the product of the two erf differences of a
    separable Gaussian blur (see :mod:`lensinfer.dynamics._weights`).  The
    R quadrature has panels split at min(a, b), max(a, b) and
    :math:`\sqrt{a^2 + b^2}` (48 nodes).

    Parameters
    ----------
    mass, tracer : SphericalProfile
        As in :func:`aperture_dispersion`.
    half_width, half_length : float or Quantity
        Half-width and half-length of the slit, kpc.
    seeing_fwhm : float or Quantity
        FWHM of the Gaussian seeing, kpc; 0 means no seeing.
    anisotropy : Isotropic, ConstantAnisotropy or OsipkovMerritt
        Defaults to isotropic orbits.

    Returns
    -------
    jax.Array
        The slit dispersion in km/s.
    """
    with jax.ensure_compile_time_eval():
        hw = as_float(to_internal(half_width, KPC))
        hl = as_float(to_internal(half_length, KPC))
        geometry = _slit_geometry_jit(hw, hl, _seeing_sigma(seeing_fwhm))
    return _weighted_dispersion(mass, tracer, anisotropy, geometry)
