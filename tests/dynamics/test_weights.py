"""Seeing weights of a circular aperture and of a slit.

Comparison to outside truth: the circular weight is the cumulative
distribution of the non-central chi-square distribution with 2 degrees of
freedom, w(R) = P(chi'^2_2(lambda = R^2/s^2) < A^2/s^2) = 1 - Q_1(R/s, A/s)
(Marcum's Q function; scipy.stats.ncx2, an independent implementation).  The
slit weight is checked against scipy's adaptive quad of the azimuthal average
of the separable erf transmission (its definition) and, without seeing,
against the arc length of the circle inside the rectangle.
"""

import math

import jax
import jax.numpy as jnp
import numpy as np
import pytest
from scipy import integrate, special, stats

from lensinfer.dynamics._weights import circle_weight, slit_weight

RADIUS = 1.0


def circle(R, radius, s):
    inside = R <= radius
    out = np.empty_like(R)
    f = jax.jit(circle_weight, static_argnums=3)
    out[inside] = f(jnp.asarray(R[inside]), radius, s, True)
    out[~inside] = f(jnp.asarray(R[~inside]), radius, s, False)
    return out


@pytest.mark.parametrize("s", [0.01, 0.1, 0.5, 2.0, 10.0])
def test_circle_weight_is_one_minus_marcum_q(s):
    # 24 Gauss–Legendre nodes on a Gaussian-like integrand that never peaks
    # inside the interval: measured 1e-14 absolute; asserted 1e-12 absolute
    # (the weights multiply light fractions of order 1).
    R = np.concatenate(
        [np.geomspace(1e-4, RADIUS, 25), np.linspace(RADIUS, RADIUS + 8 * s, 25)[1:]]
    )
    want = stats.ncx2.cdf((RADIUS / s) ** 2, 2, (R / s) ** 2)
    np.testing.assert_allclose(circle(R, RADIUS, s), want, atol=1e-12, rtol=0)


def test_circle_weight_without_seeing_is_a_step():
    R = np.array([0.1, 0.99, 1.01, 3.0])
    np.testing.assert_array_equal(circle(R, RADIUS, 0.0), [1.0, 1.0, 0.0, 0.0])


def slit_by_quad(R, a, b, s):
    if s == 0.0:

        def f(p):
            return float(abs(R * math.cos(p)) < a and abs(R * math.sin(p)) < b)
    else:

        def P(x, h):
            return 0.5 * (
                special.erf((h - x) / (math.sqrt(2) * s))
                + special.erf((h + x) / (math.sqrt(2) * s))
            )

        def f(p):
            return P(R * math.cos(p), a) * P(R * math.sin(p), b)

    pts = [math.acos(min(a / R, 1.0)), math.asin(min(b / R, 1.0))]
    return (
        2
        / math.pi
        * integrate.quad(f, 0, math.pi / 2, points=pts, epsabs=1e-14, epsrel=1e-13, limit=200)[0]
    )


@pytest.mark.parametrize("a, b", [(0.5, 2.0), (1.0, 1.0), (2.0, 0.5)])
@pytest.mark.parametrize("s", [0.0, 0.05, 0.3, 1.0])
def test_slit_weight_is_the_azimuthal_average(a, b, s):
    # 3 x 16 azimuthal nodes split at the edge crossings: exact without
    # seeing (piecewise constant), 8e-6 absolute at s = a/10 (measured, the
    # erf steps are then barely resolved), < 1e-12 for s >= 0.3 a.
    R = np.geomspace(1e-3, 3.0, 30)
    want = [slit_by_quad(x, a, b, s) for x in R]
    tol = 2e-5 if s == 0.05 else 1e-10
    np.testing.assert_allclose(
        jax.jit(slit_weight)(jnp.asarray(R), a, b, s), want, atol=tol, rtol=0
    )


def test_slit_weight_without_seeing_is_the_arc_fraction():
    # Square slit of half-side a: for a < R < sqrt(2) a the circle is inside on
    # the arcs |phi - pi/4| < pi/4 - acos(a/R) in each quadrant.
    a = 1.0
    R = np.array([0.5, 1.1, 1.3, 1.45])
    want = np.clip((math.pi / 2 - 2 * np.arccos(np.minimum(a / R, 1.0))) / (math.pi / 2), 0, 1)
    np.testing.assert_allclose(slit_weight(jnp.asarray(R), a, a, 0.0), want, atol=1e-14)
