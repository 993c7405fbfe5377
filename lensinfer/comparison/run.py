r"""``lensinfer.compare``: which halo response does this lens prefer, and how much contraction?

For each model: a NUTS run (the posterior, PSIS-LOO and the importance-
sampling evidence come from it) and a nested-sampling evidence.  Then the
evidence table, the continuous answer (the posterior of the response index
nu of ``free-response``, with the values that mimic the named
prescriptions), and the files: ``compare.json``, ``compare.md`` and
``compare.png``.  Each model's results are cached in ``DIR/models/`` under a
key of the model text, the observation text, the settings and the package
version, so an interrupted comparison re-run with the same arguments
reuses the models it finished.
"""

from __future__ import annotations

import dataclasses
import hashlib
import json
import math
import os
import sys
import warnings

import numpy as np

from lensinfer._version import __version__
from lensinfer.comparison.evidence import importance_evidence, nested_evidence, problem_of
from lensinfer.comparison.hypotheses import effective_nu, evidence_table

__all__ = ["CompareSettings", "compare"]

#: Two estimates of one ln Z are flagged when they differ by more than this
#: many combined standard deviations (at 1 sigma a third of honest pairs
#: would be flagged).
DISAGREEMENT_SIGMA = 2.0
#: Importance-sampling error bars are unreliable above this Pareto k
#: (Vehtari et al. 2024).
PARETO_K_MAX = 0.7

LOO_CAVEAT = (
    "PSIS-LOO leaves out one measurement at a time (the ring, the stellar mass, the velocity "
    "dispersion) and predicts it from the others and the priors. A single lens has only two or "
    "three such points, so elpd_loo is dominated by how well each model's prior predicts one "
    "measurement from the rest, its standard error rests on two or three terms and is not "
    "reliable, and Pareto k is often high; read it as a qualitative third view, not a test."
)


@dataclasses.dataclass(frozen=True)
class CompareSettings:
    """Settings of one comparison (they enter the cache key)."""

    n_live: int = 500
    dlogz: float = 0.1
    chains: int = 4
    warmup: int = 500
    draws: int = 500
    seed: int = 0
    n_importance: int = 20000


def _log(progress, msg):
    if progress:
        print(msg, file=sys.stderr, flush=True)


def _cache_key(spec, observation, settings: CompareSettings) -> str:
    blob = json.dumps(
        {
            "model": spec.text,
            "observation": observation.text,
            "settings": dataclasses.asdict(settings),
            "version": __version__,
        },
        sort_keys=True,
    )
    return hashlib.sha256(blob.encode()).hexdigest()[:16]


def _flat_posterior(dt, names) -> dict:
    return {n: np.asarray(dt.posterior[n].values).reshape(-1) for n in names}


def _psis_loo(dt) -> dict | None:
    """PSIS-LOO over the likelihood sites (arviz), or None with one site."""
    import arviz as az

    sites = list(dt.log_likelihood.data_vars)
    if len(sites) < 2:
        return None
    ll = np.stack([np.asarray(dt.log_likelihood[s].values) for s in sites], axis=-1)
    tree = az.from_dict(
        {"posterior": {"x": np.zeros(ll.shape[:2])}, "log_likelihood": {"y": ll}},
        dims={"y": ["site"]},
        coords={"site": sites},
    )
    with warnings.catch_warnings():
        # arviz warns about high Pareto k; the values and their threshold are
        # reported in the table and the caveat instead.
        warnings.filterwarnings("ignore", message="Estimated shape parameter of Pareto")
        res = az.loo(tree, pointwise=True)
    k = np.asarray(res.pareto_k).reshape(-1)
    return {
        "elpd_loo": float(res.elpd),
        "se": float(res.se),
        "p_loo": float(res.p),
        "sites": sites,
        "pareto_k": dict(zip(sites, map(float, k), strict=True)),
        "pareto_k_good_below": float(res.good_k),
    }


def _convergence(dt, names) -> dict:
    """Worst R-hat and bulk ESS over the sampled parameters (NaN for one chain), and divergences."""
    import arviz as az

    rhat = az.rhat(dt, var_names=names)
    ess = az.ess(dt, var_names=names, method="bulk")
    return {
        "max_r_hat": max(float(rhat[n]) for n in names),
        "min_ess_bulk": min(float(ess[n]) for n in names),
        "divergences": int(np.asarray(dt.sample_stats["diverging"].values).sum()),
    }


