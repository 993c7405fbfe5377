"""Gradients of the contracted halo against finite differences, and a broad prior box.

The gradients NUTS needs are those of the four public quantities with respect
to the halo, galaxy and response parameters.  ``jax.test_util.check_jvp`` and
``check_vjp`` (the two halves of ``check_grads``) compare automatic derivatives
with central finite differences.  They run on the logarithms of the quantities
(scale-free: every output is O(1-30) and every derivative O(0.01-10)), along
one direction per parameter row (see ``_model.make_batch``), so one compile
checks many rows.
"""

import jax
import jax.numpy as jnp
import numpy as np
import pytest
from jax.test_util import check_grads, check_jvp, check_vjp
from scipy.optimize import brentq

from lensinfer.contraction import contract_halo
from lensinfer.profiles import NFW, Sersic

from . import _model
from ._reference import nfw_m

#: The issue's prior box (log10 M200c, c200c, z, log10 M*, R_eff kpc, n, nu) and,
#: for "orbit_averaged", A in 0.5-2 and w in 0.5-1 around the published values.
BOX_LO = np.array([12.0, 2.0, 0.1, 10.5, 1.0, 1.0, -0.3, 0.5, 0.5])
BOX_HI = np.array([14.5, 20.0, 1.0, 12.0, 30.0, 8.0, 2.0, 2.0, 1.0])

#: Rows where each parameter is checked on its own (unit directions).
POINTS = {
    "massive-elliptical": _model.row(13.3, 6.0, 0.4, 11.5, 7.0, 4.0, 0.7, 1.2, 0.7),
    "compact-low-mass": _model.row(12.5, 12.0, 0.2, 11.0, 3.0, 2.0, 1.5, 0.9, 0.9),
}


def _relevant_columns(prescription):
    """The parameters a prescription depends on (the others have zero derivative)."""
    cols = ["log10_m200c", "c200c", "z", "log10_mstar", "r_eff", "n"]
    if prescription == "power":
        cols.append("nu")
    if prescription == "orbit_averaged":
        cols += ["orbit_scale", "orbit_exponent"]
    if prescription == "none":
        cols = ["log10_m200c", "c200c", "z", "log10_mstar"]  # f = M*/M200c only
    return [_model.COLUMN[c] for c in cols]


def prior_draws(n, seed):
    """n seeded uniform draws from the prior box."""
    rng = np.random.default_rng(seed)
    return BOX_LO + (BOX_HI - BOX_LO) * rng.uniform(size=(n, BOX_LO.size))


def _rows_and_directions(prescription, seed=0):
    """(BATCH, 9) rows and directions: unit directions at POINTS, random ones at draws."""
    cols = _relevant_columns(prescription)
    rows, dirs = [], []
    for p in POINTS.values():
        for c in cols:
            rows.append(p)
            d = np.zeros(p.size)
            d[c] = 1.0
            dirs.append(d)
    n_draws = _model.BATCH - len(rows)
    draws = prior_draws(n_draws, seed)
    rng = np.random.default_rng(seed + 1)
    for q in draws:
        d = np.zeros(q.size)
        # Random directions, scaled to each parameter's box width / 10 so that every
        # parameter contributes.
        d[cols] = rng.normal(size=len(cols)) * (BOX_HI - BOX_LO)[cols] / 10.0
        rows.append(q)
        dirs.append(d)
    return np.array(rows), np.array(dirs)


#: Finite-difference step along each row's direction (check_grads' eps): 1e-4
#: (in log10 M, that is 1e-4 dex).  The central difference's truncation error is
#: ~eps^2 f'''/6 ~ 1e-9, its rounding error ~1e-16 * 30 / eps ~ 3e-11, and the
#: converged solver's noise (|F| < 1e-12) / eps ~ 1e-8.
EPS = 1e-4

#: Per-element tolerance on the directional derivatives (atol and rtol; jax's
#: float64 default is 1e-5).  Measured over these rows: max |AD - FD| / (1 + |FD|)
#: = 1.4e-7 (the "power" rows; <= 4e-8 for the others), so 1e-6 leaves a margin
#: of ~7 while still catching any wrong term.
TOL = 1e-6


def _values(prescription, rows, dirs):
    """s -> the (BATCH, 4, 10) log quantities at rows + s dirs (the shared compile)."""
    g = _model.batch(prescription)
    return lambda s: g(s, rows, dirs)[0]


