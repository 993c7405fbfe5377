"""Every profile, parametrised: scipy quadrature, autodiff, jit, vmap and pytrees.

Comparison to outside truth (scipy): for every profile with a closed-form
density (``_profile_cases.DENSITY_CASES``; the Sersic is deprojected and has
its own scipy tests in test_sersic.py) the three integrated quantities must be
the integrals of the density:

    M(<r)    = 4 pi int_0^r rho s^2 ds                   (volume integral)
    Sigma(R) = 2 int_0^inf rho(sqrt(R^2 + z^2)) dz        (line of sight)
    M_2D(<R) = 2 pi int_0^R Sigma R' dR'                  (area integral of
               lensinfer's own Sigma), and also, independently,
             = 4 pi int rho r^2 w(r; R) dr                (shell fractions)

over 1e-3 to 1e3 scale radii, including R inside the |R/r_s - 1| < 1e-2
Taylor window.  The references are scipy.integrate.quad / quad_vec with
epsrel 1e-13 / 1e-12 on unit-width pieces (``_profile_reference``); their own
accuracy, ~1e-13, is checked first against textbook closed forms.

Tolerances: 1e-11 for closed-form profiles (float64 closed forms carry ~1e-13,
the reference ~1e-13; 1e-11 leaves a factor ~100); the documented 1e-8 for
profiles lensinfer integrates numerically (GeneralizedNFW).

Regression-style properties (no outside truth): autodiff against finite
differences (jax.test_util.check_grads) and against the exact identities
dM/dr = 4 pi r^2 rho, dM_2D/dR = 2 pi R Sigma; jit vs eager; vmap over radii
and parameters; pytree round trips; hypothesis properties (monotone masses,
M_2D >= M_3D).
"""

import functools
import math

import _profile_reference as ref
import jax
import jax.numpy as jnp
import numpy as np
import pytest
from _profile_cases import (
    ALL_CASES,
    BATCHED,
    DENSITY_CASES,
    EVALUATE,
    FAMILIES,
    METHODS,
    SERSIC_CASES,
    SURFACE_DENSITY,
    cases_of,
    check_each,
    ids,
)
from hypothesis import given, settings
from hypothesis import strategies as st
from jax.test_util import check_grads

from lensinfer._constants import G_KPC_KMS2_PER_MSUN as G

#: Radii in units of the scale radius: 1e-3 ... 1e3, the Taylor window about 1
#: (inside, and just outside at 1.0101), and r_s (1 - 1e-10), where a sampler
#: lands as readily as anywhere else.  One length for every test, so each
#: profile class compiles once.
X_STD = (1e-3, 1e-2, 0.1, 0.995, 1.0 - 1e-10, 1.0, 1.005, 1.0101, 10.0, 100.0, 1e3)
#: Sersic: the validated range 1e-2 ... 1e2 R_eff, kept to 20 R_eff so that
#: Sigma(R) of n = 1/2 (a Gaussian) stays far from underflow.
X_SERSIC = (1e-2, 0.03, 0.3, 0.997, 1.0 - 1e-10, 1.0, 1.004, 1.0101, 3.0, 10.0, 20.0)
CLOSED_RTOL = 1e-11
JIT_RTOL = 1e-12  # jit vs eager vs vmap; see test_jit_matches_eager_and_pytrees_round_trip
DOCUMENTED_QUADRATURE_RTOL = 1e-8  # _quadrature.py and gnfw.py docstrings


def _rtol(case):
    return CLOSED_RTOL if case.closed_form else DOCUMENTED_QUADRATURE_RTOL


def _x(case):
    return np.array(X_SERSIC if case in SERSIC_CASES else X_STD)


def _radii(case):
    return _x(case) * case.scale


def _lib(case, key, r=None, profile=None):
    r = _radii(case) if r is None else r
    profile = case.profile() if profile is None else profile
    return np.asarray(EVALUATE(profile, jnp.asarray(r, dtype=jnp.float64))[key])


def _depth(case, r):
    """e-folds in ln r below r for the volume / area integrals.

    Below the scale radius the integrands fall as e^{-(3 - inner slope) v};
    45 such e-folds leave < 3e-20 out.  Between r and the scale radius they
    fall at least as fast as flat (NFW-like outer slope 3), so those
    ln(r / scale) e-folds are added.
    """
    return 45.0 / (3.0 - case.inner_slope) + max(0.0, math.log(np.max(r) / case.scale))


# ---------------------------------------------------------- test of the test


