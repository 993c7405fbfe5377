"""The base-class quadrature fallback (lensinfer.profiles._quadrature, base.py).

A profile that implements only ``density`` gets ``enclosed_mass``,
``surface_density`` and ``projected_mass`` from fixed-node Gauss–Legendre rules.
They are checked on two density-only profiles defined here whose integrals are
textbook closed forms:

- the Plummer (1911, MNRAS 71, 460) sphere (from memory):
  rho = 3M / (4 pi a^3) (1 + r^2/a^2)^(-5/2), M(<r) = M r^3 / (r^2 + a^2)^(3/2),
  Sigma = M / (pi a^2) (1 + R^2/a^2)^(-2), M_2D = M R^2 / (R^2 + a^2);
- the Hernquist (1990) sphere, eqs. 2, 3, 32, 37 (``_profile_reference``).

The _quadrature docstring promises 1e-8 relative over 1e-3 to 1e3 scale radii.
"""

import dataclasses
import math

import _profile_reference as ref
import jax
import jax.numpy as jnp
import numpy as np
import pytest

from lensinfer.profiles import SphericalProfile

DOCUMENTED_RTOL = 1e-8


@jax.tree_util.register_dataclass
@dataclasses.dataclass(frozen=True)
class DensityOnlyPlummer(SphericalProfile):
    mass: float
    a: float

    @property
    def quadrature_scale(self):
        return self.a

    def density(self, r):
        return 3 * self.mass / (4 * jnp.pi * self.a**3) * (1 + (r / self.a) ** 2) ** -2.5


@jax.tree_util.register_dataclass
@dataclasses.dataclass(frozen=True)
class DensityOnlyHernquist(SphericalProfile):
    mass: float
    a: float

    @property
    def quadrature_scale(self):
        return self.a

    def density(self, r):
        return self.mass * self.a / (2 * jnp.pi * r * (r + self.a) ** 3)


MASS, A = 1.0e11, 2.0
X = np.array([1e-3, 1e-2, 0.1, 0.5, 2.0, 10.0, 100.0, 1e3])


def _plummer_closed(r):
    return (
        MASS * r**3 / (r**2 + A**2) ** 1.5,
        MASS / (math.pi * A**2) * (1 + (r / A) ** 2) ** -2,
        MASS * r**2 / (r**2 + A**2),
    )


def test_plummer_integrals():
    p = DensityOnlyPlummer(MASS, A)
    r = X * A
    m3, sig, m2 = (np.array(v) for v in zip(*[_plummer_closed(x) for x in r], strict=True))
    f = jax.jit(lambda q, rr: (q.enclosed_mass(rr), q.surface_density(rr), q.projected_mass(rr)))
    got = [np.asarray(v) for v in f(p, jnp.asarray(r))]
    np.testing.assert_allclose(got[0], m3, rtol=DOCUMENTED_RTOL)
    np.testing.assert_allclose(got[1], sig, rtol=DOCUMENTED_RTOL)
    np.testing.assert_allclose(got[2], m2, rtol=DOCUMENTED_RTOL)


def test_hernquist_integrals():
    p = DensityOnlyHernquist(MASS, A)
    x = X[(X < 0.9) | (X > 1.1)]  # the numpy eq. 32 / 37 cancel near s = 1
    r = x * A
    np.testing.assert_allclose(
        np.asarray(p.enclosed_mass(jnp.asarray(r))),
        [ref.hernquist_mass(v, MASS, A) for v in r],
        rtol=DOCUMENTED_RTOL,
    )
    np.testing.assert_allclose(
        np.asarray(p.surface_density(jnp.asarray(r))),
        [ref.hernquist_sigma(v, MASS, A) for v in r],
        rtol=DOCUMENTED_RTOL,
    )
    np.testing.assert_allclose(
        np.asarray(p.projected_mass(jnp.asarray(r))),
        [ref.hernquist_cylinder_mass(v, MASS, A) for v in r],
        rtol=DOCUMENTED_RTOL,
    )


def test_fallback_gradients_are_exact_identities():
    # d M_3D/dr = 4 pi r^2 rho and d M_2D/dR = 2 pi R Sigma (the quadrature
    # nodes move with r, so these test the differentiated rule), as the
    # dimensionless slopes d ln M / d ln r, to the documented 1e-8 (absolute
    # on the slope: far out the slope itself -> 0 while M stays accurate).
    p = DensityOnlyPlummer(MASS, A)
    r = jnp.asarray(X * A)
    ones = jnp.ones_like(r)
    m3, dm3 = jax.jvp(p.enclosed_mass, (r,), (ones,))
    m2, dm2 = jax.jvp(p.projected_mass, (r,), (ones,))
    np.testing.assert_allclose(
        np.asarray(dm3 * r / m3),
        np.asarray(4 * jnp.pi * r**3 * p.density(r) / m3),
        atol=DOCUMENTED_RTOL,
    )
    np.testing.assert_allclose(
        np.asarray(dm2 * r / m2),
        np.asarray(2 * jnp.pi * r**2 * p.surface_density(r) / m2),
        atol=DOCUMENTED_RTOL,
    )


def test_base_class_without_density_raises():
    with pytest.raises(NotImplementedError):
        SphericalProfile().density(1.0)
