"""Posterior reports: the verdict, the tables against arviz, the files and the HTML page."""

from __future__ import annotations

import base64
import json
import os
import re
import shutil
import subprocess

import arviz as az
import numpy as np
import pytest

from lensinfer.cli import demo_observation_path, main
from lensinfer.report import diagnose_run, quantity_rows, report, to_latex

CHAINS, DRAWS = 4, 1000


def _toy(means, seed=0, diverging=None):
    """A synthetic run: one normal parameter per entry of ``means`` (one per chain).

    ``diverging``: a function of the draws of "a" giving the divergent flags.
    """
    rng = np.random.default_rng(seed)
    x = np.stack([m + rng.standard_normal(DRAWS) for m in means])
    post = {"a": x, "b": rng.standard_normal((len(means), DRAWS))}
    stats = {
        "diverging": np.zeros(x.shape, bool) if diverging is None else diverging(x),
        "energy": rng.standard_normal((len(means), DRAWS)),
        "reached_max_tree_depth": np.zeros((len(means), DRAWS), bool),
    }
    return az.from_dict({"posterior": post, "sample_stats": stats})


def test_bimodal_run_is_not_converged():
    # Two chains in each of two modes 3 sd apart: the split R-hat of Vehtari
    # et al. (2021) is far above 1.01, so the verdict must name R-hat for "a".
    diag = diagnose_run(_toy([0.0, 0.0, 3.0, 3.0]))
    assert not diag.converged
    rhat_fail = [f for f in diag.failed if f.startswith("R-hat")]
    assert len(rhat_fail) == 1
    flagged = [name.strip() for name in rhat_fail[0].split(" for ")[1].split(",")]
    assert flagged == ["a"]  # "b" mixes well in every chain
    assert diag.advice and "warm-up" in diag.advice[0]


def test_divergences_are_flagged_with_their_location():
    dt = _toy([0.0] * CHAINS, diverging=lambda a: a > 2.0)  # only at high "a"
    diag = diagnose_run(dt)
    assert not diag.converged
    assert any("divergent" in f and "high a" in f for f in diag.failed)
    assert diag.divergence_locations["a"]["shift_sd"] > 1.0


def test_scattered_divergences_claim_no_cluster():
    def every_100th(a):  # spread evenly over the run, unrelated to any parameter
        mask = np.zeros(a.shape, bool)
        mask[:, ::100] = True
        return mask

    dt = _toy([0.0] * CHAINS, diverging=every_100th)
    diag = diagnose_run(dt)
    assert any("no clear cluster" in f for f in diag.failed), diag.failed


def test_missing_sampler_statistics_are_not_checked():
    dt = az.from_dict({"posterior": {"a": np.random.default_rng(0).standard_normal((4, 500))}})
    diag = diagnose_run(dt)
    assert set(diag.not_checked) == {"divergences", "E-BFMI", "tree depth"}
    assert "not checked" in diag.verdict


def test_low_bfmi_is_flagged():
    # E-BFMI = mean squared energy change / energy variance (Betancourt 2016):
    # a slowly wandering energy (random walk) has a tiny E-BFMI.
    dt = _toy([0.0] * CHAINS)
    walk = np.cumsum(np.random.default_rng(1).standard_normal((CHAINS, DRAWS)), axis=1)
    dt = az.from_dict(
        {
            "posterior": {"a": np.asarray(dt.posterior["a"].values)},
            "sample_stats": {
                "diverging": np.zeros((CHAINS, DRAWS), bool),
                "energy": walk,
                "reached_max_tree_depth": np.zeros((CHAINS, DRAWS), bool),
            },
        }
    )
    diag = diagnose_run(dt)
    assert any("E-BFMI" in f for f in diag.failed)
    assert all(b < 0.3 for b in diag.bfmi)


def test_independent_draws_are_converged_and_match_arviz():
    dt = _toy([0.0] * CHAINS)
    diag = diagnose_run(dt)
    assert diag.converged, diag.failed
    assert diag.verdict == "converged"
    # The figures are arviz's own (same call, same data): equal to rounding.
    for n in ("a", "b"):
        assert diag.parameters[n]["r_hat"] == pytest.approx(float(az.rhat(dt)[n]), rel=1e-12)
        assert diag.parameters[n]["ess_bulk"] == pytest.approx(
            float(az.ess(dt, method="bulk")[n]), rel=1e-12
        )
    assert len(diag.bfmi) == CHAINS


