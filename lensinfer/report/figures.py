"""Report figures (matplotlib, headless): PNG bytes, our own layout and colours."""

from __future__ import annotations

import io

import numpy as np

__all__ = [
    "corner_figure",
    "mass_profile_figures",
    "predicted_vs_observed_figure",
    "prior_posterior_figure",
    "rank_figure",
]

# Our palette: stars warm, dark matter cool, total dark; prior grey.
STARS = "#c8553d"
DARK = "#2d7f9d"
TOTAL = "#22223b"
PRIOR = "#9a9a9a"
POST = "#4a4e69"
COLUMN_WIDTH_IN = 3.4  # one journal column


def _plt():
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    plt.rcParams.update({"font.size": 8, "axes.titlesize": 8, "axes.labelsize": 8})
    return plt


def _png(fig) -> bytes:
    buf = io.BytesIO()
    fig.savefig(buf, format="png", dpi=150, bbox_inches="tight")
    _plt().close(fig)
    return buf.getvalue()


def _draws(dt, name):
    return np.asarray(dt.posterior[name].values, float).ravel()


def corner_figure(dt, names) -> bytes:
    """Corner plot of the main parameters (the ``corner`` package)."""
    import logging

    import corner

    plt = _plt()
    data = np.column_stack([_draws(dt, n) for n in names])
    # corner logs "too few points to create valid contours" for narrow
    # posteriors; the histograms are still drawn.
    root = logging.getLogger()
    level = root.level
    root.setLevel(max(level, logging.ERROR))
    try:
        fig = corner.corner(
            data,
            labels=names,
            color=POST,
            quantiles=[0.16, 0.5, 0.84],
            show_titles=True,
            title_fmt=".3g",
            label_kwargs={"fontsize": 7},
            title_kwargs={"fontsize": 6},
        )
    finally:
        root.setLevel(level)
    fig.set_size_inches(2 * COLUMN_WIDTH_IN, 2 * COLUMN_WIDTH_IN)
    del plt
    return _png(fig)


def rank_figure(dt, names) -> bytes:
    """Rank histograms per chain for every sampled parameter (Vehtari et al. 2021).

    Ranks of all draws pooled over chains; a well-mixed run gives flat
    histograms for every chain.
    """
    plt = _plt()
    n = len(names)
    fig, axes = plt.subplots(n, 1, figsize=(COLUMN_WIDTH_IN, 0.9 * n + 0.4), squeeze=False)
    for ax, name in zip(axes[:, 0], names, strict=True):
        x = np.asarray(dt.posterior[name].values, float)
        chains, draws = x.shape
        ranks = np.argsort(np.argsort(x.ravel())).reshape(chains, draws)
        bins = np.linspace(0, chains * draws, 21)
        for c in range(chains):
            h, _ = np.histogram(ranks[c], bins=bins)
            ax.step(bins[:-1], h, where="post", lw=0.8, label=f"chain {c}")
        ax.axhline(draws / 20, color=PRIOR, lw=0.6, ls="--")
        ax.set_ylabel(name, rotation=0, ha="right", fontsize=6)
        ax.set_yticks([])
        ax.set_xticks([])
    axes[-1, 0].set_xlabel("rank of the draw among all chains (flat = well mixed)")
    return _png(fig)


def prior_posterior_figure(dt, names) -> bytes:
    """Prior (grey) against posterior density for each parameter."""
    plt = _plt()
    n = len(names)
    cols = 2
    rows = (n + 1) // cols
    fig, axes = plt.subplots(rows, cols, figsize=(2 * COLUMN_WIDTH_IN, 1.4 * rows), squeeze=False)
    for k, ax in enumerate(axes.ravel()):
        if k >= n:
            ax.set_visible(False)
            continue
        name = names[k]
        post = _draws(dt, name)
        pri = (
            np.asarray(dt.prior[name].values, float).ravel()
            if "prior" in dt.children and name in dt.prior.data_vars
            else None
        )
        both = post if pri is None else np.concatenate([post, pri])
        bins = np.linspace(np.nanmin(both), np.nanmax(both), 40)
        if pri is not None:
            ax.hist(pri, bins=bins, density=True, color=PRIOR, alpha=0.6, label="prior")
        ax.hist(
            post, bins=bins, density=True, histtype="step", color=POST, lw=1.2, label="posterior"
        )
        ax.set_xlabel(name)
        ax.set_yticks([])
        if k == 0:
            ax.legend(frameon=False, fontsize=6)
    fig.tight_layout()
    return _png(fig)


