"""jit, vmap and the full lens mass model (contracted halo and a central black hole).

Regression and behaviour tests (no outside truth): jitted and eager results
agree, batched and single evaluations agree, geometry evaluated at trace time
and traced geometry agree, and the dispersions of a realistic mass model
(Sérsic stars, a Gnedin et al. 2004 contracted NFW halo, a black hole) are
finite, with finite gradients, and respond to the components as physics says.
"""

import jax
import jax.numpy as jnp
import numpy as np

from lensinfer.contraction import contract_halo
from lensinfer.cosmology import Cosmology
from lensinfer.dynamics import (
    ConstantAnisotropy,
    Isotropic,
    OsipkovMerritt,
    aperture_dispersion,
    los_dispersion,
    radial_dispersion,
    slit_dispersion,
)
from lensinfer.halo import radius_from_mass
from lensinfer.profiles import NFW, Hernquist, PointMass, Sersic

STARS = Hernquist(1e11, 2.0)
MASS = STARS + NFW(1e7, 30.0)


def test_jit_matches_eager():
    # Same operations, compiled or not: rounding-level differences only.
    eager = los_dispersion(MASS, STARS, 0.3)
    jitted = jax.jit(lambda: los_dispersion(MASS, STARS, 0.3))()
    np.testing.assert_allclose(eager, jitted, rtol=1e-13)


def test_vmap_over_radii_anisotropy_and_apertures():
    radii = np.array([0.2, 1.0, 5.0])
    betas = np.array([-0.5, 0.0, 0.4])
    apertures = np.array([0.5, 1.0, 2.5])

    @jax.jit
    def batched():
        return (
            jax.vmap(lambda R: los_dispersion(MASS, STARS, R))(jnp.asarray(radii)),
            jax.vmap(lambda b: aperture_dispersion(MASS, STARS, 1.5, 1.0, ConstantAnisotropy(b)))(
                jnp.asarray(betas)
            ),
            # The aperture is traced here: the seeing weights are computed in
            # the graph instead of at trace time.
            jax.vmap(lambda a: aperture_dispersion(MASS, STARS, a, 1.0))(jnp.asarray(apertures)),
        )

    @jax.jit
    def one_by_one():
        return (
            los_dispersion(MASS, STARS, radii),
            jnp.stack(
                [aperture_dispersion(MASS, STARS, 1.5, 1.0, ConstantAnisotropy(b)) for b in betas]
            ),
            jnp.stack([aperture_dispersion(MASS, STARS, a, 1.0) for a in apertures]),
        )

    for got, want in zip(batched(), one_by_one(), strict=True):
        np.testing.assert_allclose(got, want, rtol=1e-12)


def lens_galaxy(p, contracted=True, black_hole=True):
    """p = [log10 M*, R_eff, n, log10 M200c, c200c, log10 M_bh]."""
    cosmo = Cosmology.default()
    z = 0.3
    stars = Sersic(10.0 ** p[0], p[1], p[2])
    m200c = 10.0 ** p[3]
    nfw = NFW.from_m200c(m200c, p[4], z, cosmo)
    r200c = radius_from_mass(m200c, z, cosmology=cosmo)
    halo = nfw
    if contracted:
        # z and the cosmology: r_vir normalises the orbit-averaged radius.
        halo = contract_halo(nfw, stars, "gnedin04", r200c=r200c, z=z, cosmology=cosmo)
    mass = stars + halo
    if black_hole:
        mass = mass + PointMass(10.0 ** p[5])
    return stars, mass


P0 = jnp.asarray([11.3, 6.0, 4.0, 13.2, 7.0, 9.0])


def _full_model(q):
    """sigma_los(10 pc) and sigma_ap for q = (log10 M*, log10 M_bh)."""
    p = P0.at[0].set(q[0]).at[5].set(q[1])
    stars, mass = lens_galaxy(p)
    return jnp.stack(
        [
            los_dispersion(mass, stars, 0.01, OsipkovMerritt(6.0)),
            aperture_dispersion(mass, stars, 3.0, 2.5, ConstantAnisotropy(0.2)),
        ]
    )


# Forward mode along log10 M*, through the contraction solve: one compilation
# that also returns the values (reverse mode through the unrolled Newton steps
# compiles for about a minute).
_values_and_slope = jax.jit(lambda q: jax.jvp(_full_model, (q,), (jnp.asarray([1.0, 0.0]),)))


@jax.jit
def _other_dispersions(p):
    stars, mass = lens_galaxy(p)
    return jnp.stack(
        [radial_dispersion(mass, stars, 0.05), slit_dispersion(mass, stars, 1.0, 4.0, 2.5)]
    )


def test_contracted_halo_and_black_hole_give_finite_values_and_gradients():
    q0 = P0[jnp.asarray([0, 5])]
    values, slope = _values_and_slope(q0)
    values = np.concatenate([values, _other_dispersions(P0)])
    assert np.all(np.isfinite(values)) and np.all((values > 100.0) & (values < 800.0))
    # More stellar mass, larger dispersions (finite, positive derivatives).
    assert np.all(np.isfinite(slope)) and np.all(slope > 0.0)
    # A 1e9 Msun black hole dominates the potential at 10 pc (its sphere of
    # influence is G M_bh / sigma^2 ~ 30 pc, so sigma^2 there responds almost
    # linearly to M_bh) but is ~1e-2 of the mass inside the 3-kpc aperture:
    # d ln sigma / d ln M_bh by central differences of +-0.05 dex.
    step = jnp.asarray([0.0, 0.05])
    up, down = _values_and_slope(q0 + step)[0], _values_and_slope(q0 - step)[0]
    dlog = np.log(np.asarray(up) / np.asarray(down)) / (2 * 0.05 * np.log(10.0))
    assert dlog[0] > 0.2
    assert 0.0 < dlog[1] < 0.02


def test_isotropic_default_and_quantities():
    import astropy.units as u

    a = los_dispersion(MASS, STARS, 1.0)
    b = los_dispersion(MASS, STARS, 1.0 * u.kpc, Isotropic())
    c = los_dispersion(MASS, STARS, 1000.0 * u.pc)
    np.testing.assert_allclose([b, c], a, rtol=1e-14)
