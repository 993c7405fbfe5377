"""Tests of lensinfer.profiles._special: F(x) and the Taylor windows about x = 1.

Comparison to outside truth:

- F(x) is Hernquist (1990, ApJ 356, 359) eq. 33, X(s); it equals
  arctan(sqrt(u)) / sqrt(u) with u = x^2 - 1 (for x < 1 the same expression with
  sqrt(u) imaginary is artanh(sqrt(1 - x^2)) / sqrt(1 - x^2) = arccosh(1/x) /
  sqrt(1 - x^2)), because int_0^1 dt / (1 + u t^2) = arctan(sqrt u) / sqrt u.
  That integral gives the exact power series F = sum_k (-u)^k / (2k + 1), from
  which every Taylor coefficient lensinfer hard-codes follows in exact rational
  arithmetic (``fractions``) — no sympy needed.
- The same coefficients are recomputed independently with mpmath (Cauchy
  contour integral of the closed forms, trapezoidal rule on a circle) and
  the values just inside and just outside the |x - 1| < NEAR_ONE (5e-2) window are
  compared with the closed forms evaluated in 40-digit arithmetic.
"""

import math
from fractions import Fraction

import jax
import jax.numpy as jnp
import numpy as np
import pytest
from jax.test_util import check_grads

from lensinfer.profiles import NFW, Hernquist, Jaffe, _special, hernquist, jaffe, nfw

mpmath = pytest.importorskip("mpmath")

DPS = 40  # digits for every mpmath evaluation; float64 needs ~17

# ------------------------------------------------------ exact power series


N_TERMS = 16  # power-series length kept in the exact arithmetic (need 7)


def _mul(a, b):
    out = [Fraction(0)] * N_TERMS
    for i, ai in enumerate(a):
        for j, bj in enumerate(b):
            if i + j < N_TERMS:
                out[i + j] += ai * bj
    return out


def _add(*ps):
    out = [Fraction(0)] * N_TERMS
    for p in ps:
        for i, v in enumerate(p):
            out[i] += v
    return out


def _scale(s, p):
    return [s * v for v in p]


def _poly(*c):
    return [Fraction(v) for v in c] + [Fraction(0)] * (N_TERMS - len(c))


def _divide(num, den, shift, n):
    """Power series of num / den where both start at d^shift (removable singularity)."""
    assert all(v == 0 for v in num[:shift] + den[:shift])
    a, b = num[shift:], den[shift:]
    q = []
    for k in range(n):
        q.append((a[k] - sum(q[j] * b[k - j] for j in range(k))) / b[0])
    return q


def _exact_series():
    """Taylor coefficients in d = x - 1 of every windowed function, as Fractions."""
    u = _poly(0, 2, 1)  # x^2 - 1 = 2d + d^2
    F = _poly(0)
    power = _poly(1)
    for k in range(N_TERMS):  # u^k starts at d^k, so N_TERMS terms are exact to d^(N_TERMS-1)
        F = _add(F, _scale(Fraction((-1) ** k, 2 * k + 1), power))
        power = _mul(power, u)
    one, x2 = _poly(1), _mul(_poly(1, 1), _poly(1, 1))
    return {
        "F": F[:12],
        # NFW: (1 - F) / (x^2 - 1)        (Wright & Brainerd 2000, eq. 11)
        "nfw_sigma": _divide(_add(one, _scale(-1, F)), u, 1, 12),
        # Hernquist eq. 32 bracket: [(2 + x^2) F - 3] / (1 - x^2)^2
        "hernquist_sigma": _divide(_add(_mul(_add(_poly(2), x2), F), _poly(-3)), _mul(u, u), 2, 12),
        # Hernquist eq. 37: x^2 (F - 1) / (1 - x^2)
        "hernquist_mass": _divide(_mul(x2, _add(F, _scale(-1, one))), _scale(-1, u), 1, 12),
        # Jaffe bracket: [1 - (2 - x^2) F] / (1 - x^2)
        "jaffe_sigma": _divide(
            _add(one, _scale(-1, _mul(_add(_poly(2), _scale(-1, x2)), F))), _scale(-1, u), 1, 12
        ),
    }


EXACT = _exact_series()

