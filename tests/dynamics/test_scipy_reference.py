"""Comparison to an independent scipy computation (comparison to other codes).

A Sérsic (n = 4) tracer in a Sérsic + NFW potential, for each anisotropy
model (isotropic, beta = 0.3, beta = -0.5, Osipkov–Merritt with r_a = R_eff):
``_reference.JeansModel`` does the Jeans integral, the line-of-sight
projection and the aperture / slit averages with scipy's adaptive quadrature
in the original order (no kernels, no lensinfer code), with the circular
seeing weight from ``scipy.stats.ncx2`` and the slit by 2-D ``dblquad``.  Its
own accuracy is ~1e-8 (spline tabulation of quad results, h = 0.02 in ln r).

The issue asks for 1e-3.  The tolerances below are tighter, set from the
measured errors with a margin of 3-10: the single-integral radial and
line-of-sight dispersions agree to ~1e-9 (1e-7 asserted), the gridded
aperture and slit averages to <= 3e-5 for n = 4 (1e-4 asserted) and to
<= 1.5e-4 for the n = 1 and n = 8 tracers under strong seeing (3e-4
asserted).
"""

import jax
import jax.numpy as jnp
import numpy as np
import pytest

from lensinfer.dynamics import (
    aperture_dispersion,
    los_dispersion,
    radial_dispersion,
    slit_dispersion,
)

from . import _cases
from ._cases import R_EFF

RADII = R_EFF * np.array([0.01, 0.1, 0.5, 1.0, 3.0, 10.0])
#: (aperture radius, seeing FWHM) in units of R_eff.
APERTURES = [(0.5, 0.0), (0.3, 2.0)]
#: (half-width, half-length, FWHM) in units of R_eff: a narrow slit under
#: seeing and a square aperture without.
SLITS = [(0.2, 1.0, 0.4), (0.5, 0.5, 0.0)]


@jax.jit
def ours(mass, tracer, anisotropy, r):
    """All the dispersions in one compiled function.

    The profiles and the anisotropy are pytree arguments (the two constant-beta
    cases share one compilation); the apertures are Python constants, so their
    seeing weights are evaluated once at trace time, as in a model.
    """
    averages = [
        aperture_dispersion(mass, tracer, a * R_EFF, f * R_EFF, anisotropy) for a, f in APERTURES
    ]
    return (
        radial_dispersion(mass, tracer, r, anisotropy),
        los_dispersion(mass, tracer, r, anisotropy),
        jnp.stack(averages),
    )


@pytest.mark.parametrize("name", list(_cases.ANISOTROPIES))
def test_dispersions_match_scipy(name):
    anisotropy = _cases.ANISOTROPIES[name][0]
    tracer, mass = _cases.profiles()
    model = _cases.reference(name)
    sigma_r, sigma_los, averages = ours(mass, tracer, anisotropy, jnp.asarray(RADII))
    np.testing.assert_allclose(sigma_r, [model.sigma_r(r) for r in RADII], rtol=1e-7)
    np.testing.assert_allclose(sigma_los, [model.sigma_los(r) for r in RADII], rtol=1e-7)
    want = [model.aperture(a * R_EFF, f * R_EFF) for a, f in APERTURES]
    np.testing.assert_allclose(averages, want, rtol=1e-4)


@jax.jit
def _slits(mass, tracer, anisotropy):
    return jnp.stack(
        [slit_dispersion(mass, tracer, *(v * R_EFF for v in slit), anisotropy) for slit in SLITS]
    )


@pytest.mark.parametrize("name", ["isotropic", "om r_a=R_eff"])
def test_slit_matches_scipy(name):
    # The reference integrates Sigma sigma^2 times the separable erf
    # transmission over the plane (dblquad), not the azimuthal average.
    tracer, mass = _cases.profiles()
    model = _cases.reference(name)
    got = _slits(mass, tracer, _cases.ANISOTROPIES[name][0])
    np.testing.assert_allclose(
        got, [model.slit(*(v * R_EFF for v in slit)) for slit in SLITS], rtol=1e-4
    )


@jax.jit
def _strong_seeing(mass, tracer):
    return aperture_dispersion(mass, tracer, 0.3 * R_EFF, 1.0 * R_EFF)


@pytest.mark.parametrize("n", [1.0, 8.0])
def test_extreme_sersic_indices_under_strong_seeing(n):
    # The hardest cases of the node-count study: an exponential profile
    # (steep outer fall-off) and n = 8 (light concentrated into the inner cap)
    # with the seeing FWHM 3x the aperture radius.
    tracer, mass = _cases.profiles(n)
    model = _cases.reference("isotropic", n)
    got = _strong_seeing(mass, tracer)
    np.testing.assert_allclose(got, model.aperture(0.3 * R_EFF, 1.0 * R_EFF), rtol=3e-4)