def test_table_matches_arviz_summary():
    dt = _toy([0.0] * CHAINS)
    rows = {r["name"]: r for r in quantity_rows(dt, names=["a", "b"])}
    for prob, key in ((0.68, "interval_68"), (0.95, "interval_95")):
        s = az.summary(dt, ci_kind="eti", ci_prob=prob, round_to="none")
        lo_col = next(c for c in s.columns if c.endswith("_lb"))
        hi_col = next(c for c in s.columns if c.endswith("_ub"))
        for n in ("a", "b"):
            # Same equal-tailed percentiles of the same draws; arviz and numpy
            # interpolate identically, so the only difference is rounding.
            assert rows[n][key][0] == pytest.approx(float(s.loc[n, lo_col]), rel=1e-9, abs=1e-12)
            assert rows[n][key][1] == pytest.approx(float(s.loc[n, hi_col]), rel=1e-9, abs=1e-12)
        for n in ("a", "b"):
            med = float(az.median(dt, round_to="none")[n])  # round_to=None still rounds
            assert rows[n]["median"] == pytest.approx(med, rel=1e-12, abs=1e-12)


def test_latex_table_shape():
    dt = _toy([0.0] * CHAINS)
    tex = to_latex(quantity_rows(dt, names=["a", "b"]), caption="a_b & c ~x^2 {y} $5 <z> \\q")
    assert tex.count(r"\begin{table}") == tex.count(r"\end{table}") == 1
    assert tex.count(r"\begin{tabular}") == tex.count(r"\end{tabular}") == 1
    assert tex.count("{") == tex.count("}")
    # Outside math mode every underscore, & of text, and % is escaped.
    body_lines = [line for line in tex.splitlines() if not line.startswith("%")]  # comments
    text = re.sub(r"(?<!\\)\$.*?(?<!\\)\$", "", "\n".join(body_lines))
    assert not re.search(r"(?<!\\)_", text)
    assert not re.search(r"(?<!\\)%", text)
    assert r"a\_b \& c" in tex
    caption = next(line for line in tex.splitlines() if line.startswith(r"\caption"))
    # every special character of the caption is escaped (no raw ~ ^ $ < > or \q)
    assert r"\textasciitilde{}x\textasciicircum{}2 \{y\} \$5 \textless{}z\textgreater{}" in caption
    assert r"\textbackslash{}q" in caption
    body = [line for line in tex.splitlines() if line.endswith(r"\\")]
    assert all(line.count("&") - line.count(r"\&") == 3 for line in body)  # 4 columns


@pytest.fixture(scope="module")
def small_run(tmp_path_factory):
    d = tmp_path_factory.mktemp("run")
    out = d / "run.nc"
    # The demo lens without its velocity dispersion: a ring-only fit, where
    # the power law's slope is left to its prior (asserted below).
    with open(demo_observation_path(), encoding="utf-8") as fh:
        text = fh.read()
    ring_only = d / "ring-only.toml"
    ring_only.write_text(text.split("[kinematics]")[0], encoding="utf-8")
    status = main(
        [
            "sample",
            "power-law-total",
            str(ring_only),
            "-o",
            str(out),
            "--chains",
            "4",
            "--warmup",
            "500",
            "--draws",
            "800",
            "--no-progress",
        ]
    )
    assert status == 0
    return out


EXPECTED_FILES = {
    "report.html",
    "summary.md",
    "table.md",
    "table.tex",
    "table.json",
    "diagnostics.json",
    "corner.png",
    "rank.png",
    "mass_profile.png",
    "fdm_profile.png",
    "prior_posterior.png",
    "predicted_observed.png",
}


@pytest.fixture(scope="module")
def written_report(small_run, tmp_path_factory):
    outdir = tmp_path_factory.mktemp("report")
    path = report(small_run, outdir, n_profile_draws=50)
    return outdir, path


def test_report_files(written_report):
    outdir, _path = written_report
    assert set(os.listdir(outdir)) == EXPECTED_FILES
    for name in EXPECTED_FILES:
        if name.endswith(".png"):
            assert (outdir / name).read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    diag = json.loads((outdir / "diagnostics.json").read_text())
    assert diag["thresholds"]["r_hat"] == 1.01
    summary = (outdir / "summary.md").read_text()
    assert "Verdict:" in summary and "Mass-sheet degeneracy" in summary
    # The slope of a lensing-only power law is not measured: flagged.
    assert "`slope` is prior-dominated" in summary


