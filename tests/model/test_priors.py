"""Tests for lensinfer.model.priors.TabulatedLogDensity.

Comparison to outside truth: every reference below is built independently of
the class, from ``numpy.interp`` of the knots (the definition of a
piecewise-linear log density) and ``scipy.integrate.quad`` of its exponential,
segment by segment so that quad never straddles a kink.  The class's closed
forms (segment integrals :math:`e^{y_k} h \\varphi(b_k h)`, their inverse) are
never reused in a reference.  Sampling is checked with a Kolmogorov-Smirnov test
(scipy.stats.kstest) against a reference CDF built by Simpson integration.
Regression-style checks (jit, error messages) are marked as such.
"""

import dataclasses
import itertools
import math

import jax
import jax.numpy as jnp
import numpy as np
import pytest
from astropy.cosmology import Planck18
from scipy import integrate, stats
from scipy.optimize import brentq

from lensinfer.halo.abundance import log_mass_function_table
from lensinfer.model.priors import TabulatedLogDensity

# ------------------------------------------------------ cases and references

_GAUSS_X = np.linspace(-3.0, 5.0, 41)
_STEEP_X = np.linspace(0.0, 2.0, 21)


def _cases():
    """name -> (grid, log density up to a constant)."""
    grid, log_density = log_mass_function_table(0.4, 11.5, 15.0, Planck18)
    return {
        # A Gaussian-like log density: a parabola sampled at 41 knots.
        "gaussian": (_GAUSS_X, -0.5 * ((_GAUSS_X - 0.7) / 1.1) ** 2 + 3.0),
        # Steep: density falls by e^-60 across the support (e^-3 per segment).
        "steep": (_STEEP_X, -30.0 * _STEEP_X),
        # The halo-mass prior it is built for: ln dn/dlog10 M at z = 0.4.
        "halo_mass_function": (grid, log_density),
    }


CASES = _cases()


@dataclasses.dataclass(frozen=True)
class Case:
    """A test case: the knots, the prior, and its methods jitted once (JAX compiles
    per function and input shape, and compiling dominates this file's run time)."""

    name: str
    grid: np.ndarray
    y: np.ndarray
    prior: TabulatedLogDensity
    log_prob: object
    cdf: object
    icdf: object


@pytest.fixture(params=sorted(CASES), scope="module")
def case(request):
    grid, y = CASES[request.param]
    prior = TabulatedLogDensity(grid, y, request.param)
    jit = jax.jit
    return Case(
        request.param,
        grid,
        y,
        prior,
        jit(prior.log_prob),
        jit(prior.to_unit_cube),
        jit(prior.from_unit_cube),
    )


def _unnormalised(grid, y):
    """exp of the piecewise-linear interpolation, scaled so its maximum is 1."""
    ymax = float(np.max(y))
    return lambda s: math.exp(float(np.interp(s, grid, y)) - ymax)


_SEGMENT_CACHE = {}


def _segment_integrals(grid, y):
    """quad of the unnormalised density over each segment (epsrel 1e-13), memoised."""
    key = (np.asarray(grid).tobytes(), np.asarray(y).tobytes())
    if key not in _SEGMENT_CACHE:
        _SEGMENT_CACHE[key] = _quad_segments(grid, y)
    return _SEGMENT_CACHE[key]


def _quad_segments(grid, y):
    f = _unnormalised(grid, y)
    return np.array(
        [integrate.quad(f, a, b, epsabs=0.0, epsrel=1e-13)[0] for a, b in itertools.pairwise(grid)]
    )


def reference_log_norm(grid, y):
    """ln of the integral of exp(interp(y)) over the support (quad, per segment)."""
    return float(np.max(y)) + math.log(math.fsum(_segment_integrals(grid, y)))


