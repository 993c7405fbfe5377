"""A singular isothermal tracer in a singular isothermal potential.

Comparison to outside truth (textbook power-law results, derived here).  For a
tracer nu ∝ r^-gamma in the potential of the singular isothermal sphere
(M(r) = 2 sigma^2 r / G, Binney & Tremaine 2008 eq. 4.103), the Jeans
equation with constant beta has the power-law solution
sigma_r^2 = v_c^2 / (gamma - 2 beta), v_c^2 = 2 sigma^2, and the projection of
a power law gives sigma_los^2 / sigma_r^2 = 1 - beta (gamma - 1) / gamma
(from int_R^inf r^(1-k) dr / sqrt(r^2 - R^2) ∝ Gamma((k-1)/2) / Gamma(k/2)).
For the self-consistent case gamma = 2:

    sigma_r^2 = sigma^2 / (1 - beta),
    sigma_los^2 = sigma^2 (1 - beta/2) / (1 - beta)   (= sigma^2 when isotropic).

The tracer has infinite mass: its density and surface density are those of
``SingularIsothermal`` itself (rho = sigma^2 / (2 pi G r^2),
Sigma = sigma^2 / (2 G R); the normalisation cancels), and its light in a
cylinder, pi sigma^2 R / G, is finite, which the aperture average needs.
"""

import jax
import jax.numpy as jnp
import numpy as np
import pytest

from lensinfer.dynamics import (
    ConstantAnisotropy,
    aperture_dispersion,
    los_dispersion,
    radial_dispersion,
    slit_dispersion,
)
from lensinfer.profiles import SingularIsothermal

SIGMA = 230.0
SIS = SingularIsothermal(SIGMA)
R = jnp.asarray([1e-3, 0.1, 1.0, 10.0, 300.0])


@pytest.mark.parametrize("beta", [0.0, 0.4, -0.7])
def test_radial_and_los_dispersion_are_the_power_law_solution(beta):
    # The integrands are power laws whose tails beyond the cutoff (1e5 r) the
    # power-law tail term adds exactly, so only the 40/48-node quadrature
    # errors remain: ~1e-12 for beta <= 0, 8e-8 for beta = 0.4, whose
    # line-of-sight integrand decays most slowly (as (r/R)^-1.2); 1e-6 asserted.
    aniso = ConstantAnisotropy(beta)
    sr = jax.jit(lambda r: radial_dispersion(SIS, SIS, r, aniso))(R)
    sl = jax.jit(lambda r: los_dispersion(SIS, SIS, r, aniso))(R)
    np.testing.assert_allclose(sr, SIGMA / np.sqrt(1.0 - beta), rtol=1e-6)
    np.testing.assert_allclose(sl, SIGMA * np.sqrt((1.0 - 0.5 * beta) / (1.0 - beta)), rtol=1e-6)


def test_isotropic_dispersion_is_sigma_everywhere():
    # The case named in the issue: sigma_los(R) = sigma at every radius.
    sl = jax.jit(lambda r: los_dispersion(SIS, SIS, r))(R)
    np.testing.assert_allclose(sl, SIGMA, rtol=1e-9)


def test_aperture_and_slit_averages_of_a_constant_dispersion():
    # sigma_los = sigma at all R, so every luminosity-weighted average is sigma:
    # this checks the gridded Jeans/projection (whose end tails are exact for
    # power laws) and the inner cap (the tracer's exact cylinder light).  The
    # gridded moments are accurate to ~1e-6 (6-point interpolation of
    # smooth logarithms); 1e-5 asserted.
    @jax.jit
    def averages():
        return jnp.stack(
            [
                aperture_dispersion(SIS, SIS, 1.0, 0.0),
                aperture_dispersion(SIS, SIS, 1.0, 0.8),
                slit_dispersion(SIS, SIS, 0.5, 2.0, 0.6),
                aperture_dispersion(SIS, SIS, 1.0, 0.8, ConstantAnisotropy(0.4)),
            ]
        )

    got = averages()
    want = [SIGMA, SIGMA, SIGMA, SIGMA * np.sqrt(0.8 / 0.6)]
    np.testing.assert_allclose(np.asarray(got), want, rtol=1e-5)
