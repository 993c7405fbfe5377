"""Sampler diagnostics of a results file and a plain-language verdict.

Thresholds (stated in every report):

- rank-normalised split R-hat < 1.01 and bulk and tail ESS > 100 per chain
  (Vehtari, Gelman, Simpson, Carpenter & Buerkner 2021, "Rank-normalization,
  folding, and localization: an improved R-hat", Bayesian Analysis 16, 667);
- no divergent transition (Betancourt 2017, arXiv:1701.02434, section 6.2);
- E-BFMI > 0.3 per chain (Betancourt 2016, arXiv:1604.00695; the 0.3
  threshold is common practice, used by Stan's diagnostics);
- fewer than 1% of draws at the maximum tree depth (common practice).

All numbers come from arviz (``rhat``, ``ess``, ``mcse``, ``bfmi``).
"""

from __future__ import annotations

import dataclasses

import numpy as np

__all__ = ["THRESHOLDS", "Diagnostics", "diagnose_run"]

THRESHOLDS = {
    "r_hat": 1.01,
    "ess_per_chain": 100,
    "divergences": 0,
    "bfmi": 0.3,
    "tree_depth_fraction": 0.01,
}


@dataclasses.dataclass(frozen=True)
class Diagnostics:
    """Per-parameter and per-run diagnostics, with the verdict."""

    parameters: dict  # name -> {"r_hat", "ess_bulk", "ess_tail", "mcse_mean", "mcse_sd"}
    divergences: int
    divergence_locations: dict  # name -> {"divergent_median", "all_median", "shift_sd"}
    bfmi: list
    tree_depth_fraction: float
    not_checked: tuple  # checks whose sampler statistics the run does not hold
    chains: int
    draws: int
    failed: tuple  # names of the failed checks
    advice: tuple  # one plain-language line per failed check

    @property
    def converged(self) -> bool:
        return not self.failed

    @property
    def verdict(self) -> str:
        if self.converged:
            extra = f" (not checked: {', '.join(self.not_checked)})" if self.not_checked else ""
            return "converged" + extra
        return "not converged: " + "; ".join(self.failed)

    def as_dict(self) -> dict:
        """JSON-ready: NaN values become None."""
        d = _no_nan(dataclasses.asdict(self))
        d["converged"] = self.converged
        d["verdict"] = self.verdict
        d["thresholds"] = dict(THRESHOLDS)
        return d


def _no_nan(x):
    if isinstance(x, dict):
        return {k: _no_nan(v) for k, v in x.items()}
    if isinstance(x, (list, tuple)):
        return [_no_nan(v) for v in x]
    if isinstance(x, float) and not np.isfinite(x):
        return None
    return x


def _value(tree, name):
    ds = tree.posterior if hasattr(tree, "posterior") else tree
    v = float(np.asarray(ds[name].values))
    return v if np.isfinite(v) else float("nan")


def sampled_names(dt) -> list[str]:
    """The sampled parameters of a lensinfer run (from its provenance), else all."""
    import json

    priors = dt.attrs.get("priors")
    names = list(json.loads(priors)) if priors else []
    post = dt.posterior
    names = [n for n in names if n in post.data_vars]
    return names or [v for v in post.data_vars if post[v].ndim == 2]


