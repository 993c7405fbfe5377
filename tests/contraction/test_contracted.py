"""contract_halo and ContractedHalo: interface, transformations and the response grid."""

import functools

import jax
import jax.numpy as jnp
import numpy as np
import pytest

from lensinfer import _spline
from lensinfer.contraction import ContractedHalo, ScaledProfile, contract_halo
from lensinfer.contraction import contracted as contracted_module
from lensinfer.profiles import NFW, PointMass, Sersic

from . import _model

ELLIPTICAL = _model.row(13.3, 6.0, 0.4, 11.5, 7.0, 4.0, 0.7, 1.2, 0.7)


@functools.cache
def _elliptical(prescription):
    return _model.run(prescription, ELLIPTICAL[None, :])


# ---------------------------------------------------------------------------
# Bad input.
# ---------------------------------------------------------------------------


@pytest.fixture(scope="module")
def halo_and_galaxy():
    halo = NFW.from_m200c(10.0**13.3, 6.0, 0.4, _model.COSMO)
    return halo, Sersic(10.0**11.5, 7.0, 4.0)


def test_unknown_prescription_names_the_accepted_ones(halo_and_galaxy):
    with pytest.raises(ValueError, match="prescription 'Blumenthal'") as err:
        contract_halo(*halo_and_galaxy, "Blumenthal", z=0.4, cosmology=_model.COSMO)
    for name in _model.PRESCRIPTIONS:
        assert name in str(err.value)


@pytest.mark.parametrize(
    "prescription, kwargs, match",
    [
        ("power", {}, "response_index"),
        ("orbit_averaged", dict(orbit_scale=1.0), "orbit_exponent"),
        ("gnedin11", dict(response_index=0.5), "only to 'power'"),
    ],
)
def test_missing_or_extra_response_parameters(halo_and_galaxy, prescription, kwargs, match):
    with pytest.raises(ValueError, match=match):
        contract_halo(*halo_and_galaxy, prescription, z=0.4, cosmology=_model.COSMO, **kwargs)


@pytest.mark.parametrize("kwargs", [{}, dict(z=0.4), dict(cosmology=_model.COSMO)])
def test_r200c_or_redshift_and_cosmology_needed(halo_and_galaxy, kwargs):
    with pytest.raises(ValueError, match="needs r200c, or both z and cosmology"):
        contract_halo(*halo_and_galaxy, "blumenthal86", **kwargs)


@pytest.mark.parametrize(
    "prescription, kwargs",
    [
        ("gnedin04", {}),
        ("gnedin11", dict(z=0.4)),
        ("orbit_averaged", dict(cosmology=_model.COSMO, orbit_scale=1.0, orbit_exponent=0.8)),
    ],
)
def test_orbit_radius_or_redshift_and_cosmology_needed(halo_and_galaxy, prescription, kwargs):
    # The orbit-averaged radius is normalised by r_vir, which needs z and the
    # cosmology (or an explicit r_orbit), even when r200c is given.
    with pytest.raises(ValueError, match=r"needs r_orbit \(the halo's virial radius, kpc\)"):
        contract_halo(*halo_and_galaxy, prescription, r200c=500.0, **kwargs)


# ---------------------------------------------------------------------------
# What contract_halo returns, and the defaults it documents.
# ---------------------------------------------------------------------------


def _nfw_and_point_mass(p):
    """The elliptical's halo around a point-mass galaxy of its M* (cheap to compile)."""
    halo = NFW.from_m200c(10.0 ** p[0], p[1], p[2], _model.COSMO)
    return halo, PointMass(10.0 ** p[3])


def test_returns_documented_types_through_jit():
    # A ContractedHalo (a pytree holding the halo) for a response, a ScaledProfile
    # for "none"; both cross jit boundaries (returned from one jitted function,
    # flattened and rebuilt, passed into another).
    def build(p, prescription):
        return contract_halo(*_nfw_and_point_mass(p), prescription, z=p[2], cosmology=_model.COSMO)

    p = jnp.asarray(ELLIPTICAL)
    dm = jax.jit(build, static_argnums=1)(p, "gnedin04")
    assert isinstance(dm, ContractedHalo)
    assert isinstance(dm.halo, NFW)
    assert dm.log_mass.shape == (_model.GRID_N,)
    leaves, tree = jax.tree_util.tree_flatten(dm)
    again = jax.tree_util.tree_unflatten(tree, leaves)
    radii = jnp.asarray(ELLIPTICAL[_model.COLUMN["r_eff"]] * _model.RADII_FACTORS)
    inside = jax.jit(lambda p, r: build(p, "gnedin04").enclosed_mass(r))(p, radii)
    outside = jax.jit(lambda halo, r: halo.enclosed_mass(r))(again, radii)
    np.testing.assert_allclose(np.asarray(outside), np.asarray(inside), rtol=1e-13)
    scaled = jax.jit(build, static_argnums=1)(p, "none")
    assert isinstance(scaled, ScaledProfile)