@pytest.mark.parametrize("prescription", _model.PRESCRIPTIONS)
def test_forward_gradients_match_finite_differences(prescription):
    # Forward mode, every prescription: each parameter on its own at two points,
    # and random directions over the prior box.  The forward derivative is
    # jax.jvp inside the shared compiled program (_model.make_batch);
    # jax.test_util.check_jvp compares it with central differences of the values
    # (what check_grads(..., modes=("fwd",)) does, without a second compile).
    # check_jvp multiplies atol and rtol by the number of output elements
    # (jax._src.public_test_util._assert_numpy_close); dividing by it makes TOL
    # a per-element tolerance.
    rows, dirs = _rows_and_directions(prescription)
    g = _model.batch(prescription)
    f = _values(prescription, rows, dirs)

    def f_jvp(primals, tangents):
        (s,), (t,) = primals, tangents
        logq, _, dlogq = g(s, rows, dirs)
        return logq, dlogq * t[:, None, None]

    s0 = np.zeros(_model.BATCH)
    out, tangent = f_jvp((s0,), (np.ones(_model.BATCH),))
    assert np.all(np.isfinite(np.asarray(out))), "non-finite values"
    assert np.all(np.isfinite(np.asarray(tangent))), "non-finite forward derivatives"
    size = np.asarray(out).size
    check_jvp(f, f_jvp, (s0,), atol=TOL / size, rtol=TOL / size, eps=EPS)


#: The prescriptions whose reverse mode is checked.  A reverse-mode compile of a
#: contracted model costs ~20 s of CPU here (the values with forward
#: derivatives ~10 s), so reverse mode is checked on "power" (rbar = r with nu
#: traced: the graph of "blumenthal86", which is "power" with the constant nu =
#: 1; and the mode NUTS uses when it samples nu) and on "none" (the scaled
#: halo).  "orbit_averaged", "gnedin04" and "gnedin11" differ from "power" only
#: in rbar inside the same Newton iteration and implicit step; their forward
#: mode is checked above.
REVERSE = ("none", "power")


@pytest.mark.parametrize("prescription", REVERSE)
def test_reverse_gradients_match_finite_differences(prescription):
    # Reverse mode (jax.vjp, compiled once for one row) on every row of the
    # forward test.  Per row b, <cotangent_b, d logq_b / ds_b> from the pullback
    # must equal the same contraction of the central difference; then
    # jax.test_util.check_vjp runs its own (all-row) inner-product test.
    rows, dirs = _rows_and_directions(prescription)
    f = _values(prescription, rows, dirs)

    @jax.jit
    def pullback_row(p, d, s, ct):
        _, pull = jax.vjp(lambda t: _model.log_quantities(p + t * d, prescription, False), s)
        return pull(ct)[0]

    def f_vjp(s):
        def pullback(ct):
            return (
                jnp.stack([pullback_row(rows[b], dirs[b], s[b], ct[b]) for b in range(len(s))]),
            )

        return f(s), pullback

    s0 = np.zeros(_model.BATCH)
    rng = np.random.default_rng(3)
    ct = rng.normal(size=np.shape(f(s0)))
    (rev,) = f_vjp(s0)[1](ct)
    rev = np.asarray(rev)
    assert np.all(np.isfinite(rev)), "non-finite reverse derivatives"
    fd = (np.asarray(f(s0 + EPS)) - np.asarray(f(s0 - EPS))) / (2.0 * EPS)
    expected = np.sum(ct * fd, axis=(1, 2))
    # TOL per element of the derivative (as in the forward test), summed over the row.
    bound = TOL * np.sum(np.abs(ct) * (1.0 + np.abs(fd)), axis=(1, 2))
    assert np.all(np.abs(rev - expected) <= bound), np.abs(rev - expected) / bound
    check_vjp(f, f_vjp, (s0,), atol=TOL, rtol=TOL, eps=EPS)


