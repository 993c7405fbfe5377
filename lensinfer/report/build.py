"""Write a posterior report: diagnostics, tables, figures, HTML page, notebook summary."""

from __future__ import annotations

import base64
import html
import json
import os

import numpy as np

from lensinfer.report.diagnostics import THRESHOLDS, diagnose_run, sampled_names
from lensinfer.report.tables import (
    consistent_imfs,
    quantity_rows,
    to_json,
    to_latex,
    to_markdown,
)

__all__ = ["assumptions", "report"]

#: A parameter whose posterior 68% width is above this share of its prior's
#: is reported as prior-dominated.
PRIOR_DOMINATED_RATIO = 0.8

MAIN_CORNER = (
    "log10_m200c",
    "log10_c200c",
    "log10_imf_factor",
    "log10_mstar_ref",
    "response_nu",
    "slope",
    "theta_e_arcsec",
    "anisotropy_beta",
    "fdm_einstein",
)


# Parameters whose prior is their own measurement (photometry, photo-z).
_MEASURED = ("r_eff_kpc", "sersic_index", "z_source")


def _imf_note(dt, lens, imfs) -> str:
    ref = lens.observation.reference_imf
    if "log10_imf_factor" not in dt.posterior.data_vars:
        return f"alpha_IMF is fixed by the model (see the model file; reference IMF {ref})."
    names = ", ".join(imfs) if imfs else "none of the named IMFs"
    note = f"Named IMFs inside the 95% interval of alpha_IMF: {names} (relative to {ref}, 10 Gyr)."
    prior_w = (
        _width(np.asarray(dt.prior["log10_imf_factor"].values, float).ravel())
        if "prior" in dt.children and "log10_imf_factor" in dt.prior.data_vars
        else None
    )
    post_w = _width(np.asarray(dt.posterior["log10_imf_factor"].values, float).ravel())
    if prior_w and post_w / prior_w > PRIOR_DOMINATED_RATIO:
        note += " alpha_IMF is prior-dominated in this run, so this list restates the prior."
    return note


def _width(x):
    lo, hi = np.percentile(x, [16, 84])
    return hi - lo


def assumptions(dt, lens) -> list[str]:
    """Statements about what drives the result, from what this run shows."""
    out = []
    post = dt.posterior
    for name in sampled_names(dt):
        if "prior" not in dt.children or name not in dt.prior.data_vars:
            continue
        pw = _width(np.asarray(dt.prior[name].values, float).ravel())
        qw = _width(np.asarray(post[name].values, float).ravel())
        if pw > 0 and qw / pw > PRIOR_DOMINATED_RATIO and name in _MEASURED:
            out.append(
                f"`{name}` is constrained only by its own measurement: its posterior is "
                f"{100 * qw / pw:.0f}% as wide as the measurement prior "
                f"({lens.prior_descriptions().get(name, '')}); the lens adds nothing to it."
            )
        elif pw > 0 and qw / pw > PRIOR_DOMINATED_RATIO:
            out.append(
                f"`{name}` is prior-dominated: its posterior 68% width is "
                f"{100 * qw / pw:.0f}% of the prior's (threshold "
                f"{100 * PRIOR_DOMINATED_RATIO:.0f}%); its interval restates the prior "
                f"({lens.prior_descriptions().get(name, 'see the model file')})."
            )
    if "log10_imf_factor" in post.data_vars and "fdm_einstein" in post.data_vars:
        a = np.asarray(post["log10_imf_factor"].values, float).ravel()
        f = np.asarray(post["fdm_einstein"].values, float).ravel()
        rho = float(np.corrcoef(a, f)[0, 1])
        out.append(
            "Stellar-mass / dark-matter degeneracy: alpha_IMF and f_DM(<R_E) have a "
            f"posterior correlation of {rho:+.2f}"
            + (" (strong)" if abs(rho) > 0.7 else " (weak)" if abs(rho) < 0.3 else "")
            + ". The ring fixes the total projected mass inside R_E; how it is split "
            "between stars and dark matter depends on "
            + (
                "the velocity dispersion and the priors."
                if lens.uses_kinematics
                else "the priors alone (no kinematics were used): "
                + (
                    "the alpha_IMF range and the total profile's priors."
                    if lens.spec.mass_model == "total_power_law"
                    else "the stellar-to-halo and concentration relations and the alpha_IMF range."
                )
            )
        )
    if lens.spec.mass_model == "total_power_law" and "fdm_einstein" in post.data_vars:
        neg = float(np.mean(np.asarray(post["fdm_einstein"].values) < 0))
        if neg > 0:
            out.append(
                f"In {100 * neg:.1f}% of the draws the stars outweigh the total power law "
                "inside R_E (negative dark matter): the total-mass model does not forbid it."
            )
    shapes = (
        "a free power-law slope, which the ring alone does not measure"
        if lens.spec.mass_model == "total_power_law"
        else "the assumed profile shapes (Sersic stars, NFW-family halo)"
    )
    out.append(
        "Mass-sheet degeneracy: a ring constrains the projected mass inside R_E, not the "
        f"profile's slope there; here the slope comes from {shapes}, so the density slope "
        "and any quantity away from R_E inherit that assumption"
        + (", partly tested by the velocity dispersion." if lens.uses_kinematics else ".")
    )
    if lens.spec.prescription not in (None, "power"):
        out.append(
            f"The halo response is fixed to '{lens.spec.prescription}'; fit the other "
            "built-in hypotheses (no-response, blumenthal86, gnedin04, gnedin11, "
            "gnedin11-scatter) or sample "
            "nu (free-response) before concluding about contraction."
        )
    if lens.uses_kinematics:
        out.append(
            f"Orbital anisotropy: '{lens.spec.kinematics.get('anisotropy', 'isotropic')}' "
            "(the mass-anisotropy degeneracy: a different choice shifts the mass that a "
            "dispersion implies)."
        )
    return out


