r"""Bayesian evidences of a lens model: nested sampling and posterior importance sampling.

Both estimators work on the unit cube of the model's prior transform,
where the prior is uniform, so that

.. math::

    Z = \int \mathcal L(\theta)\,\pi(\theta)\,d\theta
      = \int_{[0,1]^d} \mathcal L\big(T(u)\big)\,du ,

with :math:`T` = :meth:`lensinfer.model.SystemModel.prior_transform`
(sequential inverse CDFs, so conditional priors stay exact).

- :func:`nested_evidence` — nested sampling (Skilling 2004, 2006) with
  dynesty (Speagle 2020), multi-ellipsoid bounds and random-walk proposals;
  the uncertainty is dynesty's, :math:`\approx\sqrt{H/n_{\rm live}}`
  (Skilling 2006, eq. 17, from memory), with H the information.
- :func:`importance_evidence` — defensive importance sampling (Hesterberg
  1995) from the NUTS posterior: a multivariate Student-t fitted to the
  posterior draws in :math:`x = {\rm logit}\,u`, mixed with the prior (10%),
  :math:`\hat Z = \frac1N\sum_i \mathcal L(T(u_i))\,p(x_i)/q(x_i)`, with the
  delta-method standard error and the Pareto :math:`\hat k` of the weights
  (Vehtari et al. 2024, arviz) as its reliability check.

The two share nothing but the likelihood, which is what makes them a
cross-check.
"""

from __future__ import annotations

import dataclasses
import math
import time
from collections.abc import Callable

import jax
import jax.numpy as jnp
import numpy as np

__all__ = [
    "Evidence",
    "NonFiniteLikelihood",
    "UnitCubeProblem",
    "importance_evidence",
    "nested_evidence",
    "problem_of",
]

#: Log-likelihood handed to the samplers where the prior excludes a point (the
#: baryon budget gives -inf there): zero likelihood, but finite so the samplers'
#: arithmetic holds.  A NaN is never mapped to it: it raises NonFiniteLikelihood.
LOG_ZERO = -1.0e300


class NonFiniteLikelihood(RuntimeError):
    """The log-likelihood was NaN (or +inf) at a point of the prior box.

    The evidence code refuses such points instead of reading them as zero
    likelihood, which would silently bias ln Z.
    """


@dataclasses.dataclass(frozen=True)
class Evidence:
    """A log-evidence estimate.

    Attributes
    ----------
    ln_z, ln_z_err : float
        Natural-log evidence and its 1-sigma uncertainty.
    method : str
        ``"nested (dynesty)"`` or ``"importance (NUTS posterior)"``.
    n_likelihood : int
        Likelihood evaluations used.
    wall_s : float
        Wall time, seconds (compilation included).
    details : dict
        Method-specific figures (information H, live points, Pareto k, ...).
    """

    ln_z: float
    ln_z_err: float
    method: str
    n_likelihood: int
    wall_s: float
    details: dict

    def to_dict(self) -> dict:
        return dataclasses.asdict(self)


@dataclasses.dataclass(frozen=True)
class UnitCubeProblem:
    r"""What an evidence estimator needs: a log-likelihood on the unit cube.

    Attributes
    ----------
    names : tuple of str
        Parameter names, one per cube coordinate.
    log_likelihood : callable
        JAX function of one point u (shape (d,)) returning the scalar
        log-likelihood of :math:`T(u)`, plus -inf where the prior excludes
        the point (a prior restricted to part of the box).
    to_unit_cube : callable or None
        JAX function mapping a dict of parameter arrays to cube points
        (..., d); needed by :func:`importance_evidence`.
    log_prior_volume : float
        ln of the share of the box the prior allows (0 for the whole box).
        The prior is the box's, restricted and divided by that share, so
        :math:`\ln Z = \ln Z_{\rm box} - ` ``log_prior_volume``.
    point_names : callable or None
        Maps a cube point to a dict of named parameter values (for error
        messages).
    """

    names: tuple
    log_likelihood: Callable
    to_unit_cube: Callable | None = None
    log_prior_volume: float = 0.0
    point_names: Callable | None = None

    @property
    def n_dim(self) -> int:
        return len(self.names)


def problem_of(lens) -> UnitCubeProblem:
    """The unit-cube evidence problem of a built lens model (:class:`SystemModel`)."""

    def log_likelihood(u):
        params = lens.prior_transform(u)
        return sum(lens.log_likelihood_terms(params).values()) + lens.log_constraint(params)

    def point_names(u):
        return {k: float(v) for k, v in lens.prior_transform(jnp.asarray(u)).items()}

    return UnitCubeProblem(
        tuple(lens.parameter_names),
        log_likelihood,
        lens.to_unit_cube,
        log_prior_volume=float(lens.log_prior_volume),
        point_names=point_names,
    )