def _run_model(spec, observation, settings, outdir, progress, evidence=True):
    """NUTS + both evidences + LOO for one model, cached under ``outdir/models``.

    With ``evidence=False`` only the NUTS run (for the continuous answer),
    cached under its own name.
    """
    from lensinfer.inference import read_results, sample, write_results, write_summary
    from lensinfer.model import build_model

    key = _cache_key(spec, observation, settings)
    tag = "" if evidence else "-posterior-only"
    stem = os.path.join(outdir, "models", f"{spec.name}{tag}-{key}") if outdir else None
    if stem and os.path.exists(stem + ".json") and os.path.exists(stem + ".nc"):
        with open(stem + ".json", encoding="utf-8") as fh:
            record = json.load(fh)
        _log(progress, f"[{spec.name}] reusing finished results {stem}.json")
        return record, read_results(stem + ".nc")

    lens = build_model(spec, observation)
    _log(progress, f"[{spec.name}] NUTS {settings.chains} x ({settings.warmup} + {settings.draws})")
    dt = sample(
        lens,
        chains=settings.chains,
        warmup=settings.warmup,
        draws=settings.draws,
        seed=settings.seed,
        progress=progress,
    )
    record = {
        "model": spec.name,
        "summary": spec.summary,
        "key": key,
        "parameters": lens.parameter_names,
        "loo": _psis_loo(dt),
        "nuts": _convergence(dt, lens.parameter_names),
    }
    if evidence:
        record.update(_evidences(lens, dt, settings, progress))
    if stem:
        os.makedirs(os.path.dirname(stem), exist_ok=True)
        write_results(dt, stem + ".nc")
        write_summary(record, stem + ".json")  # written last: its presence marks "finished"
    return record, dt


def _evidences(lens, dt, settings, progress) -> dict:
    problem = problem_of(lens)
    name = lens.spec.name
    _log(progress, f"[{name}] nested sampling, {settings.n_live} live points")
    nested = nested_evidence(
        problem, n_live=settings.n_live, dlogz=settings.dlogz, seed=settings.seed, progress=progress
    )
    _log(
        progress,
        f"[{name}] ln Z = {nested.ln_z:.3f} +- {nested.ln_z_err:.3f}"
        f" ({nested.wall_s:.0f} s); importance sampling from the posterior",
    )
    imp = importance_evidence(
        problem,
        _flat_posterior(dt, lens.parameter_names),
        n_samples=settings.n_importance,
        seed=settings.seed,
    )
    return {"nested": nested.to_dict(), "importance": imp.to_dict()}


def _agreement(record) -> dict:
    a, b = record["nested"], record["importance"]
    sigma = math.hypot(a["ln_z_err"], b["ln_z_err"])
    n_sigma = abs(a["ln_z"] - b["ln_z"]) / sigma if sigma > 0 else math.inf
    k = b["details"]["pareto_k"]
    return {
        "difference": a["ln_z"] - b["ln_z"],
        "n_sigma": n_sigma,
        "agree": bool(n_sigma <= DISAGREEMENT_SIGMA),
        "importance_reliable": bool(k <= PARETO_K_MAX),
    }


def _continuous(observation, free_dt, progress) -> dict:
    """The nu posterior and the effective nu of the named prescriptions."""
    from lensinfer.model import build_model
    from lensinfer.spec import read_model

    free = build_model(read_model("free-response"), observation)
    nu = np.asarray(free_dt.posterior["response_nu"].values).reshape(-1)
    out = {
        "nu_median": float(np.median(nu)),
        "nu_68": [float(v) for v in np.percentile(nu, [16, 84])],
        "nu_95": [float(v) for v in np.percentile(nu, [2.5, 97.5])],
        "nu_prior": free.prior_descriptions()["response_nu"],
        "marks": {"none": 0.0, "blumenthal86 (Blumenthal-like)": 1.0},
        "nu_draws": nu.tolist(),
    }
    if "prior" in free_dt.children and "response_nu" in free_dt.prior:
        prior_nu = np.asarray(free_dt.prior["response_nu"].values).reshape(-1)
        ratio = float(np.subtract(*np.percentile(nu, [84, 16])))
        ratio /= float(np.subtract(*np.percentile(prior_nu, [84, 16])))
        out["width_ratio_to_prior"] = ratio
        out["prior_dominated"] = bool(ratio > 0.8)
    draws = _flat_posterior(free_dt, free.parameter_names)
    rng = np.random.default_rng(0)
    pick = rng.choice(nu.size, size=min(100, nu.size), replace=False)
    sub = {k: v[pick] for k, v in draws.items()}
    for name in ("gnedin04", "gnedin11"):
        _log(progress, f"[free-response] effective nu of {name} over {pick.size} draws")
        fixed = build_model(read_model(name), observation)
        eff = effective_nu(free, fixed, sub)
        ok = eff[np.isfinite(eff)]
        out["marks"][name] = float(np.median(ok)) if ok.size else None
        out.setdefault("effective_nu", {})[name] = {
            "median": float(np.median(ok)) if ok.size else None,
            "68": [float(v) for v in np.percentile(ok, [16, 84])] if ok.size else None,
            "n_draws": int(pick.size),
            "n_outside_grid": int(pick.size - ok.size),
        }
    inside = {
        k: (v is not None and out["nu_95"][0] <= v <= out["nu_95"][1])
        for k, v in out["marks"].items()
    }
    out["marks_inside_95"] = inside
    return out


