"""Gradients against central finite differences.

Every dispersion is a smooth function of the profile parameters, the
anisotropy parameter and the aperture (all quadratures have fixed nodes that
move smoothly with the parameters), so jax.jacfwd is compared with central
differences f'(x) ~ [f(x + h) - f(x - h)] / 2h, h = 1e-5 |x|, whose truncation
error (h^2 f''' / 6 ~ 1e-10 relative) and rounding error (~1e-16 / 1e-5 =
1e-11 relative) are both far below the 1e-6 relative tolerance asserted
(measured agreement: ~1e-9).
"""

import jax
import jax.numpy as jnp
import numpy as np
import pytest

from lensinfer.dynamics import (
    ConstantAnisotropy,
    OsipkovMerritt,
    aperture_dispersion,
    los_dispersion,
    radial_dispersion,
)
from lensinfer.profiles import NFW, Hernquist, Sersic


def central_differences(f, x, rel_step=1e-5):
    x = np.asarray(x, dtype=float)
    cols = []
    for i in range(x.size):
        h = rel_step * abs(x[i])
        up, down = x.copy(), x.copy()
        up[i] += h
        down[i] -= h
        cols.append((np.asarray(f(up)) - np.asarray(f(down))) / (2 * h))
    return np.stack(cols, axis=-1)


def check(f, x0, rtol=1e-6):
    # One compilation: forward mode (for these few inputs it compiles faster
    # than reverse mode), with the values as auxiliary output for the
    # finite differences.
    jac_and_value = jax.jit(jax.jacfwd(lambda x: (f(x), f(x)), has_aux=True))
    jac = np.asarray(jac_and_value(jnp.asarray(x0))[0])
    fd = central_differences(lambda x: jac_and_value(jnp.asarray(x))[1], x0)
    # Relative to each output's largest derivative, so that a derivative that
    # vanishes (sigma_r does not depend on the aperture) is compared absolutely.
    scale = np.abs(jac).max(axis=-1, keepdims=True)
    err = np.abs(jac - fd) / (np.abs(fd) + scale)
    assert err.max() < rtol, f"max relative error {err.max():.2e}\njac = {jac}\nfd = {fd}"


def hernquist_model(p, anisotropy):
    """p = [log10 M*, a, log10 rho_s, r_s, anisotropy parameter]."""
    stars = Hernquist(10.0 ** p[0], p[1])
    mass = stars + NFW(10.0 ** p[2], p[3])
    aniso = anisotropy(p[4])
    return jnp.stack(
        [
            aperture_dispersion(mass, stars, 2.0, 1.5, aniso),
            los_dispersion(mass, stars, 1.5, aniso),
            radial_dispersion(mass, stars, 1.5, aniso),
        ]
    )


@pytest.mark.parametrize(
    "anisotropy, value",
    [(ConstantAnisotropy, 0.25), (OsipkovMerritt, 4.0)],
    ids=["beta", "r_a"],
)
def test_gradients_with_respect_to_profiles_and_anisotropy(anisotropy, value):
    # Hernquist stars (M* = 1e11, a = 2 kpc) in an NFW halo; a 2-kpc aperture
    # with 1.5 kpc seeing; derivatives of the aperture, line-of-sight and
    # radial dispersions with respect to the five profile and anisotropy
    # parameters (the slit shares the aperture's machinery; its geometry
    # derivatives are checked below).
    check(lambda p: hernquist_model(p, anisotropy), [11.0, 2.0, 7.0, 30.0, value])


def test_gradients_with_respect_to_the_aperture_and_the_seeing():
    # p = [aperture radius, FWHM] (kpc); the seeing weights are then traced,
    # not evaluated at trace time.
    stars = Hernquist(1e11, 2.0)
    mass = stars + NFW(1e7, 30.0)
    check(lambda p: aperture_dispersion(mass, stars, p[0], p[1]), [2.0, 1.5])


def test_gradients_through_the_sersic_profile():
    # The tabulated Sérsic deprojection is C^1 in (ln r, n); derivatives of the
    # aperture dispersion with respect to log10 M*, R_eff and n, isotropic.
    def f(p):
        stars = Sersic(10.0 ** p[0], p[1], p[2])
        return aperture_dispersion(stars + NFW(1e7, 30.0), stars, 4.0, 3.0)

    check(f, [11.0, 5.0, 4.0])