def _safe(log_l):
    """-inf (excluded by the prior) -> LOG_ZERO; NaN and +inf are kept for _refuse."""
    return jnp.where(log_l == -jnp.inf, LOG_ZERO, log_l)


def _refuse(problem: UnitCubeProblem, values, points) -> None:
    """Raise NonFiniteLikelihood naming the first point whose value is NaN or +inf."""
    values = np.asarray(values, dtype=float)
    bad = ~np.isfinite(values)
    if not np.any(bad):
        return
    k = int(np.flatnonzero(bad)[0])
    u = np.asarray(points, dtype=float).reshape(len(values), -1)[k]
    where = problem.point_names(u) if problem.point_names is not None else u.tolist()
    raise NonFiniteLikelihood(
        f"the log-likelihood is {values[k]} at {int(bad.sum())} of {len(values)} evaluated "
        f"point(s), e.g. at {where}; the evidence is not computed (a NaN would silently "
        "count as zero likelihood): report the model and this point"
    )


def nested_evidence(
    problem: UnitCubeProblem,
    *,
    n_live: int = 500,
    dlogz: float = 0.1,
    seed: int = 0,
    progress: bool = False,
) -> Evidence:
    r"""ln Z by nested sampling with dynesty.

    Parameters
    ----------
    problem : UnitCubeProblem
    n_live : int
        Live points; the statistical uncertainty scales as
        :math:`\sqrt{H / n_{\rm live}}`.
    dlogz : float
        Stopping criterion: the largest remaining evidence contribution
        (ln) the live points could still add.
    seed : int
    progress : bool
        Print dynesty's progress line (stderr).

    Returns
    -------
    Evidence
        ``details`` holds the information H (nats), iterations, live points,
        sampler settings and the posterior-weighted sample count.
    """
    import dynesty

    t0 = time.perf_counter()
    f = jax.jit(lambda u: _safe(problem.log_likelihood(u)))
    f(np.full(problem.n_dim, 0.5)).block_until_ready()  # compile before timing calls

    def log_l(u):
        value = float(f(u))
        if not math.isfinite(value):
            _refuse(problem, [value], [u])
        return value

    sampler = dynesty.NestedSampler(
        log_l,
        _identity,
        problem.n_dim,
        nlive=n_live,
        bound="multi",
        sample="rwalk",
        rstate=np.random.default_rng(seed),
    )
    sampler.run_nested(dlogz=dlogz, print_progress=progress)
    r = sampler.results
    info = float(r.information[-1])
    return Evidence(
        ln_z=float(r.logz[-1]) - problem.log_prior_volume,
        ln_z_err=float(r.logzerr[-1]),
        method="nested (dynesty)",
        n_likelihood=int(np.sum(r.ncall)),
        wall_s=time.perf_counter() - t0,
        details={
            "library": f"dynesty {dynesty.__version__}",
            "n_live": n_live,
            "dlogz": dlogz,
            "bound": "multi",
            "sample": "rwalk",
            "seed": seed,
            "iterations": int(r.niter),
            "log_prior_volume": problem.log_prior_volume,
            "information_nats": info,
            "efficiency_percent": float(r.eff),
        },
    )


def _identity(u):
    return np.array(u, dtype=float)


def _logistic_log_jacobian(x):
    """ln |du/dx| of u = sigmoid(x), summed over the last axis."""
    return jnp.sum(jax.nn.log_sigmoid(x) + jax.nn.log_sigmoid(-x), axis=-1)