def reference_cdf(grid, y, x):
    """The CDF at x by quad: whole segments below x plus the partial one."""
    seg = _segment_integrals(grid, y)
    total = math.fsum(seg)
    f = _unnormalised(grid, y)
    k = min(int(np.searchsorted(grid, x, side="right")) - 1, grid.size - 2)
    partial = integrate.quad(f, grid[k], x, epsabs=0.0, epsrel=1e-13)[0]
    return (math.fsum(seg[:k]) + partial) / total


def reference_cdf_table(grid, y, sub=64):
    """(x, CDF) on a fine grid holding every knot, by cumulative Simpson integration.

    With `sub` sub-intervals per segment the density is smooth between fine
    points; Simpson's error is negligible and linear interpolation of the CDF
    between fine points errs by ~(h/sub)^2 |p'| / 8: measured against the quad
    reference <= 3e-6 (steep case), far below the KS resolution (~1e-2 for 20000
    draws).
    """
    fine = np.concatenate(
        [np.linspace(a, b, sub + 1)[:-1] for a, b in itertools.pairwise(grid)] + [grid[-1:]]
    )
    p = np.exp(np.interp(fine, grid, y) - np.max(y))
    cdf = integrate.cumulative_simpson(p, x=fine, initial=0.0)
    return fine, cdf / cdf[-1]


# ------------------------------------------------------ normalisation and density


def test_normalisation_against_quad(case):
    # Comparison to scipy: quad of exp(log_prob) over each segment, summed, is 1.
    # quad's error on a smooth exponential segment is ~1e-15 relative (epsrel
    # 1e-13 asked); summing <= 350 segments adds <= 350 x 1.1e-16 = 4e-14.
    # Measured: |sum - 1| <= 2.2e-14 (halo table), <= 1e-15 (others).
    # Tolerance 1e-12: that, with margin -- and a trapezoid normalisation, the
    # obvious wrong implementation, would be off by ~(b h)^2/12 per segment (up to
    # 5e-4 for the halo table, 0.7 for the steep case), so "exactly normalised"
    # is what is tested.
    name, grid = case.name, case.grid

    def density(s):
        return float(jnp.exp(case.log_prob(s)))

    total = math.fsum(
        integrate.quad(density, a, b, epsabs=0.0, epsrel=1e-13)[0]
        for a, b in itertools.pairwise(grid)
    )
    assert abs(total - 1.0) < 1e-12, name


def test_log_prob_is_normalised_linear_interpolation(case):
    # log_prob(x) = interp(x; knots, y) - ln Z, with ln Z from quad (independent of
    # the class).  ln Z by quad is good to ~1e-13 (see above); tolerance 1e-11
    # absolute in the log, i.e. 1e-11 relative in the density.
    # Run un-jitted and jitted.
    grid, y = case.grid, case.y
    log_z = reference_log_norm(grid, y)
    rng = np.random.default_rng(1)
    x = np.concatenate([grid, rng.uniform(grid[0], grid[-1], 200)])
    expected = np.interp(x, grid, y) - log_z
    np.testing.assert_allclose(np.asarray(case.prior.log_prob(x)), expected, rtol=0, atol=1e-11)
    np.testing.assert_allclose(np.asarray(case.log_prob(x)), expected, rtol=0, atol=1e-11)


def test_log_prob_outside_support_is_minus_inf(case):
    grid = case.grid
    h = grid[1] - grid[0]
    x = np.array([grid[0] - h, grid[0] - 1e-9, grid[-1] + 1e-9, grid[-1] + 10 * h, *grid[[0, -1]]])
    lp = np.asarray(case.log_prob(x))
    assert np.all(lp[:4] == -np.inf)
    assert np.all(np.isfinite(lp[4:]))  # the support is closed


# ------------------------------------------------------ CDF and its inverse


