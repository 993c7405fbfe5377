"""Tests of lensinfer.stellar.prior: one-dimensional priors and the M/L prior builder.

The log densities and inverse CDFs are compared with scipy.stats (uniform and
norm); named IMFs must give exactly the imf_mass_factor values.
"""

import jax
import jax.numpy as jnp
import numpy as np
import pytest
from scipy import stats

from lensinfer.stellar import (
    BrokenPowerLawIMF,
    MassToLightPrior,
    ScalarPrior,
    imf_mass_factor,
    mass_to_light_prior,
)

from ._checks import assert_grads_match_fd

U = np.array([1e-10, 1e-3, 0.1, 0.37, 0.5, 0.9, 0.999, 1 - 1e-10])


def test_uniform_against_scipy():
    # scipy.stats.uniform(loc, scale): same parametrisation; exact arithmetic.
    p = ScalarPrior.uniform(-0.2, 0.5)
    ref = stats.uniform(loc=-0.2, scale=0.7)
    x = np.array([-0.3, -0.2, 0.0, 0.49, 0.5, 0.6])
    np.testing.assert_allclose(np.asarray(jax.jit(p.log_prob)(x)), ref.logpdf(x), rtol=1e-14)
    np.testing.assert_allclose(np.asarray(p.from_unit_cube(U)), ref.ppf(U), rtol=1e-14, atol=1e-15)
    assert float(p.median) == pytest.approx(ref.median())
    assert tuple(map(float, p.support)) == pytest.approx((-0.2, 0.5))


def test_normal_against_scipy():
    # scipy.stats.norm: logpdf to rounding; ndtri agrees with norm.ppf to
    # ~1e-15 relative in the centre and ~1e-13 in the 1e-10 tails (both are
    # Cephes-style rational approximations), hence rtol = 1e-12.
    p = ScalarPrior.normal(0.25, 0.05)
    ref = stats.norm(loc=0.25, scale=0.05)
    x = np.linspace(-0.1, 0.6, 9)
    np.testing.assert_allclose(np.asarray(p.log_prob(x)), ref.logpdf(x), rtol=1e-13)
    np.testing.assert_allclose(np.asarray(jax.jit(p.from_unit_cube)(U)), ref.ppf(U), rtol=1e-12)
    assert float(p.median) == pytest.approx(ref.median())
    assert float(p.from_unit_cube(0.5)) == pytest.approx(0.25, abs=1e-15)


def test_fixed_prior():
    p = ScalarPrior.fixed(0.1)
    assert p.is_fixed
    assert float(p.log_prob(0.1)) == 0.0
    assert float(p.log_prob(0.2)) == -np.inf
    np.testing.assert_array_equal(np.asarray(p.from_unit_cube(U)), np.full(U.shape, 0.1))


def test_scalar_prior_validation():
    with pytest.raises(ValueError, match="low < high"):
        ScalarPrior.uniform(0.5, 0.5)
    with pytest.raises(ValueError, match="sd > 0"):
        ScalarPrior.normal(0.0, -1.0)
    with pytest.raises(ValueError, match="finite"):
        ScalarPrior.fixed(float("nan"))


def test_named_imfs_give_their_mass_factor():
    # A named IMF stands for log10 imf_mass_factor(name, reference, age).
    salp = float(jnp.log10(imf_mass_factor("salpeter55")))
    p = mass_to_light_prior("fixed", imf="salpeter55")
    assert float(p.log10_alpha.loc) == salp
    assert p.label == "fixed(salpeter55)" and p.reference == "chabrier03"
    assert float(mass_to_light_prior("fixed", imf="chabrier03").log10_alpha.loc) == 0.0
    p = mass_to_light_prior("normal", imf="salpeter55", sd=0.05)
    assert float(p.log10_alpha.loc) == salp and float(p.log10_alpha.scale) == 0.05
    p = mass_to_light_prior("uniform", low="chabrier03", high="salpeter55")
    assert tuple(map(float, p.log10_alpha.support)) == pytest.approx((0.0, salp), abs=1e-15)
    # Objects work as well as names, and the age and reference are honoured.
    heavy = BrokenPowerLawIMF(3.0)
    p = mass_to_light_prior("fixed", imf=heavy, age_gyr=12.0, reference="kroupa01")
    expected = float(jnp.log10(imf_mass_factor(heavy, "kroupa01", 12.0)))
    np.testing.assert_allclose(float(p.log10_alpha.loc), expected, rtol=1e-14)
    assert p.reference == "kroupa01"


