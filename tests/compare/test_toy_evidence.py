"""Both ln Z estimators on a toy with a closed-form evidence.

A Gaussian likelihood L(x) = prod_k N(x_k; mu_k, s_k) under a uniform prior on
[lo, hi]^d has

    Z = prod_k [Phi((hi - mu_k)/s_k) - Phi((lo - mu_k)/s_k)] / (hi - lo)

(the Gaussian integral over a box; e.g. Skilling 2006's Gaussian test
problems, and the stack notes' 2-D check).  Each estimator must land within
2.5 of its own reported standard deviations: with fixed seeds the test is
deterministic, and 2.5 sigma leaves room for the honest 1-in-80 scatter of a
correct error bar while a biased estimator or a wrong error bar (off by the
~0.1-nat scale of the nested uncertainty) fails.
"""

import math

import jax.numpy as jnp
import numpy as np
import pytest
from scipy.stats import norm, truncnorm

from lensinfer.comparison import UnitCubeProblem, importance_evidence, nested_evidence

LO, HI = -5.0, 5.0
MU = np.array([0.5, -1.0, 2.0])
SD = np.array([0.3, 0.5, 1.0])
NAMES = ("x0", "x1", "x2")


def _log_l(u):
    x = LO + (HI - LO) * u
    return jnp.sum(-0.5 * ((x - MU) / SD) ** 2 - jnp.log(SD) - 0.5 * math.log(2 * math.pi))


def _to_unit_cube(p):
    return jnp.stack([(p[n] - LO) / (HI - LO) for n in NAMES], axis=-1)


PROBLEM = UnitCubeProblem(NAMES, _log_l, _to_unit_cube)
TRUE_LN_Z = float(np.sum(np.log((norm.cdf((HI - MU) / SD) - norm.cdf((LO - MU) / SD)) / (HI - LO))))


def test_closed_form_is_what_we_think():
    # ln Z ~ d ln(1/10) when the box holds the whole Gaussian: 3 * -2.3026,
    # less the slice of the third Gaussian (sd 1 at 2) cut off at 5 (Phi(3)).
    assert TRUE_LN_Z == pytest.approx(3 * math.log(0.1) + math.log(norm.cdf(3.0)), abs=1e-6)


def test_nested_sampling_recovers_ln_z():
    e = nested_evidence(PROBLEM, n_live=400, dlogz=0.1, seed=3)
    assert 0.05 < e.ln_z_err < 0.3  # sqrt(H / n_live), H ~ 6 nats here
    assert abs(e.ln_z - TRUE_LN_Z) < 2.5 * e.ln_z_err, (e.ln_z, e.ln_z_err, TRUE_LN_Z)


def test_importance_sampling_recovers_ln_z():
    rng = np.random.default_rng(4)
    # Exact posterior draws: the Gaussian truncated to the box.
    posterior = {
        n: truncnorm.rvs((LO - m) / s, (HI - m) / s, loc=m, scale=s, size=2000, random_state=rng)
        for n, m, s in zip(NAMES, MU, SD, strict=True)
    }
    e = importance_evidence(PROBLEM, posterior, n_samples=20000, seed=5)
    assert e.details["pareto_k"] < 0.7
    assert e.ln_z_err < 0.05
    assert abs(e.ln_z - TRUE_LN_Z) < 2.5 * e.ln_z_err, (e.ln_z, e.ln_z_err, TRUE_LN_Z)


def test_importance_sampling_flags_a_bad_proposal():
    # Posterior draws from the wrong place (centred 4 sd away): the fitted
    # proposal misses the likelihood's mass, only the 10% prior component
    # finds it, and the weights' Pareto k must say so (or the error bar be
    # large) rather than report a confident wrong answer.
    rng = np.random.default_rng(6)
    posterior = {
        n: rng.normal(m + 4 * s, 0.2 * s, 2000) for n, m, s in zip(NAMES, MU, SD, strict=True)
    }
    e = importance_evidence(PROBLEM, posterior, n_samples=20000, seed=7)
    confident_and_wrong = abs(e.ln_z - TRUE_LN_Z) > 3 * e.ln_z_err and e.details["pareto_k"] < 0.7
    assert not confident_and_wrong, e