def importance_evidence(
    problem: UnitCubeProblem,
    posterior: dict,
    *,
    n_samples: int = 20000,
    df: float = 5.0,
    prior_fraction: float = 0.1,
    seed: int = 0,
) -> Evidence:
    r"""ln Z by defensive importance sampling from a fit to posterior draws.

    The posterior draws are mapped to the cube (the prior CDFs, see
    :meth:`SystemModel.to_unit_cube`) and to :math:`x = {\rm logit}\,u`,
    where the prior density is :math:`p(x) = \prod_k \sigma(x_k)\sigma(-x_k)`.
    The proposal is :math:`q = (1 - \epsilon)\,t_\nu(\mu, \Sigma) + \epsilon\,p`
    with :math:`\mu, \Sigma` the draws' mean and covariance, :math:`\nu = 5`
    and :math:`\epsilon = 0.1`; the prior component bounds every weight by
    :math:`\mathcal L/\epsilon` (Hesterberg 1995).  Then

    .. math::

        \hat Z = \frac1N\sum_i w_i,\quad
        w_i = \frac{\mathcal L(T(\sigma(x_i)))\,p(x_i)}{q(x_i)},\qquad
        \sigma_{\ln\hat Z} = \frac{{\rm sd}(w)}{\sqrt N\,\bar w} .

    The Pareto :math:`\hat k` of the weights' tail is reported
    (arviz-stats ``psislw``; :math:`\hat k > 0.7` means the error bar
    cannot be trusted, Vehtari et al. 2024).

    Parameters
    ----------
    problem : UnitCubeProblem
        Needs ``to_unit_cube``.
    posterior : dict
        Parameter name -> 1-D array of posterior draws (all chains).
    n_samples : int
        Proposal draws (likelihood evaluations).
    df, prior_fraction : float
        Student-t degrees of freedom and the prior's share of the mixture.
    seed : int
    """
    import arviz_stats  # noqa: F401  (registers the .azstats accessor)
    import scipy.stats
    import xarray as xr

    t0 = time.perf_counter()
    params = {k: jnp.asarray(np.asarray(posterior[k], dtype=float)) for k in problem.names}
    u_post = np.asarray(jax.jit(problem.to_unit_cube)(params))
    eps = 1e-12
    u_post = np.clip(u_post, eps, 1.0 - eps)
    x_post = np.log(u_post) - np.log1p(-u_post)
    mu = x_post.mean(axis=0)
    cov = np.atleast_2d(np.cov(x_post, rowvar=False))
    # A parameter pinned at a prior bound has ~zero spread in logit(u); a
    # small floor keeps the proposal proper (its weights then show the misfit).
    cov = cov + np.diag(np.maximum(1e-6 * np.max(np.diag(cov)), 1e-10) * np.ones(len(cov)))
    # Student-t with covariance Sigma has shape matrix Sigma (df - 2) / df.
    t_dist = scipy.stats.multivariate_t(loc=mu, shape=cov * (df - 2.0) / df, df=df)
    rng = np.random.default_rng(seed)
    n_prior = rng.binomial(n_samples, prior_fraction)
    u_prior = rng.uniform(size=(n_prior, problem.n_dim))
    x_prior = np.log(u_prior) - np.log1p(-u_prior)
    x_t = np.atleast_2d(t_dist.rvs(size=n_samples - n_prior, random_state=rng))
    x = np.concatenate([x_t.reshape(-1, problem.n_dim), x_prior])
    log_p = np.asarray(_logistic_log_jacobian(jnp.asarray(x)))
    log_q = np.logaddexp(
        math.log1p(-prior_fraction) + t_dist.logpdf(x), math.log(prior_fraction) + log_p
    )

    @jax.jit
    def batch(xs):
        return jax.lax.map(lambda xi: _safe(problem.log_likelihood(jax.nn.sigmoid(xi))), xs)

    log_l = np.asarray(batch(jnp.asarray(x)))
    _refuse(problem, log_l, 1.0 / (1.0 + np.exp(-x)))
    log_w = log_l + log_p - log_q
    m = np.max(log_w)
    w = np.exp(log_w - m)
    ln_z = m + math.log(np.mean(w)) - problem.log_prior_volume
    err = float(np.std(w, ddof=1) / (math.sqrt(len(w)) * np.mean(w)))
    # psislw smooths the weights exp(-input) (it is written for PSIS-LOO,
    # whose log ratios are minus log-likelihoods), hence the sign.
    _, khat = xr.DataArray(-log_w, dims=["sample"]).azstats.psislw(dim="sample")
    return Evidence(
        ln_z=float(ln_z),
        ln_z_err=err,
        method="importance (NUTS posterior)",
        n_likelihood=len(x),
        wall_s=time.perf_counter() - t0,
        details={
            "proposal": f"{1 - prior_fraction:g} Student-t (df {df:g}) fitted to the posterior"
            f" in logit(u) + {prior_fraction:g} prior",
            "n_posterior_draws": int(x_post.shape[0]),
            "pareto_k": float(khat),
            "log_prior_volume": problem.log_prior_volume,
            "effective_sample_size": float(np.sum(w) ** 2 / np.sum(w**2)),
            "seed": seed,
        },
    )