def diagnose_run(dt, names=None) -> Diagnostics:
    """Diagnostics of a DataTree with posterior and sample_stats groups."""
    import arviz as az

    names = sampled_names(dt) if names is None else list(names)
    post = dt.posterior
    chains, draws = int(post.sizes["chain"]), int(post.sizes["draw"])
    rhat = az.rhat(dt, var_names=names)
    ess_b = az.ess(dt, var_names=names, method="bulk")
    ess_t = az.ess(dt, var_names=names, method="tail")
    mc_mean = az.mcse(dt, var_names=names, method="mean")
    mc_sd = az.mcse(dt, var_names=names, method="sd")
    params = {
        n: {
            "r_hat": _value(rhat, n),
            "ess_bulk": _value(ess_b, n),
            "ess_tail": _value(ess_t, n),
            "mcse_mean": _value(mc_mean, n),
            "mcse_sd": _value(mc_sd, n),
        }
        for n in names
    }
    stats = dt.sample_stats if "sample_stats" in dt.children else None
    div = np.zeros((chains, draws), bool)
    if stats is not None and "diverging" in stats.data_vars:
        div = np.asarray(stats["diverging"].values, bool)
    locations = {}
    if div.any():
        for n in names:
            x = np.asarray(post[n].values, float)
            sd = float(np.std(x)) or 1.0
            locations[n] = {
                "divergent_median": float(np.median(x[div])),
                "all_median": float(np.median(x)),
                "shift_sd": float((np.median(x[div]) - np.median(x)) / sd),
            }
    not_checked = []
    if stats is None or "diverging" not in stats.data_vars:
        not_checked.append("divergences")
    if stats is None or "energy" not in stats.data_vars:
        not_checked.append("E-BFMI")
    if stats is None or "reached_max_tree_depth" not in stats.data_vars:
        not_checked.append("tree depth")
    bfmi = []
    if stats is not None and "energy" in stats.data_vars:
        bfmi = [float(v) for v in np.asarray(az.bfmi(dt)["energy"].values).ravel()]
    depth_frac = 0.0
    if stats is not None and "reached_max_tree_depth" in stats.data_vars:
        depth_frac = float(np.mean(np.asarray(stats["reached_max_tree_depth"].values)))

    failed, advice = [], []
    bad_rhat = [n for n, p in params.items() if not p["r_hat"] < THRESHOLDS["r_hat"]]
    if bad_rhat:
        failed.append(f"R-hat >= {THRESHOLDS['r_hat']} for {', '.join(bad_rhat)}")
        advice.append(
            "Chains disagree (R-hat): run more warm-up and draws; if it persists the "
            "posterior may be multimodal or a prior may fight the data."
        )
    need = THRESHOLDS["ess_per_chain"] * chains
    bad_ess = [n for n, p in params.items() if not (p["ess_bulk"] > need and p["ess_tail"] > need)]
    if bad_ess:
        failed.append(f"bulk or tail ESS <= {need} for {', '.join(bad_ess)}")
        advice.append(
            "Too few effective draws (ESS): run more draws, or reparameterise the "
            "parameters that mix slowly."
        )
    n_div = int(div.sum())
    if n_div > THRESHOLDS["divergences"]:
        where = ""
        if locations:
            top = max(locations, key=lambda k: abs(locations[k]["shift_sd"]))
            shift = locations[top]["shift_sd"]
            # A cluster is claimed only when the divergent draws' median sits
            # at least half a posterior sd from the median of all draws.
            if abs(shift) >= 0.5:
                where = f" (they cluster at {'high' if shift > 0 else 'low'} {top})"
            else:
                where = " (no clear cluster in any parameter)"
        failed.append(f"{n_div} divergent transitions{where}")
        advice.append(
            "Divergences mean the sampler could not follow the posterior's curvature: raise "
            "the target acceptance (e.g. 0.99), and if they remain, reparameterise or "
            "soften a hard prior bound that the posterior runs into."
        )
    low_bfmi = [i for i, b in enumerate(bfmi) if not b > THRESHOLDS["bfmi"]]
    if low_bfmi:
        failed.append(f"E-BFMI <= {THRESHOLDS['bfmi']} in chains {low_bfmi}")
        advice.append(
            "Low E-BFMI: the momentum resampling explores the energy poorly; longer warm-up "
            "or a reparameterisation of heavy-tailed parameters usually helps."
        )
    if depth_frac > THRESHOLDS["tree_depth_fraction"]:
        failed.append(f"{100 * depth_frac:.1f}% of draws hit the maximum tree depth")
        advice.append(
            "Trajectories were cut at the maximum tree depth: raise max_tree_depth, or "
            "check for a long, thin ridge that a reparameterisation would shorten."
        )
    return Diagnostics(
        parameters=params,
        divergences=n_div,
        divergence_locations=locations,
        bfmi=bfmi,
        tree_depth_fraction=depth_frac,
        not_checked=tuple(not_checked),
        chains=chains,
        draws=draws,
        failed=tuple(failed),
        advice=tuple(advice),
    )
