r"""Line-of-sight velocity dispersion by the single-integral kernels of Mamon & Łokas (2005)."""

import jax.numpy as jnp
import numpy as np

from lensinfer._constants import G_KPC_KMS2_PER_MSUN as G
from lensinfer.dynamics._rules import unit_rule
from lensinfer.dynamics.anisotropy import Isotropic
from lensinfer.dynamics.jeans import TINY, _tail
from lensinfer.profiles._units import KPC, to_internal
from lensinfer.profiles.base import as_float

__all__ = ["los_dispersion"]

_ISOTROPIC = Isotropic()

#: Gauss–Legendre nodes in t (r = R cosh t), mapped as t = T q^2.
N_LOS = 40
_LOS_RULE = unit_rule(N_LOS)
#: Outer limit of the line-of-sight integral as a multiple of R.
LOS_OUTER = 1.0e5
_T_MAX = float(np.arccosh(LOS_OUTER))


def los_moment(mass, tracer, R, anisotropy=_ISOTROPIC):
    r""":math:`\Sigma(R)\,\sigma_{\rm los}^2(R)` (tracer surface-density units times (km/s)^2).

    See :func:`los_dispersion` for the formula and the quadrature.
    """
    R = as_float(R)
    q, w = _LOS_RULE
    Rb = R[..., None]

    def log_integrand(t):
        # t (trailing node axis) with r = R cosh t; integrand K nu M tanh t in dt.
        r = Rb * jnp.cosh(t)
        k = anisotropy.los_kernel(t, Rb)
        return jnp.log(
            jnp.maximum(k * tracer.density(r) * mass.enclosed_mass(r) * jnp.tanh(t), TINY)
        )

    t = jnp.broadcast_to(_T_MAX * q**2, (*R.shape, *q.shape))
    body = jnp.sum(2.0 * _T_MAX * q * w * jnp.exp(log_integrand(t)), axis=-1)
    tail = _tail(log_integrand, jnp.full((*R.shape, 1), _T_MAX))[..., 0]
    return 2.0 * G * (body + tail)


def los_dispersion(mass, tracer, R, anisotropy=_ISOTROPIC):
    r"""Line-of-sight velocity dispersion (km/s) at projected radius R.

    .. math::

        \Sigma(R)\,\sigma_{\rm los}^2(R) = 2G\int_R^\infty
            K\!\left(\frac{r}{R}, \frac{r_a}{R}\right)\nu(r)\,M(r)\,\frac{dr}{r}

    (Mamon & Łokas 2005, MNRAS 363, 705, eq. A16), the projection
    :math:`\Sigma\sigma_{\rm los}^2 = 2\int_R^\infty (1 - \beta R^2/r^2)\,
    \nu\sigma_r^2\, r\,dr/\sqrt{r^2 - R^2}` (Binney & Mamon 1982, MNRAS 200,
    361) of the Jeans solution of :func:`radial_dispersion`, with the
    two integrals exchanged into the kernel K of the anisotropy model (see
    :mod:`lensinfer.dynamics.anisotropy`).  :math:`\Sigma` is the tracer's
    surface density, so the tracer's normalisation cancels.

    Quadrature: :math:`r = R\cosh t` (a log-radius variable at large r whose
    Jacobian :math:`dr/r = \tanh t\,dt` removes the square-root behaviour of
    K at r = R), :math:`t = T q^2` with 40 Gauss–Legendre nodes in q (which
    clusters nodes near r = R, where a steeply falling tracer puts its
    weight) and :math:`\cosh T = 10^5`, plus a power-law tail from the local
    slope at :math:`r = 10^5 R`.  The cutoff lies beyond 100 effective radii
    for every :math:`R > 10^{-3} R_{\rm eff}`, where a Sérsic (n <= 10) or
    Hernquist tracer has shed all but ~1e-8 of its light into the tail
    term; the tests find a relative error below 1e-6 in sigma for Sérsic
    indices 1–10 over 1e-3–5 R_eff (1e-3 for n = 0.5, whose Gaussian
    fall-off the fixed nodes resolve poorly beyond R_eff).

    Parameters
    ----------
    mass : SphericalProfile
        Total mass (e.g. ``Sersic(...) + contract_halo(...) + PointMass(...)``).
    tracer : SphericalProfile
        The tracer's light profile (its ``density`` and ``surface_density``).
    R : float, array or Quantity
        Projected radius, kpc (> 0).
    anisotropy : Isotropic, ConstantAnisotropy or OsipkovMerritt, optional
        Defaults to :class:`Isotropic`.

    Returns
    -------
    jax.Array
        :math:`\sigma_{\rm los}(R)` in km/s, with the shape of R.

    References
    ----------
    Mamon G. A., Łokas E. L., 2005, MNRAS 363, 705.
    Binney J., Tremaine S., 2008, Galactic Dynamics, 2nd ed., section 4.8.

    Examples
    --------
    >>> from lensinfer.dynamics import los_dispersion
    >>> from lensinfer.profiles import Hernquist
    >>> h = Hernquist(1e11, 3.0)
    >>> 50 < float(los_dispersion(h, h, 3.0)) < 200
    True
    """
    R = as_float(to_internal(R, KPC))
    return jnp.sqrt(los_moment(mass, tracer, R, anisotropy) / tracer.surface_density(R))
