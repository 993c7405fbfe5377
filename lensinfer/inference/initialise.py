"""Prior draws (jitted, vectorised) and NUTS starting points taken from them."""

from __future__ import annotations

import math

import jax
import numpy as np

__all__ = ["draw_prior", "initial_points", "to_unconstrained"]


def draw_prior(model, key, n_draws: int) -> dict:
    """``n_draws`` prior draws with their derived quantities and log densities.

    Unit-cube points are mapped through the model's prior transform, and the
    physics runs once, jitted and vectorised over the draws (an eager,
    draw-by-draw run of a contraction model takes minutes).

    Returns a dict with ``params``, ``derived`` (dicts of arrays),
    ``log_likelihood`` (dict of arrays per observed quantity) and
    ``log_prior`` (array).
    """
    n_par = len(model.plan)
    # The prior is the sequential box restricted by the baryon budget: draw from
    # the box and keep the allowed draws (rejection sampling), with enough
    # spare draws that one pass almost always suffices.
    allowed_share = math.exp(getattr(model, "log_prior_volume", 0.0))
    n_box = math.ceil(n_draws / allowed_share * 1.05) + 16

    def one(ui):
        p = model.prior_transform(ui)
        d = model.derive(p)
        return {
            "params": p,
            "derived": d,
            "log_likelihood": model.log_likelihood_terms(p, d),
            "log_prior": model.log_prior(p),
        }

    run = jax.jit(jax.vmap(one))
    kept_parts = []
    kept = 0
    for _ in range(20):
        key, sub = jax.random.split(key)
        u = jax.random.uniform(sub, (n_box, n_par), minval=1e-9, maxval=1 - 1e-9)
        out = jax.tree.map(np.asarray, run(u))
        ok = np.isfinite(out["log_prior"])
        kept_parts.append(jax.tree.map(lambda a, ok=ok: a[ok], out))
        kept += int(ok.sum())
        if kept >= n_draws:
            return jax.tree.map(lambda *a: np.concatenate(a)[:n_draws], *kept_parts)
    raise RuntimeError(
        f"only {kept} of {20 * n_box} prior draws satisfy the baryon budget; "
        "the model's priors leave almost no allowed region"
    )


def initial_points(draws: dict, n_chains: int) -> dict:
    """The ``n_chains`` prior draws of highest posterior density, one per chain.

    Starting every chain from a different high-posterior prior draw avoids
    chains stuck at a prior median far from the data (an Einstein radius many
    sigma off) while keeping the starts over-dispersed for R-hat.
    """
    lp = draws["log_prior"] + sum(draws["log_likelihood"].values())
    lp = np.where(np.isfinite(lp), lp, -np.inf)
    if not np.any(np.isfinite(lp)):
        raise RuntimeError(
            "no prior draw gave a finite posterior density: check that the model's priors "
            "can reproduce the observed Einstein radius"
        )
    best = np.argsort(-lp)[:n_chains]
    return {k: v[best] for k, v in draws["params"].items()}


def to_unconstrained(model, values: dict) -> dict:
    """numpyro's unconstrained coordinates of constrained parameter values.

    Each parameter's prior support gives the bijection (identity for a
    normal, a scaled logit for a uniform or truncated normal), evaluated
    without running the numpyro model.
    """
    from numpyro.distributions.transforms import biject_to

    def one(v):
        out = {}
        for p in model.plan:
            support = p.prior(v).distribution().support
            out[p.name] = biject_to(support).inv(v[p.name])
        return out

    return {k: np.asarray(x) for k, x in jax.jit(jax.vmap(one))(values).items()}
