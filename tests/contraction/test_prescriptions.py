"""The halo-response prescriptions: their parameters, limits, orderings and errors."""

import functools

import numpy as np
import pytest

from lensinfer.contraction import PRESCRIPTIONS, Prescription
from lensinfer.contraction.prescriptions import resolve_prescription

from . import _model
from ._reference import ReferenceResponse

#: The massive elliptical of the issue: M200c = 10^13.3 Msun, c200c = 6, z = 0.4,
#: M* = 10^11.5 Msun, R_eff = 7 kpc, n = 4.
ELLIPTICAL = (13.3, 6.0, 0.4, 11.5, 7.0, 4.0)
I_REFF = int(np.argmin(np.abs(_model.RADII_FACTORS - 1.0)))  # RADII_FACTORS[I_REFF] == 1
INNER = _model.RADII_FACTORS <= 1.0 + 1e-12  # 0.01 to 1 R_eff
ENCLOSED, PROJECTED, DENSITY, SURFACE = range(4)


def _rows(base=ELLIPTICAL, **columns):
    """Rows of the elliptical with the given columns set to each of their values."""
    n = max((np.size(v) for v in columns.values()), default=1)
    out = np.repeat(_model.row(*base)[None, :], n, axis=0)
    for key, values in columns.items():
        out[:, _model.COLUMN[key]] = values
    return out


@functools.cache
def _run(prescription, key=()):
    kwargs = dict(key)
    return _model.run(prescription, _rows(**kwargs))


# ---------------------------------------------------------------------------
# The table of prescriptions.
# ---------------------------------------------------------------------------


def test_prescription_names():
    assert set(PRESCRIPTIONS) == set(_model.PRESCRIPTIONS)
    for name, p in PRESCRIPTIONS.items():
        assert isinstance(p, Prescription)
        assert p.name == name
        assert p.reference


@pytest.mark.parametrize(
    "name, expected",
    [
        ("none", (None, None, 0.0)),
        ("blumenthal86", (None, None, 1.0)),  # Blumenthal et al. (1986): rbar = r, nu = 1
        # Gnedin et al. (2004, ApJ 616, 16), section 3: A = 0.85, w = 0.8 (from memory).
        ("gnedin04", (0.85, 0.8, 1.0)),
        # Gnedin et al. (2011, arXiv:1108.5736): A = 1.6, w = 0.8 (from memory).
        ("gnedin11", (1.6, 0.8, 1.0)),
    ],
)
def test_named_parameters(name, expected):
    assert resolve_prescription(name) == expected


def test_user_parameters():
    assert resolve_prescription("orbit_averaged", orbit_scale=1.2, orbit_exponent=0.7) == (
        1.2,
        0.7,
        1.0,
    )
    assert resolve_prescription("power", response_index=-0.3) == (None, None, -0.3)


def test_unknown_name_lists_accepted():
    with pytest.raises(ValueError, match="unknown halo-response prescription 'adiabatic'") as err:
        resolve_prescription("adiabatic")
    for name in PRESCRIPTIONS:
        assert name in str(err.value)


@pytest.mark.parametrize(
    "name, kwargs, match",
    [
        ("power", {}, "'power' needs response_index"),
        ("orbit_averaged", {}, "needs orbit_scale .* and orbit_exponent"),
        ("orbit_averaged", dict(orbit_scale=1.0), "needs orbit_scale .* and orbit_exponent"),
        ("blumenthal86", dict(response_index=1.0), "response_index applies only to 'power'"),
        ("gnedin04", dict(orbit_scale=0.85), "apply only to 'orbit_averaged'"),
        ("power", dict(response_index=1.0, orbit_exponent=0.8), "apply only to 'orbit_averaged'"),
        ("none", dict(response_index=0.0), "response_index applies only to 'power'"),
    ],
)
def test_missing_or_extra_parameters(name, kwargs, match):
    with pytest.raises(ValueError, match=match):
        resolve_prescription(name, **kwargs)


# ---------------------------------------------------------------------------
# Limits that connect the prescriptions.
# ---------------------------------------------------------------------------