#: The coefficient tuples lensinfer hard-codes.
LIBRARY_SERIES = {
    "F": _special._F_SERIES,
    "nfw_sigma": nfw._SIGMA_SERIES,
    "hernquist_sigma": hernquist._SIGMA_SERIES,
    "hernquist_mass": hernquist._MASS_SERIES,
    "jaffe_sigma": jaffe._SIGMA_SERIES,
}

# --------------------------------------------------- mpmath closed forms


def _F_mp(x):
    """arctan(sqrt u)/sqrt u, u = x^2 - 1: Hernquist (1990) eq. 33 for real x, analytic near 1."""
    u = x * x - 1
    if u == 0:
        return mpmath.mpf(1)
    w = mpmath.sqrt(u)
    return mpmath.atan(w) / w


def _F_mp_hernquist_eq33(x):
    """Hernquist (1990) eq. 33 literally: sech^-1 and sec^-1 branches (real x only)."""
    x = mpmath.mpf(x)
    if x < 1:
        return mpmath.asech(x) / mpmath.sqrt(1 - x**2)
    if x == 1:
        return mpmath.mpf(1)
    return mpmath.asec(x) / mpmath.sqrt(x**2 - 1)


CLOSED_FORMS_MP = {
    "F": _F_mp,
    "nfw_sigma": lambda x: (1 - _F_mp(x)) / (x * x - 1),
    "hernquist_sigma": lambda x: ((2 + x * x) * _F_mp(x) - 3) / (1 - x * x) ** 2,
    "hernquist_mass": lambda x: x * x * (_F_mp(x) - 1) / (1 - x * x),
    "jaffe_sigma": lambda x: (1 - (2 - x * x) * _F_mp(x)) / (1 - x * x),
}

#: lensinfer's value of each windowed function, through the public methods
#: with unit parameters (so the test sees what a user sees).
_NFW_UNIT = NFW(rho_s=0.5, r_s=1.0)  # Sigma = (1 - F)/(x^2 - 1)
_HERNQUIST_SIGMA_UNIT = Hernquist(mass=2.0 * math.pi, scale_radius=1.0)  # Sigma = bracket
_HERNQUIST_MASS_UNIT = Hernquist(mass=1.0, scale_radius=1.0)  # M_2D = x^2 (F-1)/(1-x^2)
_JAFFE_UNIT = Jaffe(mass=4.0, scale_radius=1.0)  # Sigma = 1/s + (2/pi) bracket

LIBRARY_FUNCTIONS = {
    "F": _special.arccosh_ratio,
    "nfw_sigma": _NFW_UNIT.surface_density,
    "hernquist_sigma": _HERNQUIST_SIGMA_UNIT.surface_density,
    "hernquist_mass": _HERNQUIST_MASS_UNIT.projected_mass,
    "jaffe_sigma": lambda s: (_JAFFE_UNIT.surface_density(s) - 1.0 / s) * (0.5 * math.pi),
}

NAMES = list(EXACT)


def _exact_value(name, x):
    if x == 1.0:  # removable 0/0 of the closed forms: the series' constant term
        return float(EXACT[name][0])
    with mpmath.workdps(DPS):
        return float(mpmath.re(CLOSED_FORMS_MP[name](mpmath.mpf(x))))


# ------------------------------------------------------------------- F(x)

F_POINTS = [1e-6, 1e-3, 0.1, 0.5, 0.9, 0.98, 0.9899, 0.99, 0.995, 1.0 - 1e-9, 1.0]
F_POINTS += [1.0 + 1e-9, 1.005, 1.01, 1.0101, 1.02, 1.5, 2.0, 10.0, 1e3, 1e6]


@pytest.mark.parametrize("x", F_POINTS)
def test_arccosh_ratio_matches_hernquist_eq33_in_mpmath(x):
    # Hernquist (1990) eq. 33 in 40-digit arithmetic.  Tolerance 2e-14: at
    # |x - 1| = 1e-2 the arccosh / arccos of an argument within 1e-2 of 1
    # amplify one rounding of 1/x by ~1/(2|x-1|) = 50, i.e. ~1e-14; elsewhere the
    # error is a few ulp.
    with mpmath.workdps(DPS):
        exact = float(_F_mp_hernquist_eq33(x))
        assert float(mpmath.re(_F_mp(mpmath.mpf(x)))) == pytest.approx(exact, rel=1e-30, abs=0)
    got = float(_special.arccosh_ratio(x))
    assert got == pytest.approx(exact, rel=2e-14, abs=0)