def test_cdf_against_quad(case):
    # Comparison to scipy: the CDF at 7 points against quad of the reference
    # density.  Both are accurate to ~1e-14 absolute (CDF <= 1); tolerance 1e-12.
    # Run un-jitted and jitted.
    grid, y = case.grid, case.y
    lo, hi = grid[0], grid[-1]
    points = lo + (hi - lo) * np.array([0.0, 0.013, 0.1, 0.37, 0.5, 0.81, 1.0])
    expected = np.array([reference_cdf(grid, y, float(x)) for x in points])
    np.testing.assert_allclose(np.asarray(case.prior.to_unit_cube(points)), expected, atol=1e-12)
    np.testing.assert_allclose(np.asarray(case.cdf(points)), expected, atol=1e-12)


def test_unit_cube_round_trips(case):
    # to_unit_cube(from_unit_cube(u)) == u to 1e-12 (measured <= 2e-15), for u
    # anywhere in [0, 1].  The other direction is conditioned by 1/p(x): an
    # unavoidable ~1e-16 rounding in u becomes 1e-16/p(x) in x (where the steep
    # case's density is e^-50 the CDF is 1 to the last bit and x is lost), so
    # it is checked where p(x) >= 1e-2 (normalised), where 1e-12 is ~1e4 x the
    # expected rounding error (measured <= 6e-15 there).
    grid = case.grid
    u = np.linspace(0.0, 1.0, 257)
    np.testing.assert_allclose(np.asarray(case.cdf(case.icdf(u))), u, rtol=0, atol=1e-12)

    x = np.linspace(grid[0], grid[-1], 257)
    keep = np.exp(np.asarray(case.log_prob(x))) >= 1e-2
    assert keep.sum() > 10, case.name
    back_x = np.asarray(case.icdf(case.cdf(x)))
    np.testing.assert_allclose(back_x[keep], x[keep], rtol=0, atol=1e-12)


def test_unit_cube_ends_and_clipping(case):
    # Regression (limits): the CDF is 0 at and below the support, 1 (to rounding of the summed
    # segment masses, <= 1e-13) at and above it; the inverse maps 0 to the low end.
    grid = case.grid
    assert float(case.icdf(0.0)) == grid[0]
    c = np.asarray(case.cdf(np.array([grid[0] - 1.0, grid[0], grid[-1], grid[-1] + 1.0])))
    assert c[0] == 0.0 and c[1] == 0.0
    np.testing.assert_allclose(c[2:], 1.0, rtol=0, atol=1e-13)


def test_median_against_brentq(case):
    # Comparison to scipy: the median is the root of the quad reference CDF - 1/2
    # (brentq to 1e-13).  The reference CDF is good to ~1e-14 and the density at
    # the median is >= 0.36 in all cases, so the root is good to ~1e-13; tol 1e-10.
    # Run un-jitted (median() calls from_unit_cube directly).
    name, grid, y, prior = case.name, case.grid, case.y, case.prior
    root = brentq(
        lambda x: reference_cdf(grid, y, x) - 0.5, grid[0], grid[-1], xtol=1e-13, rtol=1e-15
    )
    assert abs(float(prior.median()) - root) < 1e-10, name


def test_describe():
    # Regression: the text the report prints.
    prior = TabulatedLogDensity(*CASES["halo_mass_function"], label="halo mass function")
    assert prior.describe() == "halo mass function on [11.5, 15]"
    assert (prior.low, prior.high) == (11.5, 15.0)


# ------------------------------------------------------ the b -> 0 limit