def test_numbers_and_gradient_prior():
    p = mass_to_light_prior("uniform", low=-0.1, high=0.4, eta=ScalarPrior.normal(0.0, 0.2))
    assert p.free_parameters == ("log10_alpha_imf", "eta_ml")
    la, eta = p.from_unit_cube(0.5, 0.5)
    assert float(la) == pytest.approx(0.15) and float(eta) == pytest.approx(0.0)
    expected = stats.uniform(-0.1, 0.5).logpdf(0.2) + stats.norm(0.0, 0.2).logpdf(0.1)
    np.testing.assert_allclose(float(p.log_prob(0.2, 0.1)), expected, rtol=1e-13)
    fixed_eta = mass_to_light_prior("normal", mean=0.1, sd=0.1, eta=0.3)
    assert fixed_eta.free_parameters == ("log10_alpha_imf",)
    assert float(fixed_eta.eta.loc) == 0.3
    no_gradient = mass_to_light_prior("normal", mean=0.1, sd=0.1)
    assert float(no_gradient.eta.loc) == 0.0 and no_gradient.eta.is_fixed
    # M* = 10^x M*_ref and the radial profile helper.
    np.testing.assert_allclose(float(MassToLightPrior.stellar_mass(0.25, 1e11)), 10**0.25 * 1e11)
    assert float(p.mass_to_light_profile(2.0, 4.0, 1.0)) == 2.0


@pytest.mark.parametrize(
    ("kwargs", "match"),
    [
        (dict(kind="lognormal"), "not a prior kind"),
        (dict(kind="fixed"), "exactly one of value"),
        (dict(kind="fixed", value=0.1, imf="salpeter55"), "exactly one of value"),
        (dict(kind="fixed", value=0.1, sd=0.1), "does not take sd"),
        (dict(kind="normal", mean=0.1), "needs sd"),
        (dict(kind="uniform", low=0.1), "needs low= and high="),
        (dict(kind="uniform", low=0.3, high=0.1), "low < high"),
        (dict(kind="uniform", low="salpeter", high=0.5), "low='salpeter'"),
        (dict(kind="fixed", imf="chabrier03", reference="chab"), "reference='chab'"),
    ],
)
def test_builder_errors_name_the_argument(kwargs, match):
    with pytest.raises(ValueError, match=match):
        mass_to_light_prior(**kwargs)


def test_prior_is_a_pytree():
    # The prior passes through jit as an argument and vmaps over u.
    p = mass_to_light_prior("normal", imf="salpeter55", sd=0.05)
    f = jax.jit(lambda prior, u: prior.from_unit_cube(u, 0.5)[0])
    out = jax.vmap(f, in_axes=(None, 0))(p, jnp.asarray(U))
    np.testing.assert_allclose(
        np.asarray(out), np.asarray(p.log10_alpha.from_unit_cube(U)), rtol=1e-14
    )
    leaves = jax.tree_util.tree_leaves(p)
    assert len(leaves) == 4  # loc/scale of each ScalarPrior; kind/reference/label are static


def _normal_logp_and_transform(x, u, mean, sd):
    prior = ScalarPrior.normal(mean, sd)
    return prior.log_prob(x) + prior.from_unit_cube(u)


def test_gradients():
    assert_grads_match_fd(_normal_logp_and_transform, (0.2, 0.3, 0.25, 0.05), forward=False)