def compare(
    observation,
    models,
    outdir=None,
    *,
    settings: CompareSettings | None = None,
    prior_odds: dict | None = None,
    continuous: bool = True,
    progress: bool = True,
) -> dict:
    r"""Compare halo-response hypotheses for one lens.

    Parameters
    ----------
    observation : str, path or Observation
    models : sequence of str or ModelSpec
        Built-in model names, model-file paths or parsed specs (at least one).
    outdir : str or path, optional
        Where to write ``compare.json``, ``compare.md``, ``compare.png`` and
        the per-model cache ``models/``; nothing is written without it.
    settings : CompareSettings, optional
    prior_odds : dict, optional
        Model name -> prior weight (equal by default).
    continuous : bool
        Also report the nu posterior of ``free-response`` (run for it if it
        is not among ``models``; it then gets no evidence row).
    progress : bool
        Progress lines (and dynesty's and NUTS's progress) on stderr.

    Returns
    -------
    dict
        The content of ``compare.json``: ``table`` (see
        :func:`~lensinfer.comparison.evidence_table`), per-model ``models``
        records, ``cross_check``, ``loo``, ``continuous`` and ``caveats``.
    """
    from lensinfer.spec import ModelSpec, Observation, read_model, read_observation

    settings = settings or CompareSettings()
    obs = observation if isinstance(observation, Observation) else read_observation(observation)
    if not models:
        raise ValueError("compare needs at least one model")
    # Every model is validated before any run.
    specs = [m if isinstance(m, ModelSpec) else read_model(m) for m in models]
    names = [s.name for s in specs]
    if len(set(names)) != len(names):
        raise ValueError(f"the models' names must differ, got {names}")
    records, trees = {}, {}
    for s in specs:
        records[s.name], trees[s.name] = _run_model(s, obs, settings, outdir, progress)
    ln_z = {k: r["nested"]["ln_z"] for k, r in records.items()}
    err = {k: r["nested"]["ln_z_err"] for k, r in records.items()}
    result = {
        "lensinfer": __version__,
        "observation": obs.name,
        "settings": dataclasses.asdict(settings),
        "primary_estimator": records[names[0]]["nested"]["method"],
        "table": evidence_table(ln_z, err, prior_odds),
        "cross_check": {k: _agreement(r) for k, r in records.items()},
        "loo": {k: r["loo"] for k, r in records.items()},
        "models": records,
    }
    if continuous:
        if "free-response" in trees:
            free_dt = trees["free-response"]
        else:
            _, free_dt = _run_model(
                read_model("free-response"), obs, settings, outdir, progress, evidence=False
            )
        result["continuous"] = _continuous(obs, free_dt, progress)
    result["caveats"] = _caveats(result, obs, specs)
    if outdir:
        _write_outputs(result, outdir)
    return result


def comparability_note(specs) -> str | None:
    """Why total-mass models' evidences cannot be set against decompositions'."""
    totals = [s.name for s in specs if s.mass_model == "total_power_law"]
    if not totals or len(totals) == len(specs):
        return None
    return (
        f"{', '.join(totals)}: a total-mass power law, not a stars-plus-halo decomposition. "
        "Its slope and Einstein radius have wide uniform priors of their own, with no "
        "stellar-to-halo relation, halo mass function or concentration prior behind them, "
        "so its ln Z measures a different prior volume and its Delta ln Z against the "
        "decomposition models is not a Bayes factor between halo responses; read its row "
        "as a fit-quality reference only."
    )