def test_flat_density_is_uniform():
    # All knots equal: every segment is in the b = 0 limit and the density is
    # uniform on [0, 4]: p = 1/4, CDF = x/4 (exact in float64 up to rounding).
    grid = np.linspace(0.0, 4.0, 5)
    prior = TabulatedLogDensity(grid, np.zeros(5))
    x = np.array([0.0, 0.3, 1.0, 2.5, 4.0])
    log_prob, cdf, icdf = (
        jax.jit(f) for f in (prior.log_prob, prior.to_unit_cube, prior.from_unit_cube)
    )
    np.testing.assert_allclose(np.asarray(log_prob(x)), -math.log(4.0), rtol=1e-14)
    np.testing.assert_allclose(np.asarray(cdf(x)), x / 4.0, atol=1e-15)
    u = np.array([0.0, 0.1, 0.5, 0.9, 1.0])
    np.testing.assert_allclose(np.asarray(icdf(u)), 4.0 * u, atol=1e-14)
    # Derivatives: dCDF/dx = p = 1/4 and dx/du = 1/p = 4, finite in the flat limit.
    dcdf = jax.jit(jax.vmap(jax.grad(prior.to_unit_cube)))(jnp.asarray(x[1:-1]))
    dicdf = jax.jit(jax.vmap(jax.grad(prior.from_unit_cube)))(jnp.asarray(u[1:-1]))
    np.testing.assert_allclose(np.asarray(dcdf), 0.25, rtol=1e-14)
    np.testing.assert_allclose(np.asarray(dicdf), 4.0, rtol=1e-14)


@pytest.mark.parametrize(
    "y",
    [
        [0.0, 0.0, 1.0, 1.0, 0.5],  # flat segments between sloped ones
        [0.0, 1e-10, 2e-10, 1.0, 1.0],  # |b h| = 1e-10: inside the series branch
        [0.0, 1e-7, 2e-7, 1.0, 1.0],  # |b h| = 1e-7: just outside it
    ],
)
def test_flat_and_nearly_flat_segments(y):
    # Comparison to scipy as above, on segments at and next to the b -> 0 limit,
    # where (e^s - 1)/s and log(1 + v)/v switch to their series: CDF vs quad to
    # 1e-12, both round trips to 1e-12 (density >= 0.1 everywhere here), and
    # finite gradients inside the flat segments.
    grid = np.linspace(0.0, 4.0, 5)
    y = np.asarray(y)
    prior = TabulatedLogDensity(grid, y)
    cdf, icdf = jax.jit(prior.to_unit_cube), jax.jit(prior.from_unit_cube)
    x = np.array([0.25, 0.5, 0.999, 1.5, 2.5, 3.3, 3.75])
    expected = np.array([reference_cdf(grid, y, float(s)) for s in x])
    np.testing.assert_allclose(np.asarray(cdf(x)), expected, atol=1e-12)
    np.testing.assert_allclose(np.asarray(icdf(cdf(x))), x, rtol=0, atol=1e-12)
    u = np.linspace(0.0, 1.0, 101)
    np.testing.assert_allclose(np.asarray(cdf(icdf(u))), u, rtol=0, atol=1e-12)
    for f in (prior.log_prob, prior.to_unit_cube):
        g = jax.jit(jax.vmap(jax.grad(f)))(jnp.asarray(x))
        assert np.all(np.isfinite(np.asarray(g)))


# ------------------------------------------------------ numpyro and gradients


def test_distribution_log_prob_cdf_icdf_and_support(case):
    # Regression: the numpyro distribution delegates to the table: equal up to XLA's fusion
    # rounding when compiled separately (rtol 1e-14, a few ulp).
    grid = case.grid
    d = case.prior.distribution()
    x = jnp.linspace(grid[0], grid[-1], 257)
    u = jnp.linspace(0.0, 1.0, 257)
    for ours, theirs, arg in (
        (d.log_prob, case.log_prob, x),
        (d.cdf, case.cdf, x),
        (d.icdf, case.icdf, u),
    ):
        np.testing.assert_allclose(
            np.asarray(jax.jit(ours)(arg)), np.asarray(theirs(arg)), rtol=1e-14, atol=1e-300
        )
    assert d.batch_shape == () and d.event_shape == ()
    assert float(d.support.lower_bound) == grid[0]
    assert float(d.support.upper_bound) == grid[-1]


