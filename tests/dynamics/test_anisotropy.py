"""Anisotropy models and their Mamon & Łokas (2005) kernels.

Comparison to outside truth: each kernel K(u) against (a) the integral that
defines it, K(u) = (f(uR) / u) int_1^u (1 - beta(w) / w^2) w / (f(w) sqrt(w^2 - 1)) dw
(the inner integral left after exchanging the Jeans and projection integrals;
derived in the module docstring), evaluated with 20-digit mpmath tanh-sinh
quadrature; (b) for constant beta, Mamon & Łokas (2005, eq. A16, from memory)
written with incomplete beta functions, B(x; a, 1/2) continued analytically to
a < 0 through B(x; a, b) = x^a / a 2F1(a, 1 - b; a + 1; x) (DLMF 8.17.7).
"""

import jax
import jax.numpy as jnp
import mpmath as mp
import numpy as np
import pytest

from lensinfer.dynamics import ConstantAnisotropy, Isotropic, OsipkovMerritt

mp.mp.dps = 20

#: t = acosh(u) from u = 1 + 5e-7 to u = 1e5 (the line-of-sight range used).
T_VALUES = [1e-3, 0.05, 0.5, 1.0, 2.0, 3.0, 5.0, 7.0, 10.0, 12.2]


def kernel_by_definition(t, beta_fn, log_f):
    """K at u = cosh t; w = cosh(theta) makes dw / sqrt(w^2 - 1) = d theta."""
    t = mp.mpf(t)
    u = mp.cosh(t)

    def integrand(theta):
        w = mp.cosh(theta)
        return (1 - beta_fn(w) / w**2) * w / mp.exp(log_f(w))

    return mp.exp(log_f(u)) / u * mp.quad(integrand, mp.linspace(0, t, 6))


def kernel_ml05(u, beta):
    """Mamon & Łokas (2005) eq. A16 with analytically continued incomplete betas."""
    u, beta = mp.mpf(u), mp.mpf(beta)
    x = 1 / u**2

    def inc_beta(a, b):
        return x**a / a * mp.hyp2f1(a, 1 - b, a + 1, x)

    complete = (mp.mpf(3) / 2 - beta) * mp.sqrt(mp.pi) * mp.gamma(beta - 0.5) / mp.gamma(beta)
    return (
        u ** (2 * beta - 1)
        / 2
        * (complete + beta * inc_beta(beta + 0.5, 0.5) - inc_beta(beta - 0.5, 0.5))
    )


def evaluate(anisotropy, t, R=1.0):
    return np.asarray(jax.jit(lambda a, t: a.los_kernel(t, R))(anisotropy, jnp.asarray(t)))


def test_isotropic_kernel_is_sqrt_one_minus_u_minus_2():
    # Mamon & Łokas (2005) isotropic kernel sqrt(1 - 1/u^2), u = cosh t, in
    # 20-digit arithmetic (in float64 it cancels at small t); tanh t is exact
    # to rounding, 1e-14.
    want = [float(mp.sqrt(1 - 1 / mp.cosh(t) ** 2)) for t in T_VALUES]
    np.testing.assert_allclose(evaluate(Isotropic(), T_VALUES), want, rtol=1e-14)


@pytest.mark.parametrize("beta", [-3.0, -0.5, 0.0, 0.5, 0.99])
def test_constant_beta_kernel_matches_its_defining_integral(beta):
    # 20 Gauss–Legendre nodes reach 1.2e-7 at beta = -3 (the worst case,
    # measured 1.2e-7) and < 1e-9 for -2 <= beta <= 0.5; 3e-7 leaves a margin.
    got = evaluate(ConstantAnisotropy(beta), T_VALUES)
    want = [
        float(kernel_by_definition(t, lambda w: beta, lambda w: 2 * beta * mp.log(w)))
        for t in T_VALUES
    ]
    np.testing.assert_allclose(got, want, rtol=3e-7)