def test_arccosh_ratio_derivative_matches_mpmath():
    # dF/dx from jax (through both branches and the series) against mpmath's
    # numerical derivative of eq. 33 (40 digits).  Tolerance 1e-11: the
    # closed-form derivative loses ~1/|x-1|^2 * 1e-16 near the window edge.
    xs = np.array([0.1, 0.5, 0.98, 0.995, 1.0, 1.003, 1.02, 3.0, 100.0])
    got = np.asarray(jax.jit(jax.vmap(jax.grad(_special.arccosh_ratio)))(jnp.asarray(xs)))
    with mpmath.workdps(DPS):
        exact = [float(mpmath.re(mpmath.diff(_F_mp, mpmath.mpf(x)))) for x in xs]
    np.testing.assert_allclose(got, exact, rtol=1e-11)


def test_arccosh_ratio_gradients_against_finite_differences():
    # jax.test_util.check_grads (central differences, eps 1e-4) in and out of
    # the window; 1e-6 is far above the O(eps^2) = 1e-8 difference error.
    xs = jnp.asarray([0.2, 0.992, 0.999, 1.0, 1.004, 1.5, 30.0])
    f = jax.jit(_special.arccosh_ratio)
    check_grads(f, (xs,), order=1, modes=["fwd", "rev"], atol=1e-6, rtol=1e-6)


# --------------------------------------------------- series coefficients


@pytest.mark.parametrize("name", NAMES)
def test_exact_series_agrees_with_mpmath_contour_taylor(name):
    # Independent check of the exact rational series: Taylor coefficients of
    # the closed form by Cauchy's integral, c_k = (1/N) sum_j f(1 + r w^j)
    # (r w^j)^-k with w = exp(2 pi i / N), in 40-digit mpmath.  The closed forms
    # are analytic for |d| < 1 (F = arctan(sqrt u)/sqrt u is even in sqrt u and
    # singular only at u = x^2 - 1 = -1, i.e. d = -1; the divisions by
    # (1 - x^2) are removable), so the trapezoidal rule on |d| = 1/4 converges
    # like (1/4)^N (Trefethen & Weideman 2014, SIAM Rev. 56, 385): N = 64
    # gives ~1e-38, and we assert 1e-25.
    exact = EXACT[name]
    n_nodes = 64
    with mpmath.workdps(DPS):
        radius = mpmath.mpf(1) / 4
        nodes = [radius * mpmath.expjpi(2 * mpmath.mpf(j) / n_nodes) for j in range(n_nodes)]
        values = [CLOSED_FORMS_MP[name](1 + z) for z in nodes]
        for k, c_exact in enumerate(exact):
            c_mp = mpmath.fsum(v * z ** (-k) for v, z in zip(values, nodes, strict=True)) / n_nodes
            c = mpmath.mpf(c_exact.numerator) / c_exact.denominator
            assert abs(mpmath.re(c_mp) - c) < mpmath.mpf("1e-25"), (name, k)
            assert abs(mpmath.im(c_mp)) < mpmath.mpf("1e-25"), (name, k)


@pytest.mark.parametrize("name", NAMES)
def test_library_series_coefficients_are_the_exact_rationals(name):
    # Each hard-coded coefficient must be the double nearest the exact
    # rational (Python's p / q division is correctly rounded): 1 ulp.
    lib = LIBRARY_SERIES[name]
    exact = EXACT[name][: len(lib)]
    assert len(lib) >= 6  # degree >= 5, as the window accuracy budget assumes
    for k, (c_lib, c_exact) in enumerate(zip(lib, exact, strict=True)):
        assert c_lib == pytest.approx(float(c_exact), rel=2.3e-16, abs=0.0), (name, k)