def test_samples_pass_kolmogorov_smirnov(case):
    # 20000 draws from distribution().sample (seeded) against the *reference* CDF
    # (Simpson integration of exp(interp), not the class's own CDF -- testing
    # against that would only test jax.random.uniform, as sample is its inverse).
    # Threshold p > 1e-3: a correct sampler fails with probability 1e-3 for an
    # arbitrary seed (the seed is fixed, so the test is deterministic); with
    # 20000 draws the test rejects a CDF error of ~0.014 (1.95/sqrt(n)), much
    # smaller than any slope or normalisation mistake would make.  A negative
    # control shows the test has that power here.
    name, grid, y = case.name, case.grid, case.y
    draw = jax.jit(lambda k: case.prior.distribution().sample(k, (20000,)))
    samples = np.asarray(draw(jax.random.key(20240611)))
    assert samples.dtype == np.float64
    assert np.all((samples >= grid[0]) & (samples <= grid[-1]))
    fine, cdf = reference_cdf_table(grid, y)
    result = stats.kstest(samples, lambda s: np.interp(s, fine, cdf))
    assert result.pvalue > 1e-3, (name, result)
    # Negative control: the same draws against a uniform distribution on the support.
    uniform = stats.kstest(samples, stats.uniform(grid[0], grid[-1] - grid[0]).cdf)
    assert uniform.pvalue < 1e-10, name


def test_gradients_finite_and_consistent(case):
    # jax.grad of log_prob is finite inside and equals the segment slope b_k
    # (from the knots: (y_{k+1} - y_k)/h, to rounding: rtol 1e-9 -- the slope is a
    # difference of O(10) numbers divided by h = 0.01 for the halo table).
    # d CDF / dx must be the density (the fundamental theorem; rtol 1e-10).
    name, grid, y, prior = case.name, case.grid, case.y, case.prior
    mid = 0.5 * (grid[:-1] + grid[1:])
    slope = np.diff(y) / np.diff(grid)
    g = np.asarray(jax.jit(jax.vmap(jax.grad(prior.log_prob)))(jnp.asarray(mid)))
    assert np.all(np.isfinite(g)), name
    np.testing.assert_allclose(g, slope, rtol=1e-9, atol=1e-9)
    dcdf = np.asarray(jax.jit(jax.vmap(jax.grad(prior.to_unit_cube)))(jnp.asarray(mid)))
    density = np.exp(np.asarray(case.log_prob(mid)))
    np.testing.assert_allclose(dcdf, density, rtol=1e-10)


# ------------------------------------------------------ input validation


@pytest.mark.parametrize(
    ("grid", "log_density", "message"),
    [
        ([0.0, 1.0, 3.0], [0.0, 1.0, 2.0], "uniform and increasing"),
        ([2.0, 1.0, 0.0], [0.0, 1.0, 2.0], "uniform and increasing"),
        ([0.0, 1.0, 2.0], [0.0, np.nan, 2.0], "finite"),
        ([0.0, 1.0, 2.0], [0.0, np.inf, 2.0], "finite"),
        ([0.0, 1.0, 2.0], [0.0, 1.0], "equal length"),
        ([0.0], [0.0], "equal length >= 2"),
        ([[0.0, 1.0]], [[0.0, 1.0]], "1-D"),
    ],
)
def test_bad_input_raises(grid, log_density, message):
    # Regression: the constructor's validation and its messages.
    with pytest.raises(ValueError, match=message):
        TabulatedLogDensity(grid, log_density)


# ------------------------------------------- regression: a defect found and fixed


def test_inverse_cdf_finite_next_to_one_for_steep_segment():
    # The density falls by e^-50 per segment; u = 1 - 2^-53 is a valid unit-cube
    # coordinate (nested samplers may pass it); the answer must be finite and in
    # the support.
    prior = TabulatedLogDensity(np.linspace(0.0, 1.0, 3), [0.0, -50.0, -100.0])
    x = float(prior.from_unit_cube(1.0 - 2.0**-53))
    assert 0.0 <= x <= 1.0
