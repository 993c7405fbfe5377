"""Composite profiles: a sum of components is the sum of each quantity.

The four quantities are linear in the density, so for a Composite each must
equal the sum over its components (exact, up to the summation's rounding), and
``a + b`` must build the same object as ``Composite((a, b))``.
"""

import jax
import jax.numpy as jnp
import numpy as np
import pytest
from _profile_cases import METHODS

from lensinfer.profiles import (
    NFW,
    Composite,
    GeneralizedNFW,
    Hernquist,
    PointMass,
    Sersic,
    SingularIsothermal,
    as_profile,
)

R = jnp.asarray([1e-2, 0.7, 3.0, 20.0, 400.0])


def _components():
    # One of each kind of evaluation: the tabulated Sersic deprojection, the
    # fixed-node quadrature (gNFW), closed forms, and a point mass.
    return (
        Sersic(1e11, 4.0, 4.0),
        NFW(1e7, 25.0),
        GeneralizedNFW(5e6, 30.0, 1.4),
        Hernquist(2e10, 1.0),
        PointMass(1e9),
    )


_ALL = jax.jit(lambda p, r: {m: getattr(p, m)(r) for m in METHODS})


def test_composite_is_the_sum_of_its_components():
    # Sum of five positive terms: 1e-15 (a couple of roundings; both sides
    # jitted, so the same fused code).
    parts = _components()
    total = _ALL(Composite(parts), R)
    each = [_ALL(p, R) for p in parts]
    for method in METHODS:
        expected = sum(np.asarray(e[method]) for e in each)
        np.testing.assert_allclose(np.asarray(total[method]), expected, rtol=1e-15, err_msg=method)


def test_plus_builds_the_same_composite():
    a, b, c = NFW(1e7, 25.0), Hernquist(2e10, 1.0), PointMass(1e9)
    ab = a + b
    assert isinstance(ab, Composite)
    assert jax.tree_util.tree_structure(ab) == jax.tree_util.tree_structure(Composite((a, b)))
    assert ab.components == (a, b)
    # Sums flatten: (a + b) + c and a + (b + c) are the three-component composite.
    assert ((a + b) + c).components == (a, b, c)
    assert (a + (b + c)).components == (a, b, c)
    for method in METHODS:
        np.testing.assert_array_equal(
            np.asarray(getattr(ab, method)(R)), np.asarray(getattr(Composite((a, b)), method)(R))
        )


def test_adding_a_non_profile_is_refused():
    with pytest.raises(TypeError):
        NFW(1e7, 20.0) + 3.0
    with pytest.raises(TypeError):
        as_profile(3.0)


def test_as_profile():
    a, b = _components()[1:3]
    assert as_profile(a) is a
    assert as_profile([a, b]).components == (a, b)
    assert as_profile((a, b)).components == (a, b)
    assert Composite([a, b]).components == (a, b)  # a list is stored as a tuple


def test_composite_is_a_pytree_under_jit_vmap_and_grad():
    # Leaves are the components' leaves in order; the composite goes through
    # jit as an argument; vmap over a batch of composites; grad reaches a
    # component's parameter.  d M_3D / d M_point = 1 exactly.  (Closed-form
    # components only, to keep compilation quick; the Sersic is a pytree in
    # test_consistency.py.)
    parts = (NFW(1e7, 25.0), Hernquist(2e10, 1.0), SingularIsothermal(150.0), PointMass(1e9))
    total = Composite(parts)
    leaves = jax.tree_util.tree_leaves(total)
    assert len(leaves) == sum(len(jax.tree_util.tree_leaves(p)) for p in parts)
    f = jax.jit(lambda p, r: p.projected_mass(r))
    np.testing.assert_allclose(
        np.asarray(f(total, R)), np.asarray(total.projected_mass(R)), rtol=1e-13
    )
    g = jax.jit(jax.grad(lambda p: p.enclosed_mass(5.0)))(total)
    assert float(g.components[-1].mass) == 1.0
    batch = jax.tree_util.tree_map(lambda *xs: jnp.stack(xs), total, total)
    out = jax.jit(jax.vmap(lambda p: p.enclosed_mass(5.0)))(batch)
    np.testing.assert_allclose(np.asarray(out), float(total.enclosed_mass(5.0)), rtol=1e-13)


def test_singular_isothermal_plus_point_mass():
    # A hand-checkable composite: M_2D = pi sigma^2 R / G + M_bh.
    from lensinfer._constants import G_KPC_KMS2_PER_MSUN as G

    total = SingularIsothermal(200.0) + PointMass(1e9)
    expected = np.pi * 200.0**2 * np.asarray(R) / G + 1e9
    np.testing.assert_allclose(np.asarray(total.projected_mass(R)), expected, rtol=1e-14)