@pytest.mark.parametrize("name", NAMES)
def test_series_truncation_error_at_window_edge_is_below_1e_12(name):
    # The _special docstring budget: the first omitted term at |d| = NEAR_ONE
    # is ~1e-12 relative to the value.  Computed from the exact series.
    lib = LIBRARY_SERIES[name]
    d = _special.NEAR_ONE
    omitted = abs(float(EXACT[name][len(lib)])) * d ** len(lib)
    assert omitted / abs(float(EXACT[name][0])) < 2e-12


# ------------------------------------------- continuity across the window

EDGE = _special.NEAR_ONE
WINDOW_POINTS = [
    1.0 - EDGE * (1 + 1e-7),  # just outside, below
    1.0 - EDGE * (1 - 1e-7),  # just inside, below
    1.0 - 0.5 * EDGE,
    1.0 - 1e-7,
    1.0,
    1.0 + 1e-7,
    1.0 + 0.5 * EDGE,
    1.0 + EDGE * (1 - 1e-7),  # just inside, above
    1.0 + EDGE * (1 + 1e-7),  # just outside, above
    1.0 + 2.0 * EDGE,  # well outside: the closed form proper
    1.0 - 2.0 * EDGE,
]


@pytest.mark.parametrize("x", WINDOW_POINTS, ids=lambda x: f"{x:.9f}")
@pytest.mark.parametrize("name", NAMES)
def test_window_values_match_closed_forms_in_mpmath(name, x):
    # Values just inside (Taylor series) and just outside (closed form) the
    # window against the closed form in 40 digits.  Tolerance 1e-11: the series
    # truncation at the edge is < 2e-12 (test above) and the _special docstring
    # promises ~1e-12 for the closed forms at |x - 1| = 1e-2; 1e-11 leaves a
    # factor 5 for the final products with the profile prefactors.
    got = float(LIBRARY_FUNCTIONS[name](jnp.asarray(x)))
    assert got == pytest.approx(_exact_value(name, x), rel=1e-11, abs=0)


@pytest.mark.parametrize("name", NAMES)
def test_window_is_continuous_across_its_edges(name):
    # The jump across each edge (series on one side, closed form on the other,
    # 2e-9 apart) must be the function's own change, f'(x) * 2e-9, to 1e-11
    # relative of f: a discontinuity there would make NUTS gradients wrong.
    for sign in (-1.0, 1.0):
        x_in = 1.0 + sign * EDGE * (1 - 1e-7)
        x_out = 1.0 + sign * EDGE * (1 + 1e-7)
        f = LIBRARY_FUNCTIONS[name]
        jump = float(f(jnp.asarray(x_out))) - float(f(jnp.asarray(x_in)))
        expected = _exact_value(name, x_out) - _exact_value(name, x_in)
        assert abs(jump - expected) < 1e-11 * abs(_exact_value(name, 1.0))


# ---------------------------------------------------------------- helpers


def test_near_one_evaluates_the_direct_form_outside_the_window():
    # near_one's documented contract on the simplest closed form, y^2, whose
    # Taylor series about 1 is 1 + 2d + d^2 (exact): the result must be x^2
    # everywhere, the direct form outside the window and the series inside.
    xs = jnp.asarray([0.3, 0.95, 0.995, 1.0, 1.005, 1.05, 4.0])
    got = _special.near_one(xs, lambda y: y**2, (1.0, 2.0, 1.0))
    np.testing.assert_allclose(np.asarray(got), np.asarray(xs) ** 2, rtol=1e-15)


def test_safe_where_replaces_where_condition_holds():
    # Docstring: "Replace x by fill where cond holds".
    cond = jnp.asarray([True, False])
    got = _special.safe_where(cond, jnp.asarray([1.0, 2.0]), 9.0)
    np.testing.assert_array_equal(np.asarray(got), [9.0, 2.0])


def test_polyval_ascending_matches_numpy():
    # numpy.polynomial.polynomial.polyval uses the same ascending convention.
    coeffs = (0.5, -1.25, 3.0, 0.125)
    d = np.linspace(-0.3, 0.3, 7)
    got = np.asarray(_special.polyval_ascending(coeffs, jnp.asarray(d)))
    np.testing.assert_allclose(got, np.polynomial.polynomial.polyval(d, coeffs), rtol=1e-15)