def test_r200c_solved_from_redshift_matches_closed_form():
    # contract_halo solves r200c from the halo (M(<r) = 200 rho_c(z) 4 pi r^3 / 3);
    # for an NFW built from M200c it must return r200c = (3 M200c / (800 pi
    # rho_c))^(1/3) (Navarro et al. 1997).  The grid starts at GRID_LO r200c.
    _, x = _elliptical("blumenthal86")
    np.testing.assert_allclose(np.exp(x["log_r0"]) / _model.GRID_LO, x["r200c"], rtol=1e-12)
    np.testing.assert_allclose(x["m200c"], 10.0**13.3, rtol=1e-12)


def test_default_galaxy_fraction():
    # f defaults to M_gal(<r200c) / M200c; the unresponsive remainder is 1 - f.
    for prescription in ("none", "gnedin11"):
        _, x = _elliptical(prescription)
        f = x["galaxy_mass_r200c"] / x["m200c"]
        np.testing.assert_allclose(x["remaining"], 1.0 - f, rtol=1e-13)


def test_explicit_galaxy_fraction_r200c_and_r_orbit_reproduce_the_defaults():
    # Explicit f, r200c and r_orbit = r_vir (from lensinfer.halo.convert_mass, a
    # separate solve) against the defaults (f, r200c and r_vir solved inside).
    def both(p):
        halo, galaxy = _nfw_and_point_mass(p)
        default = contract_halo(halo, galaxy, "gnedin11", z=p[2], cosmology=_model.COSMO)
        r200 = _model.r200c(p)
        f = galaxy.mass / 10.0 ** p[0]
        r_vir = _model.virial_radius(p)
        explicit = contract_halo(halo, galaxy, "gnedin11", f, r200c=r200, r_orbit=r_vir)
        radii = p[_model.COLUMN["r_eff"]] * jnp.asarray(_model.RADII_FACTORS)
        return default.enclosed_mass(radii), explicit.enclosed_mass(radii)

    a, b = jax.jit(both)(jnp.asarray(ELLIPTICAL))
    # The solved r200c equals the closed form to ~1e-14 (test above), and both
    # r_vir solves agree with scipy to ~1e-14 (test_reference_solver.py), so f,
    # the grid and rbar agree to that, and the masses to ~1e-13.
    np.testing.assert_allclose(np.asarray(a), np.asarray(b), rtol=1e-11)


@pytest.mark.parametrize("prescription", ["blumenthal86", "power"])
def test_r_orbit_is_ignored_without_orbit_averaging(prescription):
    # rbar = r for these prescriptions (contract_halo's table): r_orbit is
    # accepted and has no effect, and z and the cosmology are not needed.
    kwargs = dict(response_index=0.7) if prescription == "power" else {}

    def both(p):
        halo, galaxy = _nfw_and_point_mass(p)
        r200 = _model.r200c(p)
        plain = contract_halo(halo, galaxy, prescription, r200c=r200, **kwargs)
        given = contract_halo(halo, galaxy, prescription, r200c=r200, r_orbit=123.0, **kwargs)
        return plain.log_mass, given.log_mass

    a, b = jax.jit(both)(jnp.asarray(ELLIPTICAL))
    np.testing.assert_array_equal(np.asarray(a), np.asarray(b))


# ---------------------------------------------------------------------------
# jit, eager and vmap.
# ---------------------------------------------------------------------------


def test_jit_equals_eager():
    # The same computation op by op (jax.disable_jit also runs the package's
    # internal loops in Python).  Enclosed mass and density (the projections are
    # further jnp arithmetic on enclosed_mass); XLA fusion may reorder float
    # operations, so agreement to 1e-12 relative.
    p = jnp.asarray(ELLIPTICAL)

    def masses(p):
        dm, _, _ = _model.build(p, "gnedin11")
        radii = p[_model.COLUMN["r_eff"]] * jnp.asarray(_model.RADII_FACTORS)
        return jnp.stack([dm.enclosed_mass(radii), dm.density(radii)])

    with jax.disable_jit():
        eager = np.asarray(masses(p))
    jitted = _elliptical("gnedin11")[0][0, [0, 2]]
    np.testing.assert_allclose(eager, jitted, rtol=1e-12)


def test_vmap_over_parameters():
    # vmap over every parameter at once (halo, galaxy and nu) equals the rows
    # evaluated one at a time (lax.map in _model), to rounding.
    rows = np.array(
        [
            _model.row(13.3, 6.0, 0.4, 11.5, 7.0, 4.0, 0.7),
            _model.row(12.5, 12.0, 0.2, 11.0, 3.0, 2.0, 1.5),
            _model.row(14.0, 4.0, 0.7, 11.8, 15.0, 6.0, -0.3),
        ]
    )

    def masses(p):
        dm, _, _ = _model.build(p, "power")
        radii = p[_model.COLUMN["r_eff"]] * jnp.asarray(_model.RADII_FACTORS)
        return jnp.stack([dm.enclosed_mass(radii), dm.density(radii)])

    got = np.asarray(jax.jit(jax.vmap(masses))(jnp.asarray(rows)))
    want = _model.evaluate("power", rows)[:, [0, 2]]
    np.testing.assert_allclose(got, want, rtol=1e-12)


