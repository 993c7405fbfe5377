r"""From evidences to a verdict: Bayes factors, model probabilities, Kass & Raftery, effective nu."""

from __future__ import annotations

import math

import jax
import jax.numpy as jnp
import numpy as np

__all__ = ["effective_nu", "evidence_table", "kass_raftery"]

#: Kass & Raftery (1995, JASA 90, 773, section 3.2; quoted from memory): the
#: strength of evidence against the weaker model by 2 ln B.
_SCALE = ((2.0, "not worth more than a bare mention"), (6.0, "positive"), (10.0, "strong"))


def kass_raftery(ln_b: float) -> str:
    r"""The Kass & Raftery (1995) category of a Bayes factor :math:`B = Z_1/Z_2 \ge 1`.

    On the 2 ln B scale: 0–2 "not worth more than a bare mention", 2–6
    "positive", 6–10 "strong", above 10 "very strong".

    >>> kass_raftery(0.5), kass_raftery(2.0), kass_raftery(4.0), kass_raftery(6.0)
    ('not worth more than a bare mention', 'positive', 'strong', 'very strong')
    """
    two_ln_b = 2.0 * abs(float(ln_b))
    for edge, label in _SCALE:
        if two_ln_b < edge:
            return label
    return "very strong"


def evidence_table(ln_z: dict, ln_z_err: dict, prior_odds: dict | None = None) -> list[dict]:
    r"""Rows ranking models by evidence.

    For model i against the best model b:
    :math:`\Delta_i = \ln Z_i - \ln Z_b \le 0` with uncertainty
    :math:`\sqrt{\sigma_i^2 + \sigma_b^2}` (0 for the best itself), Bayes
    factor :math:`B_{b,i} = e^{-\Delta_i}` in favour of the best, and posterior
    model probabilities :math:`P_i = \pi_i Z_i / \sum_j \pi_j Z_j` with prior
    odds :math:`\pi_i` (equal unless given; they need not be normalised).

    Returns
    -------
    list of dict
        Sorted from the best model down, with keys ``model``, ``ln_z``,
        ``ln_z_err``, ``delta_ln_z``, ``delta_ln_z_err``, ``bayes_factor_vs_best``,
        ``probability``, ``prior_weight`` and ``kass_raftery`` (the strength
        of the best model's preference over this one).
    """
    names = sorted(ln_z, key=lambda k: -ln_z[k])
    prior_odds = prior_odds or {}
    for k, v in prior_odds.items():
        if k not in ln_z:
            raise ValueError(f"prior odds given for {k!r}, which is not among {sorted(ln_z)}")
        if not v > 0:
            raise ValueError(f"prior odds for {k!r} must be > 0, got {v!r}")
    weight = {k: float(prior_odds.get(k, 1.0)) for k in names}
    best = names[0]
    log_post = np.array([ln_z[k] + math.log(weight[k]) for k in names])
    prob = np.exp(log_post - np.max(log_post))
    prob /= prob.sum()
    rows = []
    for k, p in zip(names, prob, strict=True):
        delta = ln_z[k] - ln_z[best]
        err = 0.0 if k == best else math.hypot(ln_z_err[k], ln_z_err[best])
        rows.append(
            {
                "model": k,
                "ln_z": float(ln_z[k]),
                "ln_z_err": float(ln_z_err[k]),
                "delta_ln_z": float(delta),
                "delta_ln_z_err": float(err),
                "bayes_factor_vs_best": float(math.exp(-delta)),
                "probability": float(p),
                "prior_weight": weight[k],
                "kass_raftery": "(best)" if k == best else kass_raftery(delta),
            }
        )
    return rows


def effective_nu(free_lens, fixed_lens, draws: dict, nu_grid=None) -> np.ndarray:
    r"""The response index nu that gives a fixed prescription's contraction, per draw.

    For each posterior draw of the other parameters, the ratio of contracted
    to unresponsive dark matter inside R_eff (``contraction_ratio_reff``)
    under ``fixed_lens``'s prescription (e.g. Gnedin et al. 2004) is matched
    by the continuous response :math:`r_f/r_i = (M_i/M_f)^\nu` (Dutton et
    al. 2007) of ``free_lens``: nu is found by linear interpolation on a grid
    (the ratio grows monotonically with nu).  NaN where the fixed
    prescription's ratio falls outside the grid's range.

    Parameters
    ----------
    free_lens, fixed_lens : SystemModel
        The free-response model and a fixed-prescription model of the same
        observation (their other parameters have the same names).
    draws : dict
        Parameter name -> 1-D array (the free model's posterior draws).
    nu_grid : array, optional
        Default: -0.3 to 1.5 in steps of 0.05 (the free model's prior range).
    """
    nu_grid = jnp.linspace(-0.3, 1.5, 37) if nu_grid is None else jnp.asarray(nu_grid)
    p = {k: jnp.asarray(np.asarray(draws[k], dtype=float)) for k in fixed_lens.parameter_names}

    def one(point):
        target = fixed_lens.derive(point)["contraction_ratio_reff"]
        ratios = jax.lax.map(
            lambda nu: free_lens.derive({**point, "response_nu": nu})["contraction_ratio_reff"],
            nu_grid,
        )
        inside = (target >= ratios[0]) & (target <= ratios[-1])
        return jnp.where(inside, jnp.interp(target, ratios, nu_grid), jnp.nan)

    return np.asarray(jax.jit(lambda pts: jax.lax.map(one, pts))(p))
