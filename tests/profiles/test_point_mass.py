"""Point mass: the four quantities of a central delta function.

For a point mass M at the centre, M(<r) = M_2D(<R) = M and rho = Sigma = 0 at
r, R > 0 (Schneider, Kochanek & Wambsganss 2006, Part 1, sect. on the point
lens; definition, so exact equality is expected).
"""

import astropy.units as u
import jax
import jax.numpy as jnp
import numpy as np
import pytest

from lensinfer.profiles import Hernquist, PointMass

MASS = 3.0e9
R = jnp.asarray([1e-3, 0.5, 10.0, 1e4])


def test_values():
    p = PointMass(MASS)
    np.testing.assert_array_equal(np.asarray(p.density(R)), 0.0)
    np.testing.assert_array_equal(np.asarray(p.surface_density(R)), 0.0)
    np.testing.assert_array_equal(np.asarray(p.enclosed_mass(R)), MASS)
    np.testing.assert_array_equal(np.asarray(p.projected_mass(R)), MASS)
    assert p.enclosed_mass(R).shape == R.shape
    assert p.projected_mass(2.0).shape == ()


def test_quantity_mass():
    # 3e9 Msun given in kg; astropy's Msun/kg round trip is ~1e-16: 1e-14.
    q = PointMass((MASS * u.Msun).to(u.kg))
    assert float(q.enclosed_mass(1.0)) == pytest.approx(MASS, rel=1e-14, abs=0)


def test_pytree_jit_and_gradient():
    p = PointMass(MASS)
    leaves, treedef = jax.tree_util.tree_flatten(p)
    assert leaves == [MASS]
    assert jax.tree_util.tree_unflatten(treedef, leaves) == p
    f = jax.jit(lambda q, r: q.projected_mass(r))
    np.testing.assert_array_equal(np.asarray(f(p, R)), MASS)
    # d M_2D / d M = 1 exactly, and d M_2D / dR = 0 (all the mass is inside).
    g = jax.grad(lambda q: q.projected_mass(2.0))(p)
    assert float(g.mass) == 1.0
    assert float(jax.grad(lambda r: p.projected_mass(r))(2.0)) == 0.0


def test_adds_its_mass_to_a_composite():
    # A black hole plus a galaxy: M(<r) and M_2D(<R) shift by exactly M.
    galaxy = Hernquist(1e11, 3.0)
    total = galaxy + PointMass(MASS)
    for method in ("enclosed_mass", "projected_mass"):
        np.testing.assert_allclose(
            np.asarray(getattr(total, method)(R)),
            np.asarray(getattr(galaxy, method)(R)) + MASS,
            rtol=1e-15,
        )
    np.testing.assert_allclose(
        np.asarray(total.density(R)), np.asarray(galaxy.density(R)), rtol=1e-15
    )