def test_reference_quadrature_reproduces_textbook_closed_forms():
    # The scipy references against closed forms that need no quadrature:
    # the SIS (Binney & Tremaine 2008, eq. 4.103), Hernquist (1990) eqs. 3,
    # 32, 37 and NFW / Wright & Brainerd (2000) eqs. 11, 13, away from x = 1
    # where the numpy closed forms themselves are accurate to ~1e-14; at small
    # x the NFW against Wright & Brainerd in mpmath.
    # Asserted 1e-12: a factor 10 below CLOSED_RTOL.
    sigma = 220.0

    def sis(r):
        return ref.sis_density(r, sigma, G)

    for R in (1e-2, 1.0, 1e2):
        assert ref.volume_mass(sis, R, depth=45.0) == pytest.approx(
            2 * sigma**2 * R / G, rel=1e-12, abs=0
        )
        assert ref.line_of_sight(sis, R, 1.0, 2.0) == pytest.approx(
            sigma**2 / (2 * G * R), rel=1e-12, abs=0
        )
        assert ref.cylinder_mass_from_density(sis, R, 1.0, 2.0) == pytest.approx(
            math.pi * sigma**2 * R / G, rel=1e-12, abs=0
        )

    def hern(r):
        return ref.hernquist_density(r, 1.0, 1.0)

    for s in (1e-3, 0.3, 3.0, 1e3):
        assert ref.volume_mass(hern, s) == pytest.approx(
            ref.hernquist_mass(s, 1.0, 1.0), rel=1e-12, abs=0
        )
        assert ref.line_of_sight(hern, s, 1.0, 4.0) == pytest.approx(
            ref.hernquist_sigma(s, 1.0, 1.0), rel=1e-12, abs=0
        )
        assert ref.cylinder_mass_from_density(hern, s, 1.0, 4.0) == pytest.approx(
            ref.hernquist_cylinder_mass(s, 1.0, 1.0), rel=1e-12, abs=0
        )
        assert ref.area_mass(lambda R: ref.hernquist_sigma(R, 1.0, 1.0), s) == pytest.approx(
            ref.hernquist_cylinder_mass(s, 1.0, 1.0), rel=1e-12, abs=0
        )

    def nfw(r):
        return ref.nfw_density(r, 1.0, 1.0)

    for x in (0.3, 3.0, 1e3):  # the numpy cylinder mass cancels at x << 1
        assert ref.line_of_sight(nfw, x, 1.0, 3.0) == pytest.approx(
            ref.wright_brainerd_sigma(x, 1.0, 1.0), rel=1e-12, abs=0
        )
        assert ref.cylinder_mass_from_density(nfw, x, 1.0, 3.0) == pytest.approx(
            ref.wright_brainerd_cylinder_mass(x, 1.0, 1.0), rel=1e-12, abs=0
        )
    pytest.importorskip("mpmath")
    for x in (1e-3, 1e-2, 0.995, 1.0, 1.005):
        sig, m2d = ref.wright_brainerd_mp(x)
        assert ref.line_of_sight(nfw, x, 1.0, 3.0) == pytest.approx(2 * sig, rel=1e-12, abs=0)
        assert ref.cylinder_mass_from_density(nfw, x, 1.0, 3.0) == pytest.approx(
            4 * math.pi * m2d, rel=1e-12, abs=0
        )
    # The vectorised area integral (used on lensinfer's own Sigma below).
    s = np.array([1e-3, 0.3, 3.0, 1e3])
    got = ref.area_mass_vectorised(
        lambda R: np.array([ref.hernquist_sigma(v, 1.0, 1.0) for v in R]), s, depth=45.0
    )
    np.testing.assert_allclose(
        got, [ref.hernquist_cylinder_mass(v, 1.0, 1.0) for v in s], rtol=1e-12
    )


# ------------------------------------------------------ scipy consistency


@pytest.mark.parametrize("case", DENSITY_CASES, ids=ids(DENSITY_CASES))
def test_density_is_the_published_formula(case):
    # Same formula typed twice (paper -> numpy vs lensinfer -> jax): a few ulp.
    r = _radii(case)
    np.testing.assert_allclose(_lib(case, "density"), [case.rho(v) for v in r], rtol=1e-14)


@pytest.mark.parametrize("case", DENSITY_CASES, ids=ids(DENSITY_CASES))
def test_enclosed_mass_is_volume_integral_of_density(case):
    r = _radii(case)
    expected = [ref.volume_mass(case.rho, v, depth=_depth(case, v)) for v in r]
    np.testing.assert_allclose(_lib(case, "enclosed_mass"), expected, rtol=_rtol(case))


@pytest.mark.parametrize("case", DENSITY_CASES, ids=ids(DENSITY_CASES))
def test_surface_density_is_line_of_sight_integral_of_density(case):
    r = _radii(case)
    expected = [ref.line_of_sight(case.rho, v, case.scale, case.outer_slope) for v in r]
    np.testing.assert_allclose(_lib(case, "surface_density"), expected, rtol=_rtol(case))