@pytest.mark.parametrize("beta", [-0.6, 0.3, 0.9])
def test_constant_beta_kernel_matches_mamon_lokas_closed_form(beta):
    # Non-half-integer beta (the closed form's removable singularities sit at
    # beta = 1/2 - k).  Same 3e-7 tolerance as above; the two references agree
    # with each other to 1e-18.
    got = evaluate(ConstantAnisotropy(beta), T_VALUES)
    want = [float(kernel_ml05(mp.cosh(t), beta)) for t in T_VALUES]
    np.testing.assert_allclose(got, want, rtol=3e-7)


@pytest.mark.parametrize("u_a", [0.1, 1.0, 10.0])
def test_osipkov_merritt_kernel_matches_its_defining_integral(u_a):
    # Closed form of Mamon & Łokas (2005) against the defining integral with
    # beta = w^2 / (w^2 + u_a^2), f = 1 + w^2 / u_a^2 (R = 1): closed form
    # against 20 digits, so 1e-12 (a few hundred ulp of cancellation-free
    # arithmetic).
    got = evaluate(OsipkovMerritt(u_a), T_VALUES, R=1.0)
    want = [
        float(
            kernel_by_definition(
                t, lambda w: w**2 / (w**2 + u_a**2), lambda w: mp.log1p((w / u_a) ** 2)
            )
        )
        for t in T_VALUES
    ]
    np.testing.assert_allclose(got, want, rtol=1e-12)


def test_limits_reduce_to_isotropic():
    # beta = 0 is isotropic (the quadrature is exact for cosh: 1e-14); r_a -> infinity
    # is isotropic up to O(u^2 / u_a^2), 1e-14 for u <= 1e5 at r_a = 1e12 R.
    iso = evaluate(Isotropic(), T_VALUES)
    np.testing.assert_allclose(evaluate(ConstantAnisotropy(0.0), T_VALUES), iso, rtol=1e-13)
    np.testing.assert_allclose(evaluate(OsipkovMerritt(1e12), T_VALUES), iso, rtol=1e-13)


def test_beta_profiles_and_integrating_factors():
    # beta(r) = r^2 / (r^2 + r_a^2) (Osipkov 1979; Merritt 1985) and
    # f = exp int 2 beta / r dr: d ln f / d ln r = 2 beta (checked by forward
    # differentiation, exact to rounding).
    r = jnp.asarray([0.1, 1.0, 3.0, 30.0])
    for model in (Isotropic(), ConstantAnisotropy(-0.4), OsipkovMerritt(3.0)):
        dlnf = jax.vmap(jax.grad(lambda lnr, m=model: m.log_integrating_factor(jnp.exp(lnr))))(
            jnp.log(r)
        )
        np.testing.assert_allclose(dlnf, 2 * model.beta_at(r), rtol=1e-14, atol=1e-15)
    np.testing.assert_allclose(OsipkovMerritt(3.0).beta_at(3.0), 0.5, rtol=1e-15)


def test_parameters_are_traceable_and_validated():
    # The parameters are pytree data (vmap over beta and r_a works) ...
    betas = jnp.asarray([-0.5, 0.0, 0.5])
    k = jax.vmap(lambda b: ConstantAnisotropy(b).los_kernel(1.0, 1.0))(betas)
    assert k.shape == (3,) and np.isfinite(k).all()
    k = jax.vmap(lambda ra: OsipkovMerritt(ra).los_kernel(1.0, 1.0))(jnp.asarray([0.5, 5.0]))
    assert k.shape == (2,)
    assert jax.tree_util.tree_leaves(Isotropic()) == []
    # ... and concrete values outside the physical range are refused.
    with pytest.raises(ValueError, match="beta < 1"):
        ConstantAnisotropy(1.0)
    with pytest.raises(ValueError, match="r_anisotropy > 0"):
        OsipkovMerritt(0.0)
