"""The priors a referee would accept: halo mass function, reference IMF, baryon budget.

Each check compares lensinfer's built model with something computed
independently: the Tinker et al. (2008) mass function of
tests/_abundance_reference.py with scipy quadrature, the package's own IMF
mass factor applied by hand, and direct evaluation of the prior over the
whole prior box.
"""

from __future__ import annotations

import math

import _abundance_reference as ref
import jax
import jax.numpy as jnp
import numpy as np
import pytest

import lensinfer
from lensinfer.comparison.evidence import (
    LOG_ZERO,
    NonFiniteLikelihood,
    UnitCubeProblem,
    importance_evidence,
    problem_of,
)
from lensinfer.model import build_model
from lensinfer.spec import builtin_model_names, parse_observation, read_model

OBS = """
[system]
name = "invented test lens"
z_lens = {z_lens}
z_source = 1.6
cosmology = "Planck18"

[ring]
einstein_radius_arcsec = {{ value = 1.5, sd = {ring_sd} }}

[light]
profile = "sersic"
r_eff_arcsec = {{ value = 1.2, sd = 0.04 }}
sersic_index = {{ value = 4.0, sd = 0.25 }}

[stellar_mass]
log10_mstar_msun = {{ value = {log10_mstar}, sd = 0.1 }}
reference_imf = "{imf}"
{kinematics}
"""

KINEMATICS = """
[kinematics]
sigma_kms = { value = 250.0, sd = 12 }
aperture_radius_arcsec = 1
seeing_fwhm_arcsec = 0.8
"""


def observation(*, z_lens=0.4, ring_sd=0.02, log10_mstar=11.4, imf="chabrier03", kinematics=False):
    text = OBS.format(
        z_lens=z_lens,
        ring_sd=ring_sd,
        log10_mstar=log10_mstar,
        imf=imf,
        kinematics=KINEMATICS if kinematics else "",
    )
    return parse_observation(text, "invented.toml")


def mass_function_weighted_median(log10_mstar_obs, sd_obs, z):
    """Median log10 M200c of p(Mh | M*_obs), from the test reference and scipy.

    p(log Mh | M*_obs) ∝ dn/dlog Mh × N(M*_obs | SHMR(Mh), sqrt(scatter^2 +
    sd_obs^2)) on [11.5, 15]: the stellar-to-halo relation's scatter and the
    SED error add in quadrature (a Gaussian convolved with a Gaussian).  The
    mass function is the independent Tinker et al. (2008) reference of
    tests/_abundance_reference.py (adaptive-quadrature sigma, growth ODE,
    linear Table 2 interpolation), on a 0.05-dex grid (its log is smooth on
    that scale: the median moves by < 0.005 dex with a 0.025-dex grid); the
    relation is lensinfer's Moster et al. (2013), checked against the paper in
    tests/halo/test_stellar_halo.py.
    """
    from scipy.integrate import cumulative_trapezoid

    from lensinfer.halo import stellar_mass_from_halo

    coarse = np.arange(11.5, 15.0 + 1e-9, 0.05)
    log_dn = np.log(ref.dn_dlnm(10.0**coarse, z, ref.camb_log_power()))
    x = np.linspace(11.5, 15.0, 3501)
    dn = np.exp(np.interp(x, coarse, log_dn))
    med, scatter = stellar_mass_from_halo(10.0**x, z, "moster13")
    s = np.sqrt(np.asarray(scatter) ** 2 + sd_obs**2)
    p = dn * np.exp(-0.5 * ((log10_mstar_obs - np.log10(np.asarray(med))) / s) ** 2) / s
    cdf = cumulative_trapezoid(p, x, initial=0.0)
    return float(np.interp(0.5, cdf / cdf[-1], x))


# ------------------------------------------------------------------ 1. halo mass function


def test_default_halo_prior_is_the_mass_function():
    lens = build_model(read_model("no-response"), observation())
    assert "halo mass function 'tinker08'" in lens.prior_descriptions()["log10_m200c"]
    uniform = read_model("no-response").text.replace(
        'abundance = "tinker08"', 'abundance = "uniform_in_log"'
    )
    from lensinfer.spec import parse_model

    lens_u = build_model(parse_model(uniform, "uniform.toml"), observation())
    assert "uniform in log" in lens_u.prior_descriptions()["log10_m200c"]