@pytest.mark.parametrize("case", DENSITY_CASES, ids=ids(DENSITY_CASES))
def test_projected_mass_is_shell_fraction_integral_of_density(case):
    r = _radii(case)
    expected = [
        ref.cylinder_mass_from_density(case.rho, v, case.scale, case.outer_slope) for v in r
    ]
    np.testing.assert_allclose(_lib(case, "projected_mass"), expected, rtol=_rtol(case))


@pytest.mark.parametrize("case", DENSITY_CASES, ids=ids(DENSITY_CASES))
def test_projected_mass_is_area_integral_of_surface_density(case):
    # lensinfer's own Sigma, integrated by scipy's quad_vec: checks that the
    # library's M_2D and Sigma describe the same profile.
    r = _radii(case)
    p = case.profile()

    def sigma(R):
        return np.asarray(SURFACE_DENSITY(p, jnp.asarray(R)))

    expected = ref.area_mass_vectorised(sigma, r, depth=_depth(case, r))
    np.testing.assert_allclose(_lib(case, "projected_mass"), expected, rtol=_rtol(case))


# ------------------------------------------------- derivative identities


def _check_mass_derivatives(case):
    # d M_2D / dR = 2 pi R Sigma and d M / dr = 4 pi r^2 rho (exact), compared
    # as the dimensionless slopes d ln M / d ln r (what Jeans and contraction
    # solvers use).  Closed forms, including the Sersic M_2D and Sigma:
    # autodiff should carry only rounding, 1e-10 relative.  gNFW: the
    # quadrature's documented 1e-8, absolute on the slope.  Sersic M(<r): M
    # and rho come from different numerical rules (two table columns, or two
    # quadratures) whose ~1e-7 errors are not each other's derivative; 1e-4
    # absolute on the slope (measured <= 2e-5, at n = 1/2, r ~ 2 R_eff, table).
    r = _radii(case)
    out = EVALUATE(case.profile(), jnp.asarray(r))
    m2 = np.asarray(out["projected_mass"])
    m3 = np.asarray(out["enclosed_mass"])
    slopes = {
        "M_2D": (
            np.asarray(out["d_projected_mass"]) * r / m2,
            2 * np.pi * r**2 * np.asarray(out["surface_density"]) / m2,
        ),
        "M_3D": (
            np.asarray(out["d_enclosed_mass"]) * r / m3,
            4 * np.pi * r**3 * np.asarray(out["density"]) / m3,
        ),
    }
    quadrature = case in DENSITY_CASES and not case.closed_form
    for name, (ad, exact) in slopes.items():
        if quadrature:
            tol = {"rtol": 0, "atol": DOCUMENTED_QUADRATURE_RTOL}
        elif case in SERSIC_CASES and name == "M_3D":
            tol = {"rtol": 0, "atol": 1e-4}
        else:
            tol = {"rtol": 1e-10}
        np.testing.assert_allclose(ad, exact, err_msg=name, **tol)


@pytest.mark.parametrize("family", FAMILIES)
def test_mass_derivatives_are_exact_identities(family):
    check_each(cases_of(family), _check_mass_derivatives)


@functools.cache
def _log_quantities(family):
    """Jitted theta -> ln(all four quantities), one per profile family.

    theta = (ln p for positive parameters, p for slopes / Sersic n, ln r).
    """
    case = cases_of(family)[0]

    def f(*theta):
        *params, ln_r = theta
        values = [
            jnp.exp(t) if is_log else t for t, is_log in zip(params, case.log_params, strict=True)
        ]
        profile = case.build(*values)
        r = jnp.exp(ln_r)
        return jnp.concatenate([jnp.log(getattr(profile, m)(r)) for m in METHODS])

    return jax.jit(f)


def _check_grads(case):
    # jax.test_util.check_grads, forward and reverse mode, with respect to
    # every parameter and the radius at once (one random direction, seeded
    # inside check_grads), for all four quantities (concatenated).  Variables
    # are O(1) (logs of positive parameters and of r; slopes and the Sersic n
    # as they are), outputs are ln of each quantity.  Central differences with
    # eps = 1e-4 have O(eps^2) ~ 1e-8 error; rtol = atol = 1e-6.
    theta = [
        math.log(p) if is_log else p for p, is_log in zip(case.params, case.log_params, strict=True)
    ]
    args = (*theta, jnp.log(jnp.asarray(_radii(case))))
    f = _log_quantities(case.family)
    check_grads(f, args, order=1, modes=["fwd", "rev"], atol=1e-6, rtol=1e-6)