def test_orbit_averaged_with_unit_a_and_w_is_blumenthal86():
    # rbar = 1 * r_vir (r/r_vir)^1 = r: the same equation.  Only rounding in
    # exp(log A + log r_vir + w (x - log r_vir)) differs (measured <= 2e-13).
    got, _ = _run("orbit_averaged", (("orbit_scale", 1.0), ("orbit_exponent", 1.0)))
    want, _ = _run("blumenthal86")
    np.testing.assert_allclose(got, want, rtol=1e-11)


def test_orbit_averaged_with_published_a_and_w_is_gnedin():
    # The named forms are orbit_averaged with the published (A, w): same equation.
    for name, (a, w) in _model.ORBIT.items():
        got, _ = _run("orbit_averaged", (("orbit_scale", a), ("orbit_exponent", w)))
        np.testing.assert_allclose(got, _run(name)[0], rtol=1e-11, err_msg=name)


def test_power_with_nu_one_is_blumenthal86():
    # nu = 1 is the adiabatic invariant (Blumenthal et al. 1986; contract_halo's table).
    got, _ = _run("power", (("nu", 1.0),))
    np.testing.assert_allclose(got, _run("blumenthal86")[0], rtol=1e-13)


def test_power_with_nu_zero_is_none():
    # nu = 0: r_f = r_i, the dark matter is the halo times (1 - f), which "none"
    # returns in closed form (NFW: Navarro et al. 1997; projections: Wright &
    # Brainerd 2000, ApJ 534, 34, eqs. 11 and 13).  "power" holds the same thing
    # as a spline of ln M on the grid, so the comparison is the spline's
    # interpolation error on a smooth profile (measured: 1e-7 in M, 3e-6 in rho)
    # and the projection quadrature's (measured: 1.3e-7 in M_2D; the spline's
    # Sigma agrees with the scipy projection of (1 - f) rho_NFW to 1.1e-6).
    got, _ = _run("power", (("nu", 0.0),))
    want, _ = _run("none")
    for iq, name, rtol in [
        (ENCLOSED, "enclosed_mass", 1e-6),
        (PROJECTED, "projected_mass", 1e-6),
        (DENSITY, "density", 1e-5),
        (SURFACE, "surface_density", 1e-5),
    ]:
        np.testing.assert_allclose(got[:, iq], want[:, iq], rtol=rtol, err_msg=name)


#: Spline interpolation at a radius that is not a knot (r200c and r* fall between
#: knots): measured <= 9e-8 relative for these rows.
SHELL_RTOL = 1e-6


@pytest.mark.parametrize(
    "prescription, key",
    [
        ("blumenthal86", ()),
        ("power", (("nu", 2.0),)),
        ("power", (("nu", -0.3),)),
        ("gnedin04", ()),
        ("gnedin11", ()),
        ("orbit_averaged", (("orbit_scale", 1.2), ("orbit_exponent", 0.7))),
    ],
)
def test_the_shell_at_the_orbit_radius_r200c_does_not_move(prescription, key):
    # Mass conservation at large radius.  At the r* where rbar(r*) = r200c (r* =
    # r200c for rbar = r; r_vir (r200c / (A r_vir))^(1/w) for rbar = A r_vir
    # (r/r_vir)^w), M_gal(rbar) = f M200c by the
    # definition of f, so r_f / r_i = [M_i / (f M200c + (1 - f) M_i)]^nu = 1 at
    # r_i = r*: the shell stays and M_DM(<r*) = (1 - f) M_i(<r*).  For rbar = r
    # this is M_gal(<r200c) + M_DM(<r200c) = M200c.
    _, x = _run(prescription, key)
    f = x["galaxy_mass_r200c"] / x["m200c"]
    np.testing.assert_allclose(
        x["dm_mass_r_star"], (1.0 - f) * x["halo_mass_r_star"], rtol=SHELL_RTOL
    )
    if prescription in ("blumenthal86", "power"):
        np.testing.assert_allclose(x["r_star"], x["r200c"], rtol=1e-15)
        np.testing.assert_allclose(
            x["galaxy_mass_r200c"] + x["dm_mass_r_star"], x["m200c"], rtol=SHELL_RTOL
        )