def _caveats(result, obs, specs=()) -> list[str]:
    notes = [
        "Evidences depend on the priors: a wider prior on a parameter the data do not constrain "
        "lowers ln Z by about the log of the widening. Delta ln Z compares the hypotheses "
        "together with their priors (see each model file).",
        "The measurement-based nuisance priors (R_eff, Sersic index, a photometric source "
        "redshift) are the same in every model and cancel in Delta ln Z.",
    ]
    if obs.kinematics is None:
        notes.append(
            "No velocity dispersion: with the ring and the stellar mass alone, stars and dark "
            "matter are degenerate and the response hypotheses differ mainly through their "
            "priors; expect Delta ln Z near 0."
        )
    else:
        notes.append(
            "One aperture velocity dispersion adds one mass constraint at a second radius; "
            "the orbital anisotropy is marginalised (mass-anisotropy degeneracy), so the "
            "separation of stars, dark matter and contraction still leans on the IMF and "
            "anisotropy priors."
        )
    notes.append(
        "Lensing constrains the projected mass inside the Einstein radius; a mass sheet "
        "(the mass-sheet degeneracy) is fixed here only by the assumed profile shapes."
    )
    if any(not c["agree"] for c in result["cross_check"].values()):
        notes.append(
            "At least one model's two evidence estimates disagree (see the cross-check); "
            "treat its ln Z as uncertain beyond the quoted error."
        )
    not_comparable = comparability_note(specs)
    if not_comparable:
        notes.append(not_comparable)
    notes.append(LOO_CAVEAT)
    return notes


def to_markdown(result) -> str:
    """The comparison as Markdown: evidence table, cross-check, continuous answer, caveats."""
    lines = [
        f"# Halo-response comparison: {result['observation']}",
        "",
        f"Primary ln Z: {result['primary_estimator']}"
        f" ({result['settings']['n_live']} live points, dlogz {result['settings']['dlogz']});"
        " probabilities assume the prior weights shown.",
        "",
        "| model | ln Z | Δ ln Z vs best | Bayes factor (best : model) | P(model) | prior weight |"
        " Kass & Raftery (1995) |",
        "|---|---|---|---|---|---|---|",
    ]
    for r in result["table"]:
        delta = (
            "0"
            if r["kass_raftery"] == "(best)"
            else (f"{r['delta_ln_z']:.2f} ± {r['delta_ln_z_err']:.2f}")
        )
        lines.append(
            f"| {r['model']} | {r['ln_z']:.2f} ± {r['ln_z_err']:.2f} | {delta} |"
            f" {r['bayes_factor_vs_best']:.3g} | {r['probability']:.3f} | {r['prior_weight']:g} |"
            f" {r['kass_raftery']} |"
        )
    lines += [
        "",
        "## Cross-check: a second, independent ln Z",
        "",
        "Importance sampling from each model's NUTS posterior (defensive Student-t mixture);"
        f" flagged when it differs from the nested ln Z by more than {DISAGREEMENT_SIGMA:g}"
        f" combined sigma or its Pareto k exceeds {PARETO_K_MAX}.",
        "",
        "| model | nested ln Z | importance ln Z | difference (sigma) | Pareto k | NUTS R-hat max |"
        " flag |",
        "|---|---|---|---|---|---|---|",
    ]
    for k, rec in result["models"].items():
        c = result["cross_check"][k]
        a, b = rec["nested"], rec["importance"]
        flag = []
        if not c["agree"]:
            flag.append("estimates disagree")
        if not c["importance_reliable"]:
            flag.append("importance weights unreliable")
        lines.append(
            f"| {k} | {a['ln_z']:.2f} ± {a['ln_z_err']:.2f} | {b['ln_z']:.2f} ± {b['ln_z_err']:.2f}"
            f" | {c['difference']:+.2f} ({c['n_sigma']:.1f}) | {b['details']['pareto_k']:.2f} |"
            f" {rec['nuts']['max_r_hat']:.3f} | {', '.join(flag) or 'ok'} |"
        )
    loo = {k: v for k, v in result["loo"].items() if v}
    if loo:
        lines += [
            "",
            "## PSIS-LOO (a third view)",
            "",
            "| model | elpd_loo | SE | p_loo | max Pareto k |",
            "|---|---|---|---|---|",
        ]
        for k, v in sorted(loo.items(), key=lambda kv: -kv[1]["elpd_loo"]):
            lines.append(
                f"| {k} | {v['elpd_loo']:.2f} | {v['se']:.2f} | {v['p_loo']:.2f} |"
                f" {max(v['pareto_k'].values()):.2f} |"
            )
        lines += ["", LOO_CAVEAT]
    c = result.get("continuous")
    if c:
        lines += [
            "",
            "## The continuous answer: response index nu (free-response)",
            "",
            f"nu = {c['nu_median']:.2f} (68%: {c['nu_68'][0]:.2f} to {c['nu_68'][1]:.2f};"
            f" 95%: {c['nu_95'][0]:.2f} to {c['nu_95'][1]:.2f}); prior {c['nu_prior']}.",
            "",
        ]
        if c.get("prior_dominated"):
            lines += [
                f"**Prior-dominated:** the posterior's 68% width is"
                f" {100 * c['width_ratio_to_prior']:.0f}% of the prior's, so these data do not"
                " measure nu; the marks below lie inside it because little is excluded.",
                "",
            ]
        lines += [
            "| prescription | nu | inside the 95% interval |",
            "|---|---|---|",
        ]
        for k, v in c["marks"].items():
            shown = "n/a" if v is None else f"{v:.2f}"
            if k in c.get("effective_nu", {}) and c["effective_nu"][k]["68"]:
                lo, hi = c["effective_nu"][k]["68"]
                shown += f" (effective for this lens; 68% over draws {lo:.2f}–{hi:.2f})"
            lines.append(f"| {k} | {shown} | {'yes' if c['marks_inside_95'][k] else 'no'} |")
    lines += ["", "## Caveats", ""] + [f"- {n}" for n in result["caveats"]]
    return "\n".join(lines) + "\n"