@pytest.mark.parametrize("family", FAMILIES)
def test_gradients_against_finite_differences(family):
    check_each(cases_of(family), _check_grads)


# ---------------------------------------------------- jit, vmap, pytrees


def _check_jit_and_pytree(case):
    # jit vs eager: XLA may fuse and reorder floating-point operations.  The
    # target is ~1e-13; where a closed form is a difference with ~1e3
    # cancellation (Jaffe M_2D at 1e3 a, the Sersic deprojected mass at
    # 1e-2 R_eff) that reordering shows up at a few 1e-13, so 1e-12 relative.
    # Pytree round trip: identical numbers, and every constructor parameter is
    # a leaf (so jit traces it rather than baking it in).
    p = case.profile()
    r = jnp.asarray(_radii(case))
    for method in METHODS:
        eager = np.asarray(getattr(p, method)(r))
        np.testing.assert_allclose(
            _lib(case, method, profile=p), eager, rtol=JIT_RTOL, err_msg=method
        )
        assert np.shape(getattr(p, method)(r[3])) == ()  # scalar in, scalar out
    leaves, treedef = jax.tree_util.tree_flatten(p)
    rebuilt = jax.tree_util.tree_unflatten(treedef, leaves)
    assert type(rebuilt) is type(p)
    for method in METHODS:
        np.testing.assert_array_equal(
            _lib(case, method, profile=rebuilt), _lib(case, method, profile=p)
        )
    for value in case.params:
        assert any(np.array_equal(np.asarray(leaf), value) for leaf in leaves), value


@pytest.mark.parametrize("family", FAMILIES)
def test_jit_matches_eager_and_pytrees_round_trip(family):
    check_each(cases_of(family), _check_jit_and_pytree)


def _check_vmap(case):
    # A batch of three profiles (stacked pytree leaves, positive parameters
    # scaled by 0.8, 1, 1.3) under jit(vmap over profiles of vmap over scalar
    # radii) equals each profile evaluated on the radius array; JIT_RTOL.
    profiles = [
        case.build(
            *[p0 * s if lg else p0 for p0, lg in zip(case.params, case.log_params, strict=True)]
        )
        for s in (0.8, 1.0, 1.3)
    ]
    batch = jax.tree_util.tree_map(lambda *leaves: jnp.stack(leaves), *profiles)
    r = jnp.asarray(_radii(case))
    batched = BATCHED(batch, r)
    for k, q in enumerate(profiles):
        for method in METHODS:
            np.testing.assert_allclose(
                np.asarray(batched[method][k]),
                _lib(case, method, profile=q),
                rtol=JIT_RTOL,
                err_msg=method,
            )


@pytest.mark.parametrize("family", FAMILIES)
def test_vmap_over_radii_and_parameters(family):
    check_each(cases_of(family), _check_vmap)


# ------------------------------------------------------------- hypothesis

HYPOTHESIS = settings(max_examples=15, deadline=None, derandomize=True, database=None)


@st.composite
def _case_and_radii(draw):
    case = draw(st.sampled_from(ALL_CASES))
    lo, hi = (-2.0, 1.3) if case in SERSIC_CASES else (-3.0, 3.0)
    n = len(X_STD)  # the compiled radius-array length
    ln_x = sorted(draw(st.lists(st.floats(lo, hi), min_size=n, max_size=n)))
    return case, case.scale * 10.0 ** np.array(ln_x)


@HYPOTHESIS
@given(_case_and_radii())
def test_masses_increase_with_radius(case_radii):
    # M(<r) and M_2D(<R) are integrals of non-negative densities; allow
    # rounding (1e-13 relative) between equal radii.
    case, r = case_radii
    for method in ("enclosed_mass", "projected_mass"):
        m = _lib(case, method, r)
        assert np.all(np.diff(m) >= -1e-13 * m[1:]), (case.name, method, r, m)


@HYPOTHESIS
@given(_case_and_radii())
def test_cylinder_holds_at_least_the_sphere(case_radii):
    # The cylinder of radius R contains the sphere of radius R: M_2D >= M_3D.
    case, r = case_radii
    m3, m2 = _lib(case, "enclosed_mass", r), _lib(case, "projected_mass", r)
    assert np.all(m2 >= m3 * (1.0 - 1e-12)), (case.name, r, m2, m3)


@HYPOTHESIS
@given(_case_and_radii())
def test_surface_density_is_positive_and_falls(case_radii):
    # Every profile here has a density that falls outwards, so Sigma does too.
    case, r = case_radii
    sigma = _lib(case, "surface_density", r)
    assert np.all(sigma > 0), (case.name, r, sigma)
    assert np.all(np.diff(sigma) <= 1e-13 * sigma[:-1]), (case.name, r, sigma)