def test_halo_prior_density_follows_the_reference_mass_function():
    # The halo-mass prior's log density against the independent Tinker et al.
    # (2008) reference at z = 0.4 (tests/_abundance_reference.py): differences of
    # ln density between masses agree to 0.02 (the two agree to < 1% in
    # dn/dlnM, 0.01 in ln, between Table 2 rows; 0.02 allows the 0.01-dex
    # tabulation on top).
    lens = build_model(read_model("no-response"), observation(z_lens=0.4))
    prior = lens.plan[0].prior({})
    x = np.array([11.8, 12.5, 13.0, 13.7, 14.4, 14.9])
    ours = np.asarray(prior.log_prob(jnp.asarray(x)))
    expected = np.log(ref.dn_dlnm(10.0**x, 0.4, ref.camb_log_power()))
    np.testing.assert_allclose(ours - ours[0], expected - expected[0], atol=0.02)


def test_mass_function_weighted_posterior_median_recovered():
    # Done-when of the issue: M*_ref = 10^11.4 at z = 0.4, an almost
    # uninformative ring (sd 50%), NUTS posterior median log10 M200c within
    # 0.15 dex of the mass-function-weighted median computed independently
    # (mass_function_weighted_median above, which ignores the ring and the IMF factor:
    # with a 50% ring they move the halo mass by much less than 0.15 dex).
    obs = observation(z_lens=0.4, ring_sd=0.75, log10_mstar=11.4)
    dt = lensinfer.sample("no-response", obs, chains=2, warmup=300, draws=400, seed=3)
    got = float(np.median(dt.posterior["log10_m200c"].values))
    expected = mass_function_weighted_median(11.4, 0.1, 0.4)
    # The independent value is ~13.4 (13.0 / 13.4 / 13.9 for 11.2 / 11.4 / 11.6
    # with the SED error, as the review that asked for this prior measured).
    assert 13.2 < expected < 13.6
    # MC error of a median from ~400 effective draws of a 0.3-dex-wide
    # posterior: ~0.02 dex; the tolerance is the 0.15 dex.
    assert abs(got - expected) < 0.15, (got, expected)


# ------------------------------------------------------------- 2. reference IMF reaches SHMR


def test_salpeter_quoted_sed_mass_gives_the_same_posterior_density():
    # One lens, its SED mass quoted under Chabrier (2003) and under Salpeter
    # (1955): log10 M*_ref(Salp) = log10 M*_ref(Chab) + F with F the package's
    # own IMF mass factor (0.224 dex).  With the stellar mass fixed to the
    # Chabrier IMF (imf_factor = { imf = "chabrier03" }), the two models are
    # the same physics in two coordinates, so log prior + log likelihood at
    # corresponding points must differ by one constant: ln of the Jacobian
    # (0, since the shift is a translation) plus nothing.  Before the IMF
    # reached the stellar-to-halo prior, the Salpeter version placed the
    # relation 0.224 dex low (1.5 sigma of its scatter).  Tolerance 1e-9:
    # identical arithmetic but for the shift and float64 rounding.
    from lensinfer.spec import parse_model
    from lensinfer.stellar import imf_mass_factor

    text = read_model("no-response").text.replace(
        'imf_factor = { prior = "uniform", low = -0.3, high = 0.5 }',
        'imf_factor = { imf = "chabrier03" }',
    )
    spec = parse_model(text, "named-imf.toml")
    shift = math.log10(float(imf_mass_factor("salpeter55", reference="chabrier03")))
    chab = build_model(spec, observation(log10_mstar=11.4))
    salp = build_model(spec, observation(log10_mstar=11.4 + shift, imf="salpeter55"))
    rng = np.random.default_rng(4)
    for _ in range(5):
        p = {
            "log10_m200c": rng.uniform(12.5, 14.0),
            "log10_mstar_ref": rng.uniform(11.1, 11.6),
            "log10_c200c": rng.uniform(0.6, 1.0),
            "r_eff_kpc": 1.2 * chab.kpc_per_arcsec,
            "sersic_index": 4.0,
        }
        q = dict(p, log10_mstar_ref=p["log10_mstar_ref"] + shift)

        def total(lens, v):
            return float(lens.log_prior(v) + sum(lens.log_likelihood_terms(v).values()))

        assert total(salp, q) == pytest.approx(total(chab, p), abs=1e-9)
        # The physical stellar mass is the same in both coordinates.
        assert float(salp.derive(q)["mstar_msun"]) == pytest.approx(
            float(chab.derive(p)["mstar_msun"]), rel=1e-12
        )


# ---------------------------------------------------------------------- 3. baryon budget