def _sites(lens):
    units = {
        "einstein_radius": "arcsec",
        "stellar_mass": "dex(Msun)",
        "velocity_dispersion": "km/s",
    }
    return {
        site: (key, m.value, m.sd, units.get(site, ""))
        for site, (key, m) in lens.likelihood_sites().items()
    }


def report(results, output_dir, *, n_profile_draws: int = 200) -> str:
    """Write the report of a results file (path or DataTree) into ``output_dir``.

    Files: ``report.html`` (self-contained, images embedded), ``summary.md``
    (a short lab-notebook summary), ``table.md``, ``table.tex``,
    ``table.json``, ``diagnostics.json`` and one PNG per figure.  Returns the
    path of ``report.html``.  Nothing is written if the results cannot be read.
    """
    from lensinfer.inference import read_results
    from lensinfer.inference.results import write_bytes
    from lensinfer.report import figures
    from lensinfer.report.profiles import model_from_results, profile_bands

    source = os.fspath(results) if isinstance(results, (str, os.PathLike)) else "<results>"
    dt = read_results(results) if isinstance(results, (str, os.PathLike)) else results
    lens = model_from_results(dt, source)
    diag = diagnose_run(dt)
    rows = quantity_rows(dt)
    names = sampled_names(dt)
    corner_names = [n for n in MAIN_CORNER if n in dt.posterior.data_vars]
    bands = profile_bands(dt, lens, n_draws=n_profile_draws)
    mass_png, fdm_png = figures.mass_profile_figures(bands)
    pngs = {
        "corner.png": (
            "Corner plot of the main parameters",
            figures.corner_figure(dt, corner_names),
        ),
        "rank.png": ("Rank plots per chain (flat when mixed)", figures.rank_figure(dt, names)),
        "mass_profile.png": (
            "Enclosed projected mass: stars, dark matter, total (68% and 95% bands), "
            "the ring's measured mass, R_E and R_eff",
            mass_png,
        ),
        "fdm_profile.png": ("Projected dark-matter fraction versus radius", fdm_png),
        "prior_posterior.png": (
            "Prior (grey) against posterior for each sampled parameter",
            figures.prior_posterior_figure(dt, names),
        ),
        "predicted_observed.png": (
            "Predicted observables against the measurements",
            figures.predicted_vs_observed_figure(dt, _sites(lens)),
        ),
    }
    notes = assumptions(dt, lens)
    imfs = consistent_imfs(dt, reference=lens.observation.reference_imf)
    imf_note = _imf_note(dt, lens, imfs)
    md_table = to_markdown(rows)
    tex = to_latex(
        rows,
        caption=f"Posterior of model {lens.spec.name} for {lens.observation.name}",
        imfs=imf_note,
    )

    summary_md = "\n".join(
        [
            f"# lensinfer report: {lens.spec.name} on {lens.observation.name}",
            "",
            f"**Verdict: {diag.verdict}.**",
            *(f"- {a}" for a in diag.advice),
            "",
            md_table,
            imf_note,
            "",
            "## Assumptions that drive this result",
            *(f"- {s}" for s in notes),
            "",
        ]
    )

    def diag_table():
        head = "<tr><th>parameter</th><th>R-hat</th><th>bulk ESS</th><th>tail ESS</th><th>MCSE mean</th><th>MCSE sd</th></tr>"
        body = "".join(
            f"<tr><td>{html.escape(n)}</td><td>{p['r_hat']:.4f}</td><td>{p['ess_bulk']:.0f}</td>"
            f"<td>{p['ess_tail']:.0f}</td><td>{p['mcse_mean']:.3g}</td><td>{p['mcse_sd']:.3g}</td></tr>"
            for n, p in diag.parameters.items()
        )
        return f"<table>{head}{body}</table>"

    def rows_html():
        head = "<tr><th>quantity</th><th>unit</th><th>median</th><th>68%</th><th>95%</th></tr>"
        body = "".join(
            f"<tr><td>{html.escape(r['label'])}</td><td>{html.escape(r['unit'])}</td>"
            f"<td>{r['median']:.4g}</td><td>{r['interval_68'][0]:.4g} .. {r['interval_68'][1]:.4g}</td>"
            f"<td>{r['interval_95'][0]:.4g} .. {r['interval_95'][1]:.4g}</td></tr>"
            for r in rows
        )
        return f"<table>{head}{body}</table>"

    figs_html = "".join(
        f'<figure><img alt="{html.escape(caption)}" src="data:image/png;base64,'
        f'{base64.b64encode(data).decode("ascii")}"><figcaption>{html.escape(caption)}'
        "</figcaption></figure>"
        for _, (caption, data) in pngs.items()
    )
    prov = {k: v for k, v in dt.attrs.items() if k not in ("model_text", "observation_text")}
    thresholds = (
        f"R-hat &lt; {THRESHOLDS['r_hat']} and bulk and tail ESS &gt; "
        f"{THRESHOLDS['ess_per_chain']} per chain (Vehtari et al. 2021); no divergences; "
        f"E-BFMI &gt; {THRESHOLDS['bfmi']}; under {100 * THRESHOLDS['tree_depth_fraction']:.0f}% "
        "of draws at the maximum tree depth."
    )
    verdict_class = "ok" if diag.converged else "bad"
    page = f"""<!DOCTYPE html>
<html lang="en"><head><meta charset="utf-8">
<title>lensinfer report: {html.escape(lens.spec.name)} on {html.escape(lens.observation.name)}</title>
<style>
body {{ font-family: sans-serif; max-width: 60em; margin: 2em auto; color: #22223b; }}
h1 {{ font-size: 1.4em; }} h2 {{ font-size: 1.1em; border-bottom: 1px solid #c9ada7; }}
table {{ border-collapse: collapse; margin: 0.5em 0; }}
td, th {{ border: 1px solid #ddd; padding: 0.2em 0.6em; font-size: 0.9em; }}
.ok {{ color: #2d7f3d; }} .bad {{ color: #b3261e; }}
figure {{ margin: 1em 0; }} img {{ max-width: 100%; }}
pre {{ background: #f4f1ee; padding: 0.6em; overflow-x: auto; font-size: 0.8em; }}
</style></head><body>
<script>
// Marks the page once every image has loaded and decoded (used by the
// headless-browser test; the page needs no network).
window.addEventListener("load", function () {{
  var imgs = document.images, ok = imgs.length > 0;
  for (var i = 0; i < imgs.length; i++) {{
    if (!imgs[i].complete || imgs[i].naturalWidth === 0) {{ ok = false; }}
  }}
  document.body.setAttribute("data-images", ok ? "all-loaded" : "broken");
  document.body.setAttribute("data-image-count", String(imgs.length));
}});
</script>
<h1>lensinfer report: {html.escape(lens.spec.name)} on {html.escape(lens.observation.name)}</h1>
<h2>Diagnostics</h2>
<p class="{verdict_class}"><strong>Verdict: {html.escape(diag.verdict)}</strong></p>
<ul>{"".join(f"<li>{html.escape(a)}</li>" for a in diag.advice)}</ul>
<p>Thresholds: {thresholds}</p>
<p>{diag.chains} chains x {diag.draws} draws; {diag.divergences} divergences;
E-BFMI per chain {", ".join(f"{b:.2f}" for b in diag.bfmi) or "n/a"};
{100 * diag.tree_depth_fraction:.1f}% of draws at the maximum tree depth.</p>
{diag_table()}
<h2>Posterior</h2>
{rows_html()}
<p>{html.escape(imf_note)}</p>
<h2>Assumptions that drive this result</h2>
<ul>{"".join(f"<li>{html.escape(s.replace('`', ''))}</li>" for s in notes)}</ul>
<h2>Figures</h2>
{figs_html}
<h2>Model file</h2><pre>{html.escape(dt.attrs.get("model_text", ""))}</pre>
<h2>Observation file</h2><pre>{html.escape(dt.attrs.get("observation_text", ""))}</pre>
<h2>Provenance</h2><pre>{html.escape(json.dumps(prov, indent=2, default=str))}</pre>
</body></html>
"""
    os.makedirs(output_dir, exist_ok=True)
    files = {
        "table.md": md_table.encode(),
        "table.tex": tex.encode(),
        "table.json": json.dumps(
            {"quantities": json.loads(to_json(rows)), "named_imfs": imfs, "imf_note": imf_note},
            indent=2,
        ).encode(),
        "diagnostics.json": json.dumps(diag.as_dict(), indent=2, allow_nan=False).encode(),
        "summary.md": summary_md.encode(),
        **{name: data for name, (_, data) in pngs.items()},
        "report.html": page.encode(),
    }
    for name, data in files.items():
        write_bytes(data, os.path.join(output_dir, name))
    return os.path.join(output_dir, "report.html")