def predicted_vs_observed_figure(dt, sites: dict) -> bytes:
    """Posterior of each predicted observable against its measurement (+-1 sd).

    ``sites`` maps likelihood site -> (predicted quantity, value, sd, unit).
    """
    plt = _plt()
    n = len(sites)
    fig, axes = plt.subplots(1, n, figsize=(COLUMN_WIDTH_IN * max(1, n) / 1.5, 1.8), squeeze=False)
    for ax, (site, (key, value, sd, unit)) in zip(axes[0], sites.items(), strict=True):
        pred = _draws(dt, key)
        ax.hist(pred, bins=40, density=True, color=POST, alpha=0.7, label="predicted")
        ax.axvspan(value - sd, value + sd, color=STARS, alpha=0.25, label="measured +-1 sd")
        ax.axvline(value, color=STARS, lw=1.0)
        ax.set_xlabel(f"{site} [{unit}]" if unit else site)
        ax.set_yticks([])
    axes[0, 0].legend(frameon=False, fontsize=6)
    fig.tight_layout()
    return _png(fig)


def mass_profile_figures(profile_bands: dict) -> tuple[bytes, bytes]:
    """Enclosed projected mass and the dark-matter fraction versus radius.

    ``profile_bands`` comes from :func:`lensinfer.report.profiles.profile_bands`.
    """
    plt = _plt()
    R = profile_bands["radius_kpc"]
    fig, ax = plt.subplots(figsize=(COLUMN_WIDTH_IN, 2.6))
    for key, colour, label in (
        ("stars", STARS, "stars"),
        ("dark_matter", DARK, "dark matter"),
        ("total", TOTAL, "total"),
    ):
        q = profile_bands[key]
        if q is None:
            continue
        ax.fill_between(R, q[0], q[4], color=colour, alpha=0.15, lw=0)
        ax.fill_between(R, q[1], q[3], color=colour, alpha=0.35, lw=0)
        ax.plot(R, q[2], color=colour, lw=1.2, label=label)
    r_e, r_e_sd = profile_bands["einstein_radius_kpc"]
    m_e, m_e_sd = profile_bands["einstein_mass_msun"]
    ax.errorbar(
        [r_e],
        [m_e],
        xerr=[r_e_sd],
        yerr=[m_e_sd],
        fmt="o",
        color="k",
        ms=3,
        label="ring: pi Sigma_cr R_E^2",
    )
    ax.axvline(r_e, color="k", lw=0.6, ls=":")
    ax.axvline(profile_bands["r_eff_kpc"], color=STARS, lw=0.6, ls="--", label="R_eff")
    ax.set_xscale("log")
    ax.set_yscale("log")
    ax.set_ylim(bottom=0.3 * float(np.min(profile_bands["total"][2])))
    ax.set_xlabel("projected radius R [kpc]")
    ax.set_ylabel("M_2D(<R) [Msun]")
    ax.legend(frameon=False, fontsize=6)
    mass_png = _png(fig)

    fig, ax = plt.subplots(figsize=(COLUMN_WIDTH_IN, 2.2))
    q = profile_bands["fdm"]
    ax.fill_between(R, q[0], q[4], color=DARK, alpha=0.15, lw=0, label="95%")
    ax.fill_between(R, q[1], q[3], color=DARK, alpha=0.35, lw=0, label="68%")
    ax.plot(R, q[2], color=DARK, lw=1.2, label="median")
    ax.axvline(r_e, color="k", lw=0.6, ls=":", label="R_E")
    ax.axvline(profile_bands["r_eff_kpc"], color=STARS, lw=0.6, ls="--", label="R_eff")
    ax.set_xscale("log")
    ax.set_ylim(0, 1)
    ax.set_xlabel("projected radius R [kpc]")
    ax.set_ylabel("dark-matter fraction f_DM(<R), projected")
    ax.legend(frameon=False, fontsize=6)
    return mass_png, _png(fig)
