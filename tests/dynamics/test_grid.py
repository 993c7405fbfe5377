"""The gridded Jeans solution and projection used by the aperture averages.

Internal consistency (comparison with the package's single-integral form,
itself checked against scipy in ``test_scipy_reference``): the moments on the
log-radius grid against ``projection.los_moment`` at the same radii, for
Sérsic tracers with n = 1, 4, 8 (in the Sérsic + NFW potential of the other
tests) and each anisotropy model, up to 3 R_eff (aperture averages need the
moments out to A + 6 s; the grid is anchored there).  Measured agreement:
<= 2e-6 for n >= 2 and 1.2e-5 for n = 1 (whose ln rho has the largest
high-order derivatives in ln r); 3e-5 asserted.
"""

import jax
import jax.numpy as jnp
import numpy as np
import pytest

from lensinfer.dynamics import _grid
from lensinfer.dynamics.projection import los_moment

from . import _cases
from ._cases import R_EFF


@jax.jit
def _both(mass, tracer, anisotropy):
    log_R, moment, surface = _grid.los_moments(mass, tracer, anisotropy, jnp.log(3.0 * R_EFF))
    return jnp.exp(log_R), moment, surface, los_moment(mass, tracer, jnp.exp(log_R), anisotropy)


@pytest.mark.parametrize("name", list(_cases.ANISOTROPIES))
def test_grid_moments_match_the_single_integral(name):
    anisotropy = _cases.ANISOTROPIES[name][0]
    for n in (1.0, 4.0, 8.0):
        tracer, mass = _cases.profiles(n)
        R, moment, surface, direct = (np.asarray(v) for v in _both(mass, tracer, anisotropy))
        use = R <= 3.0 * R_EFF * (1 + 1e-12)
        np.testing.assert_allclose(moment[use], direct[use], rtol=3e-5, err_msg=f"n = {n}")
        np.testing.assert_allclose(surface, np.asarray(tracer.surface_density(R)), rtol=1e-14)


def test_grid_constants():
    # The grid reaches e^-9 R_top and e^6 R_top with 61 points; the returned
    # radii are the grid's first N_R points and include R_top at N_BELOW.
    assert _grid.N_GRID == 61
    u = np.asarray(_grid.grid_log_radii(0.0))
    np.testing.assert_allclose([u[0], u[_grid.N_BELOW], u[-1]], [-9.0, 0.0, 6.0], atol=1e-14)
    # Every row of the interpolation matrices reproduces constants and
    # straight lines (6-point Lagrange is exact for polynomials of degree 5).
    x = np.arange(_grid.N_GRID, dtype=float)
    for rows in (_grid._JEANS_INTERP, _grid._LOS_INTERP):
        np.testing.assert_allclose(rows.sum(axis=1), 1.0, atol=1e-12)
        assert np.all(np.isfinite(rows @ x**5))