def test_baryon_budget_excludes_too_massive_galaxies():
    # f_b = Omega_b / Omega_m = 0.04897 / 0.30966 = 0.1581 for astropy's
    # Planck18 (Planck 2018 paper VI, Table 2); M* = f_b M200c is the edge.
    lens = build_model(read_model("gnedin04"), observation())
    assert lens.baryon_fraction == pytest.approx(0.04897 / 0.30966, rel=1e-12)
    base = {
        "log10_m200c": 12.0,
        "log10_c200c": 0.9,
        "log10_imf_factor": 0.0,
        "r_eff_kpc": 6.0,
        "sersic_index": 4.0,
    }
    edge = 12.0 + math.log10(lens.baryon_fraction)
    inside = dict(base, log10_mstar_ref=edge - 0.01)
    outside = dict(base, log10_mstar_ref=edge + 0.01)
    assert float(lens.log_constraint(inside)) == 0.0
    assert float(lens.log_constraint(outside)) == -math.inf
    assert np.isfinite(float(lens.log_prior(inside)))
    assert float(lens.log_prior(outside)) == -math.inf
    # Outside the budget the physics is evaluated at the edge: finite values and
    # gradients, so NUTS never sees a NaN.
    d = lens.derive(outside)
    assert all(np.isfinite(float(v)) for v in d.values())
    g = jax.grad(lambda v: sum(lens.log_likelihood_terms(v).values()))(outside)
    assert all(np.isfinite(float(v)) for v in g.values())


@pytest.mark.parametrize("name", builtin_model_names())
def test_no_nan_log_density_over_the_prior_box(name):
    # 10^4 random points of the whole prior box (the unit cube through the
    # prior transform, the space the nested sampler explores) of every built-in
    # model, on a lens with a ring, an SED mass and an aperture dispersion:
    # the log prior and log likelihood are finite, or -inf exactly where the
    # baryon budget excludes the point; never NaN.
    lens = build_model(read_model(name), observation(kinematics=True))
    u = jax.random.uniform(
        jax.random.key(11), (10_000, len(lens.plan)), minval=1e-9, maxval=1 - 1e-9
    )

    def one(ui):
        p = lens.prior_transform(ui)
        ll = sum(lens.log_likelihood_terms(p).values())
        return ll, lens.log_prior(p), lens.baryon_budget_ok(p)

    ll, lp, ok = (np.asarray(a) for a in jax.jit(jax.vmap(one))(u))
    assert not np.any(np.isnan(ll)), f"{np.isnan(ll).sum()} NaN log-likelihoods"
    assert not np.any(np.isnan(lp)), f"{np.isnan(lp).sum()} NaN log-priors"
    assert np.all(np.isfinite(ll))
    np.testing.assert_array_equal(np.isfinite(lp), ok)


def test_evidence_refuses_nan_and_reads_the_budget_as_zero_likelihood():
    names = ("a",)

    def nan_at_half(u):
        return jnp.where(u[0] > 0.5, jnp.nan, 0.0)

    problem = UnitCubeProblem(names, nan_at_half, to_unit_cube=lambda p: p["a"][:, None])
    with pytest.raises(NonFiniteLikelihood, match="NaN"):
        importance_evidence(problem, {"a": np.linspace(0.1, 0.9, 200)}, n_samples=2000)
    # -inf (outside a restricted prior) becomes the finite LOG_ZERO for the samplers.
    from lensinfer.comparison.evidence import _safe

    assert float(_safe(jnp.asarray(-jnp.inf))) == LOG_ZERO
    assert math.isnan(float(_safe(jnp.asarray(jnp.nan))))


def test_evidence_of_a_restricted_prior_is_normalised():
    # Toy with a closed form: flat likelihood L = 1 on the allowed half u < 0.5
    # of the box (the prior restricted to it, volume 1/2).  The restricted prior
    # integrates to one, so ln Z = ln 1 = 0 once the volume is divided out;
    # without the correction the estimate would be ln(1/2) = -0.69.  The
    # importance estimate's error here is ~0.01 (2000 draws); 0.05 allowed.
    def log_l(u):
        return jnp.where(u[0] < 0.5, 0.0, -jnp.inf)

    problem = UnitCubeProblem(
        ("a",), log_l, to_unit_cube=lambda p: p["a"][:, None], log_prior_volume=math.log(0.5)
    )
    post = {"a": np.random.default_rng(0).uniform(0.0, 0.5, 400)}
    ev = importance_evidence(problem, post, n_samples=4000)
    assert ev.ln_z == pytest.approx(0.0, abs=0.05)


def test_problem_of_a_lens_carries_the_prior_volume():
    lens = build_model(read_model("gnedin04"), observation())
    problem = problem_of(lens)
    # The budget removes a small share of the default prior box (about 0.2%
    # measured for this lens); the volume is ln of the allowed share.
    assert problem.log_prior_volume == lens.log_prior_volume
    assert -0.1 < lens.log_prior_volume <= 0.0