NUS = np.array([-0.3, -0.2, -0.1, 0.0, 0.5, 1.0, 1.5, 2.0])  # documented range nu >= -0.3


def test_more_response_more_central_dark_matter():
    # r_f / r_i = (M_i / M_f)^nu with M_f > M_i where the galaxy dominates: a larger
    # nu pulls each shell further in (Dutton et al. 2007: nu < 0 expands, nu > 0
    # contracts).  So M_DM(<r) rises strictly with nu at 0.01-1 R_eff, lies above
    # the unresponsive halo for nu > 0 and below it for nu < 0.
    got, _ = _model.run("power", _rows(nu=NUS))
    none, _ = _run("none")
    m = got[:, ENCLOSED][:, INNER]
    assert np.all(np.diff(m, axis=0) > 0), np.diff(m, axis=0)
    base = none[0, ENCLOSED][INNER]
    assert np.all(m[NUS > 0] > base) and np.all(m[NUS < 0] < base)
    np.testing.assert_allclose(m[NUS == 0][0], base, rtol=1e-6)  # spline error, as above
    # The projected dark matter inside R_eff follows the same order.
    p = got[:, PROJECTED, I_REFF]
    assert np.all(np.diff(p) > 0), p


def test_ordering_of_contraction_strength():
    # For a massive elliptical: Blumenthal et al. (1986) contracts more than Gnedin
    # et al. (2004), which contracts more than Gnedin et al. (2011), and all
    # contract (the ordering reported in the literature; from memory).  Printed
    # (pytest -s) so the numbers can be quoted: M_DM(<R_eff) contracted over
    # uncontracted ("none", (1 - f) M_NFW) and over the DM-only NFW halo M_NFW,
    # in 3-D and in the cylinder.
    none, x_none = _run("none")
    remaining = x_none["remaining"][0]  # 1 - f: "none" is (1 - f) times the DM-only NFW halo
    factors = {}
    for name in ("blumenthal86", "gnedin04", "gnedin11"):
        q, _ = _run(name)
        factors[name] = (
            q[0, ENCLOSED, I_REFF] / none[0, ENCLOSED, I_REFF],
            q[0, PROJECTED, I_REFF] / none[0, PROJECTED, I_REFF],
        )
        print(
            f"{name}: M_DM(<R_eff) / M_DM,none(<R_eff) = {factors[name][0]:.3f} (3-D), "
            f"{factors[name][1]:.3f} (cylinder); / M_NFW,DM-only: "
            f"{factors[name][0] * remaining:.3f}, {factors[name][1] * remaining:.3f}"
        )
    for k in range(2):
        b, g4, g11 = (factors[n][k] for n in ("blumenthal86", "gnedin04", "gnedin11"))
        assert b > g4 > g11 > 1.0, factors


def test_no_shell_crossing_in_documented_range():
    # contract_halo documents "nu must exceed -1/2 for the shells not to cross".
    # d ln r_i / d ln r_f = (1 + nu g s_gal) / (1 + nu g s_i) with g = M_gal/M_f,
    # s = d ln M / d ln r (implicit-function theorem on the response equation).
    # The denominator stays positive for nu > -1/2 (s_i <= 2 for an NFW halo), but
    # the numerator needs nu > -1/(g s_gal): a Sérsic galaxy has s_gal -> 2 + 1/n
    # at its centre (3-D density ~ r^-(1 - 1/n); from memory), so for n = 2 the
    # shells cross (dM_DM/dr < 0, a negative density) below nu ~ -0.4.  The scipy
    # solver of _reference.py gives the same negative density; the docstring's
    # bound is the check here.
    rows = _rows(base=(12.5, 12.0, 0.2, 11.0, 3.0, 2.0), nu=[-0.3, -0.25, -0.2])
    _, extras = _model.run("power", rows)
    bad = [
        f"nu = {nu}: rho_DM < 0 at r/R_eff = {np.round(_model.RADII_FACTORS[s < 0], 4).tolist()}"
        for nu, s in zip(rows[:, _model.COLUMN["nu"]], extras["density_sign"], strict=True)
        if np.any(s <= 0)
    ]
    assert not bad, "; ".join(bad)


