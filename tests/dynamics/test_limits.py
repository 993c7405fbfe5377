"""Limits with known answers.

- Osipkov–Merritt with r_a -> infinity and constant beta = 0 are isotropic.
- An aperture much smaller than the seeing disk sees the PSF-weighted central
  light: sigma^2 -> int Sigma sigma^2 e^{-R^2/2s^2} R dR / int Sigma e^{-R^2/2s^2} R dR
  (the weight of a circle of radius A << s is pi A^2 times the PSF at R, up to
  O(A^2/s^2)); the limit is computed independently by scipy quad of the
  reference model (``_reference.JeansModel.central_seeing_limit``).
- An aperture containing all the light measures the luminosity-weighted mean
  of sigma_los^2, which for any anisotropy is (1/3) int nu G M / r dV / L (the
  virial theorem for a tracer in a static potential; Binney & Tremaine 2008,
  section 4.8.3, from memory), computed independently by scipy quad
  (``_reference.JeansModel.virial_total``).
"""

import jax
import numpy as np
import pytest

from lensinfer.dynamics import (
    ConstantAnisotropy,
    Isotropic,
    OsipkovMerritt,
    aperture_dispersion,
    los_dispersion,
)
from lensinfer.profiles import NFW, Hernquist

from . import _cases
from ._cases import R_EFF


@jax.jit
def _direct_and_aperture(mass, tracer, anisotropy):
    R = np.array([0.05, 1.0, 4.0, 20.0])
    return los_dispersion(mass, tracer, R, anisotropy), aperture_dispersion(
        mass, tracer, 3.0, 2.0, anisotropy
    )


def test_isotropic_limits_of_the_anisotropic_models():
    # Hernquist stars in an NFW halo (closed-form profiles keep this fast).
    stars = Hernquist(1e11, 2.0)
    mass = stars + NFW(1e7, 30.0)
    iso = _direct_and_aperture(mass, stars, Isotropic())
    zero = _direct_and_aperture(mass, stars, ConstantAnisotropy(0.0))
    wide = _direct_and_aperture(mass, stars, OsipkovMerritt(1e6))
    # beta = 0: the same integrals through another kernel and f = r^0: rounding, 1e-12.
    np.testing.assert_allclose(zero[0], iso[0], rtol=1e-12)
    np.testing.assert_allclose(zero[1], iso[1], rtol=1e-12)
    # r_a = 1e6 kpc: beta(r) <= (r / r_a)^2 <= 1e-6 where the light is; the
    # dispersions change by less than that (1e-7 asserted, ~1e-9 measured).
    np.testing.assert_allclose(wide[0], iso[0], rtol=1e-7)
    np.testing.assert_allclose(wide[1], iso[1], rtol=1e-7)


@jax.jit
def _small_aperture(mass, tracer):
    s = R_EFF  # seeing dispersion
    return aperture_dispersion(mass, tracer, 0.02 * s, s * np.sqrt(8.0 * np.log(2.0)))


def test_aperture_much_smaller_than_the_seeing():
    # A = 0.02 s: the weight differs from pi A^2 PSF(R) by a relative
    # (A^2 / 8 s^2)(R^2 / s^2 - 2) ~ 5e-5, which moves sigma by less than
    # that; with the ~1e-5 quadrature error, 1e-4 is asserted.
    tracer, mass = _cases.profiles()
    model = _cases.reference("isotropic")
    want = model.central_seeing_limit(R_EFF * np.sqrt(8.0 * np.log(2.0)))
    assert float(_small_aperture(mass, tracer)) == pytest.approx(want, rel=1e-4)


@jax.jit
def _whole_galaxy(mass, tracer, anisotropy):
    return aperture_dispersion(mass, tracer, 100.0 * R_EFF, 0.0, anisotropy)


@pytest.mark.parametrize("name", ["isotropic", "beta=0.3", "om r_a=R_eff"])
def test_aperture_containing_all_the_light_is_the_virial_value(name):
    # A = 100 R_eff holds all but 3e-5 of an n = 4 Sérsic galaxy's light
    # (1 - P(8, b_4 100^(1/4))), and the total is the same for every
    # anisotropy.  Measured differences from the virial value: 3e-5
    # (isotropic, beta = 0.3) and 1.1e-4 (Osipkov–Merritt, whose outer light
    # converges more slowly: at A = 50 R_eff the differences are 1.8e-4 and
    # 2.6e-4); 2.5e-4 asserted.
    tracer, mass = _cases.profiles()
    want = _cases.reference("isotropic").virial_total()
    got = float(_whole_galaxy(mass, tracer, _cases.ANISOTROPIES[name][0]))
    assert got == pytest.approx(want, rel=2.5e-4)
