"""Posterior tables: rows of median and 68%/95% intervals, as Markdown, LaTeX, JSON."""

from __future__ import annotations

import json
import math

import numpy as np

__all__ = ["consistent_imfs", "quantity_rows", "to_json", "to_latex", "to_markdown"]

# (name, label for Markdown, LaTeX symbol, unit, scale); quantities absent
# from a run (e.g. M200c of a total power law) are skipped.
MAIN_QUANTITIES = (
    ("fdm_einstein", "f_DM(<R_E)", r"$f_{\mathrm DM}(<R_{\mathrm E})$", "", 1.0),
    ("fdm_reff", "f_DM(<R_eff), 3-D", r"$f_{\mathrm DM}(<r_{\mathrm eff})$", "", 1.0),
    ("alpha_imf", "alpha_IMF", r"$\alpha_{\mathrm IMF}$", "", 1.0),
    ("log10_imf_factor", "log10 alpha_IMF", r"$\log_{10}\alpha_{\mathrm IMF}$", "dex", 1.0),
    ("mstar_msun", "M*", r"$M_\star$", "1e11 Msun", 1e11),
    (
        "log10_mstar_ref",
        "log10 M*_ref (reference IMF)",
        r"$\log_{10} M_{\star,\mathrm ref}$",
        "dex(Msun)",
        1.0,
    ),
    ("m200c_msun", "M200c", r"$M_{200c}$", "1e13 Msun", 1e13),
    ("c200c", "c200c", r"$c_{200c}$", "", 1.0),
    ("response_nu", "response index nu", r"$\nu$", "", 1.0),
    (
        "contraction_ratio_reff",
        "M_DM(<R_eff) after/before response",
        r"$M_{\mathrm DM}/M_{\mathrm DM,0}(<r_{\mathrm eff})$",
        "",
        1.0,
    ),
    ("density_slope_einstein", "total density slope at R_E", r"$\gamma'(R_{\mathrm E})$", "", 1.0),
    ("slope", "power-law slope", r"$\gamma$", "", 1.0),
    ("einstein_radius_arcsec", "theta_E (predicted)", r"$\theta_{\mathrm E}$", "arcsec", 1.0),
    (
        "projected_mass_einstein_msun",
        "M_2D(<R_E)",
        r"$M_{\mathrm 2D}(<R_{\mathrm E})$",
        "1e11 Msun",
        1e11,
    ),
    ("sigma_aperture_kms", "sigma_ap (predicted)", r"$\sigma_{\mathrm ap}$", "km/s", 1.0),
    ("anisotropy_beta", "anisotropy beta", r"$\beta$", "", 1.0),
    ("z_source", "z_source", r"$z_{\mathrm s}$", "", 1.0),
)


def quantity_rows(dt, names=None) -> list[dict]:
    """One row per quantity: median and equal-tailed 68% and 95% intervals.

    The intervals are the 16-84 and 2.5-97.5 percentiles of all draws, i.e.
    arviz's ``eti`` with probabilities 0.68 and 0.95.
    """
    post = dt.posterior
    spec = {q[0]: q for q in MAIN_QUANTITIES}
    if names is None:
        names = [q[0] for q in MAIN_QUANTITIES if q[0] in post.data_vars]
    rows = []
    for n in names:
        x = np.asarray(post[n].values, float).ravel()
        x = x[np.isfinite(x)]
        if x.size == 0:
            continue
        _, label, tex, unit, scale = spec.get(n, (n, n, n.replace("_", r"\_"), "", 1.0))
        q = np.percentile(x, [2.5, 16, 50, 84, 97.5]) / scale
        rows.append(
            {
                "name": n,
                "label": label,
                "latex": tex,
                "unit": unit,
                "scale": scale,
                "median": float(q[2]),
                "interval_68": [float(q[1]), float(q[3])],
                "interval_95": [float(q[0]), float(q[4])],
            }
        )
    return rows


