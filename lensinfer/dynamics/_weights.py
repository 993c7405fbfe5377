r"""The fraction of the light from a point at projected radius R that lands in an aperture.

With a circular Gaussian point-spread function of dispersion
:math:`s = {\rm FWHM}/\sqrt{8\ln 2}`, a point source at distance R from the
aperture's centre is spread into :math:`\mathcal N(\mathbf R, s^2 I_2)`; the
aperture average of any circularly symmetric surface brightness weights each
radius by the azimuthal average :math:`w(R)` of that fraction.

Circle of radius A
    The distance from the centre of a point drawn from the blurred source has
    the Rice distribution, so (Marcum 1950)

    .. math::

        w(R) = 1 - Q_1\!\left(\frac{R}{s}, \frac{A}{s}\right)
             = \int_0^A \frac{\rho}{s^2}\,
               e^{-(\rho^2 + R^2)/2s^2} I_0\!\left(\frac{\rho R}{s^2}\right) d\rho .

    The integrand is a bump of width s around :math:`\rho \approx R`; in
    :math:`v = (\rho - R)/s` it is
    :math:`(\rho/s)\,e^{-v^2/2}\,{\rm i0e}(\rho R/s^2)` (``i0e`` is the
    exponentially scaled Bessel function, so nothing overflows).  For
    :math:`R \le A` we integrate the part outside the aperture,
    :math:`w = 1 - \int_{(A-R)/s}^{8}`, for :math:`R > A` the part inside,
    :math:`\int_{\max(-R/s, -8)}^{(A-R)/s}` — both with 24 fixed
    Gauss–Legendre nodes on an interval that never holds the peak in its
    interior, truncated at 8 s (a tail of :math:`e^{-32}`).  No seeing
    (s = 0) gives the step :math:`w = [R < A]`.

Rectangular slit of half-width a and half-length b (centred, axes x and y)
    The blur is separable, so a point at (x, y) keeps the fraction
    :math:`P_a(x) P_b(y)` with
    :math:`P_a(x) = \frac12[{\rm erf}\frac{a - x}{\sqrt2 s} + {\rm erf}\frac{a + x}{\sqrt2 s}]`,
    and

    .. math::

        w(R) = \frac{2}{\pi}\int_0^{\pi/2} P_a(R\cos\phi)\,P_b(R\sin\phi)\,d\phi .

    The azimuth is split at the angles where the circle of radius R crosses
    the slit's edges, :math:`\phi_a = \arccos\min(a/R, 1)` and
    :math:`\phi_b = \arcsin\min(b/R, 1)`, with 16 Gauss–Legendre nodes on
    each of the three pieces: without seeing the integrand is constant on
    each piece (the quadrature is exact), and with little seeing its steps
    sit at the ends of the pieces, where Gauss–Legendre nodes cluster.
"""

import itertools

import jax.numpy as jnp
import numpy as np
from jax.scipy.special import erf, i0e

from lensinfer.dynamics._rules import mapped_rule, unit_rule

__all__: list[str] = []

#: Gaussian truncation of the circular weight, in units of s.
N_SIGMA = 8.0
N_CIRCLE = 24
_CIRCLE_RULE = unit_rule(N_CIRCLE)
N_AZIMUTH = 16
_AZIMUTH_RULE = unit_rule(N_AZIMUTH)

#: FWHM / s of a Gaussian.
FWHM_PER_SIGMA = float(np.sqrt(8.0 * np.log(2.0)))


def _ring_integral(R, s, lo, hi):
    """int_lo^hi (rho/s) exp(-v^2/2) i0e(rho R / s^2) dv, rho = R + s v (broadcast)."""
    v, w = mapped_rule(lo, hi, _CIRCLE_RULE)
    rho = jnp.maximum(R[..., None] + s[..., None] * v, 0.0)
    f = rho / s[..., None] * jnp.exp(-0.5 * v**2) * i0e(rho * R[..., None] / s[..., None] ** 2)
    return jnp.sum(w * f, axis=-1)


def circle_weight(R, radius, sigma, inside):
    r"""w(R) for a circle of ``radius`` and seeing dispersion ``sigma`` (kpc).

    ``inside`` (a Python bool) says whether all R are <= radius (the formula
    used is chosen per quadrature panel, statically).  sigma = 0 gives the
    step function.
    """
    R = jnp.asarray(R, dtype=jnp.float64)
    radius = jnp.broadcast_to(jnp.asarray(radius, dtype=jnp.float64), R.shape)
    sigma = jnp.broadcast_to(jnp.asarray(sigma, dtype=jnp.float64), R.shape)
    seeing = sigma > 0.0
    s = jnp.where(seeing, sigma, 1.0)
    edge = (radius - R) / s
    if inside:
        lo = jnp.clip(edge, 0.0, N_SIGMA)
        w = 1.0 - _ring_integral(R, s, lo, jnp.full_like(lo, N_SIGMA))
        return jnp.where(seeing, w, 1.0)
    lo = jnp.maximum(-R / s, -N_SIGMA)
    hi = jnp.maximum(jnp.minimum(edge, 0.0), lo)
    w = _ring_integral(R, s, lo, hi)
    return jnp.where(seeing, w, 0.0)


def _edge_fraction(x, half, s, seeing):
    """P(x): the fraction of a blurred point at x that stays within |x| < half."""
    sq = jnp.sqrt(2.0) * s
    smooth = 0.5 * (erf((half - x) / sq) + erf((half + x) / sq))
    return jnp.where(seeing, smooth, (jnp.abs(x) < half).astype(jnp.float64))


def _arc_where_inside(arc, x, value_at_one):
    """arc(min(x, 1)) without the infinite derivative of arccos / arcsin at 1.

    Double-where: for x >= 1 the constant is returned and the arc function is
    evaluated at a safe point, so no 0 * inf reaches the gradient.
    """
    inside = x < 1.0
    return jnp.where(inside, arc(jnp.where(inside, x, 0.5)), value_at_one)


def slit_weight(R, half_width, half_length, sigma):
    r"""w(R) for a centred rectangular slit (kpc); sigma = 0 means no seeing."""
    R = jnp.asarray(R, dtype=jnp.float64)
    a = jnp.broadcast_to(jnp.asarray(half_width, dtype=jnp.float64), R.shape)
    b = jnp.broadcast_to(jnp.asarray(half_length, dtype=jnp.float64), R.shape)
    sigma = jnp.broadcast_to(jnp.asarray(sigma, dtype=jnp.float64), R.shape)
    seeing = (sigma > 0.0)[..., None]
    s = jnp.where(sigma > 0.0, sigma, 1.0)[..., None]
    phi_a = _arc_where_inside(jnp.arccos, a / R, 0.0)
    phi_b = _arc_where_inside(jnp.arcsin, b / R, 0.5 * jnp.pi)
    cuts = [jnp.zeros_like(R), jnp.minimum(phi_a, phi_b), jnp.maximum(phi_a, phi_b)]
    cuts.append(jnp.full_like(R, 0.5 * jnp.pi))
    total = 0.0
    for lo, hi in itertools.pairwise(cuts):
        phi, w = mapped_rule(lo, hi, _AZIMUTH_RULE)
        x = R[..., None] * jnp.cos(phi)
        y = R[..., None] * jnp.sin(phi)
        p = _edge_fraction(x, a[..., None], s, seeing) * _edge_fraction(y, b[..., None], s, seeing)
        total = total + jnp.sum(w * p, axis=-1)
    return 2.0 / jnp.pi * total