def _figure(result) -> bytes:
    """The comparison figure as PNG bytes (the report layer's Agg setup and writer)."""
    from lensinfer.report.figures import _plt, _png

    plt = _plt()
    c = result.get("continuous")
    fig, axes = plt.subplots(1, 2 if c else 1, figsize=(7.0, 3.0), squeeze=False)
    ax = axes[0, 0]
    rows = result["table"]
    best = rows[0]["ln_z"]
    y = np.arange(len(rows))[::-1]
    for i, r in zip(y, rows, strict=True):
        rec = result["models"][r["model"]]
        ax.errorbar(
            r["ln_z"] - best,
            i + 0.1,
            xerr=r["ln_z_err"],
            fmt="o",
            color="#1b4f72",
            label="nested" if i == y[0] else None,
        )
        b = rec["importance"]
        ax.errorbar(
            b["ln_z"] - best,
            i - 0.1,
            xerr=b["ln_z_err"],
            fmt="s",
            color="#b9770e",
            mfc="none",
            label="importance" if i == y[0] else None,
        )
    ax.set_yticks(y, [r["model"] for r in rows])
    ax.axvline(0.0, color="0.6", lw=0.8)
    ax.set_xlabel(r"$\ln Z - \ln Z_{\rm best}$")
    ax.legend(fontsize=7, loc="lower left")
    if c:
        ax = axes[0, 1]
        ax.hist(c["nu_draws"], bins=40, density=True, color="#aed6f1", edgecolor="#1b4f72", lw=0.4)
        styles = ["-", "--", ":", "-."]
        for (k, v), ls in zip(c["marks"].items(), styles, strict=False):
            if v is not None:
                ax.axvline(v, color="k", ls=ls, lw=1.0, label=f"{k.split(' ')[0]}: {v:.2f}")
        ax.set_xlabel(r"response index $\nu$")
        ax.set_ylabel("posterior density")
        ax.legend(fontsize=6)
    fig.tight_layout()
    return _png(fig)


def _write_outputs(result, outdir):
    from lensinfer.inference.results import write_bytes, write_summary

    os.makedirs(outdir, exist_ok=True)
    # Everything is rendered in memory first; the files are then written
    # atomically, the JSON last.
    png = _figure(result)
    md = to_markdown(result)
    write_bytes(png, os.path.join(outdir, "compare.png"))
    write_bytes(md.encode("utf-8"), os.path.join(outdir, "compare.md"))
    write_summary(result, os.path.join(outdir, "compare.json"))