def _decimals(row) -> int:
    """Decimals that show the smaller 68% error to 2 significant figures."""
    m = row["median"]
    lo, hi = row["interval_68"]
    err = min(m - lo, hi - m)
    if not (err > 0 and math.isfinite(err)):
        err = abs(m) * 1e-3 if m else 1e-3
    return max(0, 1 - math.floor(math.log10(err)))


def _fmt(v: float, decimals: int) -> str:
    if not math.isfinite(v):
        return f"{v:g}"
    return f"{v:.{decimals}f}"


def to_markdown(rows) -> str:
    lines = [
        "| quantity | unit | median | 68% interval | 95% interval |",
        "|---|---|---|---|---|",
    ]
    for r in rows:
        k = _decimals(r)
        a, b = r["interval_68"]
        c, d = r["interval_95"]
        lines.append(
            f"| {r['label']} | {r['unit']} | {_fmt(r['median'], k)} | {_fmt(a, k)} .. "
            f"{_fmt(b, k)} | {_fmt(c, k)} .. {_fmt(d, k)} |"
        )
    return "\n".join(lines) + "\n"


_TEX_ESCAPES = {
    "\\": r"\textbackslash{}",
    "_": r"\_",
    "%": r"\%",
    "&": r"\&",
    "#": r"\#",
    "$": r"\$",
    "{": r"\{",
    "}": r"\}",
    "^": r"\textasciicircum{}",
    "~": r"\textasciitilde{}",
    "<": r"\textless{}",
    ">": r"\textgreater{}",
}


def _tex_text(s: str) -> str:
    return "".join(_TEX_ESCAPES.get(ch, ch) for ch in s)


def to_latex(rows, caption: str = "Posterior summary", imfs=None) -> str:
    """A ``table`` environment a paper can take (needs ``\\usepackage{booktabs}``).

    Values are median with the 68% interval as asymmetric errors; the 95%
    interval is in its own column.  ``imfs``, when given, is a note under the
    table (the named IMFs alpha_IMF is consistent with).
    """
    out = [
        "% lensinfer posterior table; needs \\usepackage{booktabs}",
        r"\begin{table}",
        r"\centering",
        r"\caption{" + _tex_text(caption) + "}",
        r"\begin{tabular}{llcc}",
        r"\toprule",
        r"Quantity & Unit & Median (68\%) & 95\% interval \\",
        r"\midrule",
    ]
    for r in rows:
        k = _decimals(r)
        m = r["median"]
        lo, hi = r["interval_68"]
        c, d = r["interval_95"]
        unit = _tex_text(r["unit"]).replace("1e11", r"$10^{11}$").replace("1e13", r"$10^{13}$")
        out.append(
            f"{r['latex']} & {unit} & ${_fmt(m, k)}^{{+{_fmt(hi - m, k)}}}_{{-{_fmt(m - lo, k)}}}$ "
            f"& $[{_fmt(c, k)}, {_fmt(d, k)}]$ \\\\"
        )
    out += [r"\bottomrule", r"\end{tabular}"]
    if imfs is not None:
        out.append(r"\par\smallskip " + _tex_text(imfs))
    out.append(r"\end{table}")
    return "\n".join(out) + "\n"


def to_json(rows) -> str:
    return json.dumps(rows, indent=2)


def consistent_imfs(dt, reference: str = "chabrier03", prob: float = 0.95) -> list[str]:
    """Named IMFs whose alpha_IMF (relative to ``reference``, 10 Gyr) lies in the interval."""
    from lensinfer.stellar import NAMED_IMFS, imf_mass_factor

    if "log10_imf_factor" not in dt.posterior.data_vars:
        return []
    x = np.asarray(dt.posterior["log10_imf_factor"].values, float).ravel()
    lo, hi = np.percentile(x, [50 * (1 - prob), 50 * (1 + prob)])
    out = []
    for name in NAMED_IMFS:
        v = float(np.log10(imf_mass_factor(name, reference=reference, age_gyr=10.0)))
        if lo <= v <= hi:
            out.append(name)
    return out
