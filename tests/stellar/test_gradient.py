"""Tests of lensinfer.stellar.gradient (radial M/L power law)."""

import astropy.units as u
import jax
import jax.numpy as jnp
import numpy as np

from lensinfer.stellar import mass_to_light_gradient

from ._checks import assert_grads_match_fd


def test_normalised_at_r_eff_and_power_law():
    # Definition: (R/R_eff)^-eta, equal to 1 at R_eff; compare with NumPy.
    r_eff = 4.0
    for eta in (-0.4, 0.0, 0.3, 1.0):
        np.testing.assert_allclose(
            float(mass_to_light_gradient(r_eff, r_eff, eta)), 1.0, rtol=1e-15
        )
    R = np.geomspace(0.1, 40.0, 9)
    np.testing.assert_allclose(
        np.asarray(jax.jit(mass_to_light_gradient)(R, r_eff, 0.3)), (R / r_eff) ** -0.3, rtol=1e-14
    )
    assert float(mass_to_light_gradient(8.0, 4.0, 1.0)) == 0.5


def test_quantity_inputs_and_vmap():
    np.testing.assert_allclose(
        float(mass_to_light_gradient(2000.0 * u.pc, 4.0 * u.kpc, 0.5)), 0.5**-0.5, rtol=1e-14
    )
    etas = jnp.linspace(-0.5, 0.5, 5)
    out = jax.vmap(lambda e: mass_to_light_gradient(2.0, 4.0, e))(etas)
    np.testing.assert_allclose(np.asarray(out), 0.5 ** -np.asarray(etas), rtol=1e-14)


def test_gradients():
    assert_grads_match_fd(
        mass_to_light_gradient,
        (1.7, 4.0, 0.35),
    )