def _orbit_averaged_log_masses(a, w, log10_m200c, z):
    """ln M_DM(<r) and ln M_2D,DM(<R) at 0.1, 1 and 10 R_eff of a massive lens.

    "orbit_averaged" with traced A and w, and the default r_orbit (r_vir solved
    from z and the cosmology, so that its implicit derivative with respect to
    the halo mass and the redshift is in the graph too).  Stars of 2e11 Msun,
    R_eff = 6 kpc, n = 4 in a c200c = 7 halo.
    """
    halo = NFW.from_m200c(10.0**log10_m200c, 7.0, z, _model.COSMO)
    stars = Sersic(2.0e11, 6.0, 4.0)
    dm = contract_halo(
        halo, stars, "orbit_averaged", z=z, cosmology=_model.COSMO, orbit_scale=a, orbit_exponent=w
    )
    radii = 6.0 * jnp.array([0.1, 1.0, 10.0])
    return jnp.log(jnp.concatenate([dm.enclosed_mass(radii), dm.projected_mass(radii)]))


def test_check_grads_with_respect_to_orbit_scale_and_exponent():
    # jax.test_util.check_grads (forward and reverse mode, first order) with
    # respect to A and w of rbar = A r_vir (r / r_vir)^w (Gnedin et al. 2004,
    # from memory), a model's sampled response parameters, and log10 M200c and z
    # (which also move r_vir).  Same step and per-element tolerance as above
    # (measured: max |AD - FD| / (1 + |FD|) = 2e-8 per element, forward and
    # reverse); check_grads multiplies atol and rtol by the output size (6), so
    # divide.
    f = jax.jit(_orbit_averaged_log_masses)
    args = (1.2, 0.7, 13.0, 0.4)
    values = np.asarray(f(*args))
    assert np.all(np.isfinite(values)), values
    # A larger A, or a smaller w (r < r_vir here), moves rbar out, where the
    # galaxy is a smaller share of the mass: weaker contraction, less dark
    # matter at every radius here (the ordering of the named forms,
    # test_prescriptions.py).  Central differences, for the signs only.
    d_a = np.asarray(f(1.2 + EPS, *args[1:])) - np.asarray(f(1.2 - EPS, *args[1:]))
    d_w = np.asarray(f(1.2, 0.7 + EPS, *args[2:])) - np.asarray(f(1.2, 0.7 - EPS, *args[2:]))
    assert np.all(d_a < 0.0) and np.all(d_w > 0.0), (d_a, d_w)
    size = values.size
    check_grads(f, args, order=1, modes=("fwd", "rev"), atol=TOL / size, rtol=TOL / size, eps=EPS)


#: Newton residual bound.  The solver's claim is |F| < 1e-12; recomputing F
#: here adds ~2e-12 (the package's NFW mass has ~2e-12 relative error near
#: r = 1e-3 r_s, measured against mpmath, and it enters F directly), so 1e-10.
RESIDUAL_TOL = 1e-10


@pytest.mark.parametrize("prescription", [p for p in _model.PRESCRIPTIONS if p != "none"])
def test_newton_residual_on_prior_draws(prescription):
    # From the returned grid alone: for each knot r_f, invert M_DM = (1 - f)
    # M_i(r_i) for r_i (brentq on the NFW mass of nfw_m, not the package's), and
    # evaluate the response equation F = ln r_f - ln r_i + nu ln[M_gal(rbar_f) /
    # M_i(rbar_i) + 1 - f] (contract_halo's docstring).
    rows = prior_draws(_model.BATCH, seed=7)
    _, extras = _model.run(prescription, rows)
    worst = 0.0
    for j, p in enumerate(rows):
        a, w, nu = _model.orbit_parameters(prescription, p)
        rho_s, r_s = extras["rho_s"][j], extras["r_s"][j]
        norm = 4.0 * np.pi * rho_s * r_s**3
        f = 1.0 - extras["remaining"][j]
        r_orb = extras["r_orbit"][j]  # r_vir: rbar = A r_vir (r / r_vir)^w
        for k in range(_model.GRID_N):
            log_rf = extras["log_r0"][j] + _model.GRID_H * k
            target = np.log(np.exp(extras["log_mass"][j][k]) / ((1.0 - f) * norm))
            u = brentq(lambda v, t=target: np.log(nfw_m(np.exp(v))) - t, -60.0, 30.0, xtol=1e-15)
            log_ri = u + np.log(r_s)
            rbar_i = (
                np.exp(log_ri) if a is None else a * r_orb * np.exp(w * (log_ri - np.log(r_orb)))
            )
            m_i = norm * nfw_m(rbar_i / r_s)
            resid = log_rf - log_ri + nu * np.log(extras["galaxy_mass"][j][k] / m_i + 1.0 - f)
            worst = max(worst, abs(resid))
    assert worst < RESIDUAL_TOL, worst
