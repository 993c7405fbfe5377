"""The command line end to end: ``lensinfer sample`` and ``lensinfer demo`` on
small runs of the cheap total power-law model (the contraction models are
exercised by tests/inference/test_recovery.py).  Every lens is invented.
"""

import json
import os

import numpy as np

from lensinfer.cli import demo_observation_path, main
from lensinfer.inference import read_results

SMALL = ["--chains", "2", "--warmup", "150", "--draws", "100", "--no-progress"]


def test_sample_writes_results_and_summary(capsys, tmp_path):
    out = tmp_path / "run.nc"
    status = main(
        ["sample", "power-law-total", demo_observation_path(), "-o", str(out), "--json", *SMALL]
    )
    stdout, stderr = capsys.readouterr()
    assert status == 0, stderr
    summary = json.loads(stdout)  # --json: the machine-readable summary alone on stdout
    assert sorted(os.listdir(tmp_path)) == ["run.nc", "run.summary.json"]
    with open(tmp_path / "run.summary.json", encoding="utf-8") as fh:
        assert json.load(fh) == summary
    assert summary["model"] == "power-law-total"
    assert (summary["chains"], summary["draws"]) == (2, 100)
    for name in ("slope", "theta_e_arcsec", "log10_imf_factor", "fdm_einstein", "mstar_msun"):
        s = summary["quantities"][name]
        assert s["interval_95"][0] <= s["interval_68"][0] <= s["median"] <= s["interval_68"][1]
        assert s["interval_68"][1] <= s["interval_95"][1]
        assert s["r_hat"] is not None and s["ess_bulk"] is not None

    dt = read_results(out)
    for group in ("posterior", "prior", "prior_predictive", "sample_stats", "log_likelihood"):
        assert group in dt.children
    assert dt.attrs["model_name"] == "power-law-total"
    assert "[ring]" in dt.attrs["observation_text"]
    assert json.loads(dt.attrs["options"])["draws"] == 100
    # The summary's median is the median of the stored draws (same numbers,
    # only float64 rounding between them).
    x = np.asarray(dt.posterior["slope"].values).ravel()
    np.testing.assert_allclose(summary["quantities"]["slope"]["median"], np.median(x), rtol=1e-12)


def test_demo_writes_into_its_directory(capsys, tmp_path):
    outdir = tmp_path / "demo"
    status = main(["demo", "--output-dir", str(outdir), "--model", "power-law-total", *SMALL])
    stdout, stderr = capsys.readouterr()
    assert status == 0, stderr
    assert sorted(os.listdir(outdir)) == ["demo-results.nc", "demo-results.summary.json", "report"]
    assert "invented" in stdout
    assert "f_DM inside the Einstein radius" in stdout
    # The demo ends by writing the report and printing its path.
    report_html = os.path.join(os.path.abspath(outdir), "report", "report.html")
    assert stdout.rstrip().splitlines()[-1] == f"report: {report_html}"
    assert os.path.isfile(report_html)
