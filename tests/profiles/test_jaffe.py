"""Jaffe sphere: comparison with Jaffe (1983, MNRAS 202, 995) and scipy quadrature.

The 3-D density and mass are Jaffe's eqs. (from memory) rho = M a / (4 pi r^2
(r + a)^2), M(r) = M r / (r + a).  The projected quantities are checked
against scipy integrals of that density (line of sight, and the shell-fraction
form of the cylinder mass), because we do not trust our memory of the paper's
projected formulas; the cylinder mass is also checked against its closed form
M s [pi/2 - s X(s)] with Hernquist's (1990) X(s) (eq. 33), re-derived by hand.
"""

import math

import _profile_reference as ref
import jax.numpy as jnp
import numpy as np
import pytest
from scipy import optimize

from lensinfer.profiles import Jaffe

MASS, A = 1.0e11, 3.0
PROFILE = Jaffe(MASS, A)
S_ALL = np.array([1e-3, 1e-2, 0.1, 0.5, 0.9, 0.995, 1.0, 1.005, 1.1, 2.0, 10.0, 100.0, 1e3])


def _rho(r):
    return ref.jaffe_density(r, MASS, A)


def test_density_and_mass():
    r = S_ALL * A
    np.testing.assert_allclose(
        np.asarray(PROFILE.density(jnp.asarray(r))), [_rho(x) for x in r], rtol=1e-14
    )
    np.testing.assert_allclose(
        np.asarray(PROFILE.enclosed_mass(jnp.asarray(r))),
        [ref.jaffe_mass(x, MASS, A) for x in r],
        rtol=1e-14,
    )


@pytest.mark.parametrize("s", S_ALL)
def test_surface_density_is_line_of_sight_integral(s):
    # scipy quad of 2 int rho dz (reference accurate to ~1e-13, see
    # _profile_reference); 1e-11 as for every closed form.
    expected = ref.line_of_sight(_rho, s * A, A, 4.0)
    assert float(PROFILE.surface_density(s * A)) == pytest.approx(expected, rel=1e-11, abs=0)


@pytest.mark.parametrize("s", S_ALL)
def test_cylinder_mass_closed_form_and_quadrature(s):
    # M_2D = M s [pi/2 - s X(s)] (numpy, Hernquist's X) and scipy's
    # shell-fraction integral of the density; 1e-11.
    closed = MASS * s * (0.5 * math.pi - s * ref.hernquist_x(s))
    quad = ref.cylinder_mass_from_density(_rho, s * A, A, 4.0)
    got = float(PROFILE.projected_mass(s * A))
    if 0.01 < s < 100:  # the numpy closed form cancels (~s^2 1e-16) outside
        assert got == pytest.approx(closed, rel=1e-11, abs=0)
    assert got == pytest.approx(quad, rel=1e-11, abs=0)


def test_projected_half_mass_radius():
    # The docstring states R_eff = 0.7447 a, attributed to Jaffe (1983).  We
    # find the root of M_2D(R) = M/2 twice: on lensinfer's closed form, and on
    # scipy's shell-fraction integral of the density (independent; accurate to
    # ~1e-13, so the root to ~1e-13 a).  Found: 0.744728343174 a.
    root_quad = optimize.brentq(
        lambda s: (
            ref.cylinder_mass_from_density(lambda r: ref.jaffe_density(r, 1.0, 1.0), s, 1.0, 4.0)
            - 0.5
        ),
        0.5,
        1.0,
        xtol=1e-14,
    )
    root_lib = optimize.brentq(
        lambda s: float(PROFILE.projected_mass(s * A)) / MASS - 0.5, 0.5, 1.0, xtol=1e-14
    )
    assert root_lib == pytest.approx(root_quad, abs=1e-10, rel=0)
    assert root_quad == pytest.approx(0.744728343174, abs=1e-11, rel=0)
    # The docstring's 4-decimal value, to half a unit of its last digit.
    assert root_quad == pytest.approx(0.7447, abs=5e-5, rel=0)


def test_total_projected_mass():
    # M_2D / M = s [pi/2 - s X(s)] = 1 - pi/(4 s) + 2/(3 s^2) + O(s^-3) (expansion
    # of arctan; checked against mpmath while writing this test).  At s = 1e4
    # the O(s^-3) remainder is ~1e-12 and the closed form's own cancellation
    # ~s * 1e-16 = 1e-12, so 1e-10 absolute.
    s = 1e4
    got = float(PROFILE.projected_mass(s * A)) / MASS
    assert got == pytest.approx(1.0 - math.pi / (4 * s) + 2 / (3 * s**2), abs=1e-10, rel=0)