def test_html_embeds_every_figure(written_report):
    _outdir, path = written_report
    with open(path, encoding="utf-8") as fh:
        page = fh.read()
    srcs = re.findall(r'<img[^>]*src="([^"]+)"', page)
    assert len(srcs) == sum(n.endswith(".png") for n in EXPECTED_FILES)
    for src in srcs:
        assert src.startswith("data:image/png;base64,")
        assert base64.b64decode(src.split(",", 1)[1])[:4] == b"\x89PNG"
    # nothing is fetched: no element loads an external resource
    assert not re.search(r'(src|href)="(https?:)?//', page)
    assert "[ring]" in page  # the observation text is on the page


def _browser():
    for name in ("chromium", "chromium-browser", "google-chrome"):
        if shutil.which(name):
            return shutil.which(name)
    return None


@pytest.mark.skipif(_browser() is None, reason="no headless browser installed")
def test_html_renders_in_headless_browser(written_report):
    _, path = written_report
    result = subprocess.run(
        [
            _browser(),
            "--headless",
            "--no-sandbox",
            "--disable-gpu",
            "--virtual-time-budget=10000",
            "--dump-dom",
            "file://" + os.path.abspath(path),
        ],
        capture_output=True,
        text=True,
        timeout=120,
    )
    dom = result.stdout
    # The page's own load handler marks whether every image decoded.
    assert 'data-images="all-loaded"' in dom, result.stderr[-2000:]
    assert 'data-image-count="6"' in dom


def test_converged_mock_run_is_reported_converged(small_run, written_report):
    # The power-law mock run mixes well (measured at 4 x (500 + 800): every R-hat
    # below 1.01); its report must say so, and its table must
    # carry arviz's own summary numbers for the same draws.
    from lensinfer.inference import read_results

    outdir, _ = written_report
    diag = json.loads((outdir / "diagnostics.json").read_text())
    assert diag["verdict"] == "converged", diag["failed"]
    dt = read_results(small_run)
    rows = {r["name"]: r for r in json.loads((outdir / "table.json").read_text())["quantities"]}
    s95 = az.summary(
        dt, var_names=["slope", "fdm_einstein"], ci_kind="eti", ci_prob=0.95, round_to="none"
    )
    for n in ("slope", "fdm_einstein"):
        lo = float(s95.loc[n, next(c for c in s95.columns if c.endswith("_lb"))])
        hi = float(s95.loc[n, next(c for c in s95.columns if c.endswith("_ub"))])
        # same percentiles of the same draws: equal to float rounding
        assert rows[n]["interval_95"] == pytest.approx([lo, hi], rel=1e-9)
    # diagnostics cover the sampled parameters, with arviz's numbers
    assert diag["parameters"]["slope"]["r_hat"] == pytest.approx(
        float(az.rhat(dt, var_names=["slope"])["slope"]), rel=1e-12
    )
    # the well-measured Einstein radius is not called prior-dominated
    summary = (outdir / "summary.md").read_text()
    assert "`theta_e_arcsec` is prior-dominated" not in summary


def test_cli_report_and_bad_input(small_run, tmp_path, capsys):
    out = tmp_path / "rep"
    assert main(["report", str(small_run), "-o", str(out)]) == 0
    assert "report:" in capsys.readouterr().out
    assert (out / "report.html").exists()
    bad = tmp_path / "not-results.nc"
    bad.write_text("not netCDF")
    out2 = tmp_path / "rep2"
    assert main(["report", str(bad), "-o", str(out2)]) == 2
    err = capsys.readouterr().err
    assert str(bad) in err and "cannot be read" in err
    assert not out2.exists()
    # a missing file, a directory, and -o naming an existing file: exit 2, nothing written
    for argv, fragment in (
        (["report", str(tmp_path / "none.nc"), "-o", str(out2)], "does not exist"),
        (["report", str(tmp_path), "-o", str(out2)], "is a directory"),
        (["report", str(small_run), "-o", str(bad)], "is not a directory"),
    ):
        assert main(argv) == 2
        assert fragment in capsys.readouterr().err
        assert not out2.exists()
    # a netCDF that is not a lensinfer results file (no spec texts)
    import xarray as xr

    plain = tmp_path / "plain.nc"
    xr.DataTree.from_dict({"posterior": xr.Dataset({"x": ("d", [1.0])})}).to_netcdf(
        plain, engine="h5netcdf"
    )
    assert main(["report", str(plain), "-o", str(out2)]) == 2
    assert "not a lensinfer results file" in capsys.readouterr().err
    assert not out2.exists()