# ---------------------------------------------------------------------------
# The normalisation of the orbit-averaged radius: r_vir (default) or r200c.
# ---------------------------------------------------------------------------

#: A typical massive lens at z = 0.4: M200c = 1e13 Msun, c200c = 7, Sérsic stars
#: of 2e11 Msun, R_eff = 6 kpc, n = 4.
LENS = (13.0, 7.0, 0.4, np.log10(2.0e11), 6.0, 4.0)


@functools.cache
def _lens_reference():
    """The scipy solver's r_vir and r200c of the lens's halo (_reference.py)."""
    ref = ReferenceResponse(*LENS)
    return ref.r_vir, ref.r200


def test_orbit_radius_enters_only_through_a_times_its_power():
    # rbar = A r_orb (r / r_orb)^w = [A r_orb^(1 - w)] r^w: normalising by r200c
    # instead of r_vir is the same equation as A' = A (r200c / r_vir)^(1 - w) with
    # the default r_vir.  So "gnedin04" with r_orbit = r200c must equal
    # "orbit_averaged" (default r_vir) at A' = 0.85 (r200c / r_vir)^0.2, w = 0.8,
    # with r_vir and r200c from the scipy solver: exact up to rounding and the
    # r_vir solves (both ~1e-14), so 1e-11 as in the limits above.
    r_vir, r200 = _lens_reference()
    a_eff = 0.85 * (r200 / r_vir) ** 0.2
    rows = _rows(base=LENS, orbit_scale=a_eff, orbit_exponent=0.8)
    got = _model.evaluate("orbit_averaged", rows)
    want = _model.evaluate("gnedin04", _rows(base=LENS), orbit_radius="200c")
    np.testing.assert_allclose(got, want, rtol=1e-11)


def test_virial_normalisation_changes_the_contraction_by_percents():
    # The contraction ratio M_DM(<R_eff) / M_DM,none(<R_eff) of the lens, with
    # rbar normalised by r_vir (the default, as in Gnedin et al. 2004) and by
    # r200c (r_orbit = r200c, the package's earlier behaviour).  r_vir > r200c
    # (Delta_vir(0.4) ~ 133 < 200), so rbar grows by (r_vir / r200c)^(1 - w),
    # the galaxy's share of the mass inside rbar falls, and the contraction
    # weakens.
    #
    # Expected size: by the test above the change is that of A by the factor
    # q = (r_vir / r200c)^0.2 (r_vir / r200c from the scipy solver).  The
    # sensitivity of ln(ratio) to ln A is taken from the two published forms, which
    # differ only in A (0.85 and 1.6, w = 0.8): s = ln(ratio_04 / ratio_11) /
    # ln(1.6 / 0.85).  So ln(ratio_vir / ratio_r200c) ~ -s ln q.  This secant
    # slope over a factor 1.9 in A stands in for the local one at A = 0.85, so
    # agreement within 25% is asked (measured: 1.74% against the estimated 1.56%,
    # 11% apart); and the brief's "of order 1-3%" as a range.
    r_vir, r200 = _lens_reference()
    rows = _rows(base=LENS)
    none = _model.evaluate("none", rows)[0, ENCLOSED, I_REFF]
    vir04 = _model.evaluate("gnedin04", rows)[0, ENCLOSED, I_REFF] / none
    old04 = _model.evaluate("gnedin04", rows, orbit_radius="200c")[0, ENCLOSED, I_REFF] / none
    vir11 = _model.evaluate("gnedin11", rows)[0, ENCLOSED, I_REFF] / none
    change = vir04 / old04 - 1.0
    slope = np.log(vir04 / vir11) / np.log(1.6 / 0.85)
    expected = np.expm1(-slope * 0.2 * np.log(r_vir / r200))
    print(
        f"r_vir / r200c = {r_vir / r200:.4f}; gnedin04 M_DM(<R_eff) / M_DM,none: "
        f"{vir04:.4f} (r_vir), {old04:.4f} (r200c): change {100 * change:.2f}% "
        f"(estimate {100 * expected:.2f}%)"
    )
    assert -0.03 < change < -0.01, change
    np.testing.assert_allclose(change, expected, rtol=0.25)