# ---------------------------------------------------------------------------
# The response grid: its ends and its density.
# ---------------------------------------------------------------------------


def _patch_grid(monkeypatch, lo, hi, n):
    """Replace the response grid of lensinfer.contraction.contracted (and its derived constants)."""
    h = float(np.log(hi / lo) / (n - 1))
    monkeypatch.setattr(contracted_module, "GRID_LO", lo)
    monkeypatch.setattr(contracted_module, "GRID_HI", hi)
    monkeypatch.setattr(contracted_module, "GRID_N", n)
    monkeypatch.setattr(contracted_module, "_GRID_H", h)
    monkeypatch.setattr(contracted_module, "_GRID_X", np.log(lo) + h * np.arange(n))
    monkeypatch.setattr(contracted_module, "_SPLINE_S", _spline.second_derivative_operator(n, h))


#: "power" rows of the elliptical: nu = 1 (the Blumenthal equation), strong
#: contraction, and the strongest expansion of the documented range (nu >= -0.3).
GRID_NUS = (1.0, 2.0, -0.3)
#: Expansion (nu < 0) steepens the mapping at the centre, so the documented grid
#: dependence is 3e-5 there (measured 2e-5 widening, 5e-6 doubling at nu = -0.3).
GRID_ROW_SCALE = np.array([30.0 if nu < 0 else 1.0 for nu in GRID_NUS])[:, None]
GRID_ROWS = np.array([_model.row(13.3, 6.0, 0.4, 11.5, 7.0, 4.0, nu) for nu in GRID_NUS])


def _grid_change(monkeypatch, lo, hi, n):
    """max |relative change| of each quantity (rows x 4) when the grid is (lo, hi, n)."""
    base = _model.evaluate("power", GRID_ROWS)
    _patch_grid(monkeypatch, lo, hi, n)
    # Traced under the patch (a fresh jit); values only.
    fresh = _model.make_batch("power", with_extras=False, with_derivatives=False)
    padded, k = _model.pad(GRID_ROWS)
    other = np.exp(np.asarray(fresh(np.zeros(_model.BATCH), padded, np.zeros_like(padded))))[:k]
    return np.max(np.abs(other / base - 1.0), axis=-1)


def _report(change, names):
    return "\n".join(
        f"nu = {nu}: " + ", ".join(f"{q} {c:.1e}" for q, c in zip(names, row, strict=True))
        for nu, row in zip(GRID_NUS, change, strict=True)
    )


def test_grid_ends_do_not_matter(monkeypatch):
    # Twelve more knots at each end on the same spacing (1.3e-7 to 77 r200c):
    # the old knots are still knots, so only the spline's end conditions and the
    # outer join can change the answer at 0.01-10 R_eff (~1e-5 to 0.1 r200c).
    # Enclosed mass and density: 1e-10 (measured ~1e-13: the not-a-knot end
    # condition's influence decays by ~0.27 per knot).  Projections: beyond
    # 10 r200c the package uses the unresponsive halo, while the response there
    # is a slight expansion (M_i > M200c) of relative size ~nu f ~ 3e-3 that the
    # longer grid follows.  A shell at r > 10 r200c puts ~R^2 / (2 r^2) < 5e-5 of
    # its mass inside R <= 0.1 r200c, so M_2D may change by < 1e-6; the outer
    # halo is ~7e-4 of Sigma at 10 R_eff, so Sigma by < 3e-6.  (Measured, nu >= 0:
    # M_2D 2.8e-7 and 5.4e-7, Sigma 5.4e-7 and 1.1e-6, growing with nu as expected.)
    h = contracted_module._GRID_H
    lo, hi, n = 1e-6 * np.exp(-12 * h), 10.0 * np.exp(12 * h), _model.GRID_N + 24
    change = _grid_change(monkeypatch, lo, hi, n)
    tol = np.array([1e-10, 1e-6, 1e-10, 3e-6]) * GRID_ROW_SCALE
    assert np.all(change < tol), "\n" + _report(change, _model.QUANTITIES)


def test_grid_convergence(monkeypatch):
    # contracted.py: "widening the grid or doubling its density changes the
    # masses by < 1e-6".  Doubling: 191 knots on the same ends (every old knot
    # is kept), so the change is the interpolation error of the default grid.
    change = _grid_change(monkeypatch, 1e-6, 10.0, 2 * _model.GRID_N - 1)
    masses = change[:, [0, 1]]
    assert np.all(masses < 1e-6 * GRID_ROW_SCALE), "\n" + _report(
        masses, ("enclosed_mass", "projected_mass")
    )
