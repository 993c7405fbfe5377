"""Tests of lensinfer.inference.results: results files, atomic writes and the summary.

Everything runs on a synthetic DataTree built with ``arviz.from_dict`` (no
sampling): 4 chains x 200 draws of variables with known distributions, laid
out like the output of ``lensinfer.sample`` (posterior, sample_stats,
log_likelihood, observed_data, prior, prior_predictive and provenance attrs).

Comparison with other codes: the summary's statistics are checked against
arviz's own functions (``summary``, ``rhat``, ``ess``) and numpy, and against
the exact quantiles of the normal distribution (scipy.stats.norm) for draws
placed on a quantile grid.  Regression tests: the round trip of a results
file and the atomic-write guarantees.
"""

import json
import os

import arviz as az
import numpy as np
import pytest
import xarray as xr
from scipy import stats

from lensinfer.inference import read_results, summarize, write_results, write_summary

N_CHAINS, N_DRAWS = 4, 200
SHAPE = (N_CHAINS, N_DRAWS)
# (chain, draw) of the diverging transitions in the synthetic tree.
DIVERGING_AT = [(0, 3), (0, 150), (1, 42), (2, 0), (2, 1), (3, 77), (3, 199)]
# Quantile-grid variable: exact N(MU, SIGMA) quantiles, shuffled over chains and draws.
MU, SIGMA = 13.4, 0.2
RHO = 0.9  # AR(1) coefficient of the autocorrelated variable


def _ar1(rng, rho, shape):
    x = np.empty(shape)
    x[:, 0] = rng.standard_normal(shape[0])
    eps = rng.standard_normal(shape) * np.sqrt(1.0 - rho**2)
    for t in range(1, shape[1]):
        x[:, t] = rho * x[:, t - 1] + eps[:, t]
    return x


def make_tree(seed=0):
    """A synthetic results tree (invented numbers; no real system)."""
    rng = np.random.default_rng(seed)
    n = N_CHAINS * N_DRAWS
    grid = stats.norm.ppf((np.arange(n) + 0.5) / n, loc=MU, scale=SIGMA)
    posterior = {
        "log10_m200c": rng.permutation(grid).reshape(SHAPE),
        "fdm_einstein": rng.normal(0.6, 0.05, SHAPE),
        # Chains centred at 0, 1, 2, 3: not mixed, R-hat far above 1.
        "unmixed": rng.standard_normal(SHAPE) + np.arange(N_CHAINS)[:, None],
        "autocorrelated": _ar1(rng, RHO, SHAPE),
        # A derived quantity that is undefined for this model (e.g. M200c of a
        # total-mass model) is NaN in every draw.
        "m200c_msun": np.full(SHAPE, np.nan),
    }
    diverging = np.zeros(SHAPE, dtype=bool)
    for c, d in DIVERGING_AT:
        diverging[c, d] = True
    n_steps = rng.integers(1, 32, SHAPE)
    sample_stats = {
        "diverging": diverging,
        "energy": rng.normal(10.0, 2.0, SHAPE),
        "n_steps": n_steps,
        "tree_depth": np.floor(np.log2(n_steps)).astype(int) + 1,
        "reached_max_tree_depth": np.zeros(SHAPE, dtype=bool),
    }
    n_prior = 100
    data = {
        "posterior": posterior,
        "sample_stats": sample_stats,
        "log_likelihood": {
            "einstein_radius": rng.normal(1.0, 0.5, SHAPE),
            "stellar_mass": rng.normal(0.5, 0.5, SHAPE),
        },
        "observed_data": {"einstein_radius": np.asarray(1.85), "stellar_mass": np.asarray(11.3)},
        "prior": {"log10_m200c": rng.uniform(11.5, 15.0, (1, n_prior))},
        "prior_predictive": {"einstein_radius": rng.normal(1.5, 0.8, (1, n_prior))},
    }
    dt = az.from_dict(data)
    dt.attrs.update(
        {
            "model_name": "synthetic-model",
            "observation_name": "invented lens (synthetic)",
            # Non-ASCII and multi-line text, as in a model file's comments.
            "model_text": '[model]\nname = "synthetic-model"\n# σ ≥ 200 km/s, M☉ — invented\n',
            "versions": json.dumps({"lensinfer": "0.0.test", "arviz": az.__version__}),
            "seed": 7,
            "sampling_wall_seconds": 12.5,
        }
    )
    return dt


@pytest.fixture(scope="module")
def tree():
    return make_tree()


@pytest.fixture(scope="module")
def summary(tree):
    return summarize(tree)


def _draws(tree, name):
    return np.asarray(tree.posterior[name].values, dtype=float).ravel()


# ------------------------------------------------------------------ round trip


def test_round_trip_preserves_groups_values_and_attrs(tree, tmp_path):
    path = tmp_path / "run.nc"
    assert write_results(tree, path) == str(path)
    back = read_results(path)
    assert set(back.groups) == set(tree.groups)
    assert back.attrs == tree.attrs
    for group in tree.groups[1:]:
        # identical: same variables, dims, coords, values and group attrs.
        xr.testing.assert_identical(back[group].to_dataset(), tree[group].to_dataset())
        for name, var in tree[group].to_dataset().data_vars.items():
            # netCDF has no bool type: xarray encodes bools and must decode them back.
            assert back[group][name].dtype == var.dtype, (group, name)


def test_round_trip_summary_unchanged(tree, summary, tmp_path):
    path = write_results(tree, tmp_path / "run.nc")
    assert summarize(read_results(path)) == summary


def test_overwrite_replaces_previous_file(tree, tmp_path):
    path = tmp_path / "run.nc"
    write_results(make_tree(seed=1), path)
    write_results(tree, path)
    back = read_results(path)
    np.testing.assert_array_equal(
        back.posterior["fdm_einstein"].values, tree.posterior["fdm_einstein"].values
    )
    assert os.listdir(tmp_path) == ["run.nc"]  # no temporary file left beside it


# ---------------------------------------------------------------- atomic write


class _WriterFailed(Exception):
    pass


def _failing_writer(calls, exc):
    """A stand-in for DataTree.to_netcdf that writes part of a file and then fails."""

    def to_netcdf(self, filepath=None, *args, **kwargs):
        calls.append(os.fspath(filepath))
        with open(filepath, "wb") as fh:
            fh.write(b"\x89HDF\r\n\x1a\n partial")
        raise exc

    return to_netcdf


@pytest.mark.parametrize("exc", [_WriterFailed("disk full"), KeyboardInterrupt()])
def test_failed_write_leaves_nothing(tree, tmp_path, monkeypatch, exc):
    calls = []
    monkeypatch.setattr(xr.DataTree, "to_netcdf", _failing_writer(calls, exc))
    dest = tmp_path / "run.nc"
    with pytest.raises(type(exc)):
        write_results(tree, dest)
    # The writer was given a temporary file in the destination's folder, never the
    # destination itself, and that temporary file is gone.
    assert len(calls) == 1
    assert os.path.dirname(calls[0]) == str(tmp_path)
    assert calls[0] != str(dest)
    assert os.listdir(tmp_path) == []


def test_failed_write_keeps_existing_file(tree, tmp_path, monkeypatch):
    dest = tmp_path / "run.nc"
    write_results(tree, dest)
    before = dest.read_bytes()
    monkeypatch.setattr(xr.DataTree, "to_netcdf", _failing_writer([], _WriterFailed("midway")))
    with pytest.raises(_WriterFailed):
        write_results(make_tree(seed=1), dest)
    monkeypatch.undo()
    assert dest.read_bytes() == before
    assert os.listdir(tmp_path) == ["run.nc"]
    xr.testing.assert_identical(
        read_results(dest).posterior.to_dataset(), tree.posterior.to_dataset()
    )


def test_unstorable_attribute_fails_cleanly(tree, tmp_path):
    # A real failure inside the netCDF writer (no monkeypatch): h5netcdf cannot
    # store a dict attribute and raises after it has opened the file.
    bad = tree.copy()
    bad.attrs = {**tree.attrs, "options": {"chains": 4}}
    dest = tmp_path / "run.nc"
    dest.write_bytes(b"previous results")
    with pytest.raises(TypeError):
        write_results(bad, dest)
    assert dest.read_bytes() == b"previous results"
    assert os.listdir(tmp_path) == ["run.nc"]


def test_failed_summary_write_keeps_existing_file(summary, tmp_path):
    dest = tmp_path / "summary.json"
    write_summary(summary, dest)
    before = dest.read_bytes()
    # json.dump writes the keys before "bad" and then raises on the object():
    # a failure midway through the file.
    with pytest.raises(TypeError):
        write_summary({**summary, "bad": object()}, dest)
    assert dest.read_bytes() == before
    assert os.listdir(tmp_path) == ["summary.json"]


def test_results_file_mode_follows_umask(tree, tmp_path):
    reference = tmp_path / "plain.bin"
    reference.write_bytes(b"")  # what open() gives under the current umask
    path = write_results(tree, tmp_path / "run.nc")
    assert os.stat(path).st_mode & 0o777 == os.stat(reference).st_mode & 0o777


# --------------------------------------------------------------------- summary


SCALAR_FINITE = ["log10_m200c", "fdm_einstein", "unmixed", "autocorrelated"]


def test_summary_layout(tree, summary):
    assert summary["model"] == "synthetic-model"
    assert summary["observation"] == "invented lens (synthetic)"
    assert (summary["chains"], summary["draws"]) == SHAPE
    # m200c_msun is NaN in every draw: left out rather than reported as NaN.
    assert sorted(summary["quantities"]) == sorted(SCALAR_FINITE)
    keys = {"mean", "sd", "median", "interval_68", "interval_95", "r_hat", "ess_bulk", "ess_tail"}
    for q in summary["quantities"].values():
        assert set(q) == keys


def test_divergences_counted(tree, summary):
    # numpy: the number of True flags in sample_stats.diverging (7 placed by hand).
    assert summary["divergences"] == int(np.sum(tree.sample_stats["diverging"].values))
    assert summary["divergences"] == len(DIVERGING_AT)


def test_no_diverging_variable_counts_zero(tree):
    no_div = tree.copy()
    no_div["sample_stats"] = tree.sample_stats.to_dataset().drop_vars("diverging")
    assert summarize(no_div)["divergences"] == 0


@pytest.mark.parametrize("name", SCALAR_FINITE)
def test_moments_and_intervals_against_numpy(tree, summary, name):
    # numpy on the flattened draws: mean, sd with ddof=1, and percentiles with
    # numpy's default (linear) interpolation.  Same arithmetic up to summation
    # order, which moves float64 results by a few ulp: rtol = 1e-12.
    x = _draws(tree, name)
    q = summary["quantities"][name]
    lo95, lo68, _, hi68, hi95 = np.percentile(x, [2.5, 16.0, 50.0, 84.0, 97.5])
    np.testing.assert_allclose(q["mean"], np.mean(x), rtol=1e-12)
    np.testing.assert_allclose(q["sd"], np.std(x, ddof=1), rtol=1e-12)
    np.testing.assert_allclose(q["median"], np.median(x), rtol=1e-12)
    np.testing.assert_allclose(q["interval_68"], [lo68, hi68], rtol=1e-12)
    np.testing.assert_allclose(q["interval_95"], [lo95, hi95], rtol=1e-12)


@pytest.mark.parametrize("prob", [0.68, 0.95])
def test_intervals_and_moments_against_arviz_summary(tree, summary, prob):
    # arviz.summary with equal-tailed intervals at the same probabilities and no
    # rounding (arviz 1.x rounds unless round_to="none"; its default interval is
    # 89%).  arviz takes the linear-interpolated quantiles (1 - prob)/2 and
    # (1 + prob)/2 over (chain, draw) and sd with ddof=1, like summarize;
    # (1 - 0.68)/2 is not exactly 0.16 in binary, which shifts a quantile by
    # ~1e-16 of a draw spacing: rtol = 1e-12.
    ref = az.summary(tree, var_names=SCALAR_FINITE, ci_prob=prob, ci_kind="eti", round_to="none")
    pct = round(100 * prob)
    for name in SCALAR_FINITE:
        q = summary["quantities"][name]
        row = ref.loc[name]
        np.testing.assert_allclose(
            q[f"interval_{pct}"], [row[f"eti{pct}_lb"], row[f"eti{pct}_ub"]], rtol=1e-12
        )
        np.testing.assert_allclose(q["mean"], row["mean"], rtol=1e-12)
        np.testing.assert_allclose(q["sd"], row["sd"], rtol=1e-12)


def test_median_against_arviz(tree, summary):
    # arviz.summary(kind="stats_median") reports the median over (chain, draw);
    # the same linear-interpolated quantile: rtol = 1e-12 (summation order only).
    ref = az.summary(tree, var_names=SCALAR_FINITE, kind="stats_median", round_to="none")
    for name in SCALAR_FINITE:
        np.testing.assert_allclose(
            summary["quantities"][name]["median"], ref.loc[name, "median"], rtol=1e-12
        )


def test_diagnostics_against_arviz(tree, summary):
    # arviz.rhat (rank-normalised split R-hat) and arviz.ess (bulk and tail) of
    # Vehtari et al. (2021) on the same tree; summarize calls the same functions,
    # so the numbers must agree to rounding (rtol = 1e-12).  arviz.summary's
    # diagnostics columns are a second, independent path through arviz.
    rhat = az.rhat(tree)
    bulk = az.ess(tree, method="bulk")
    tail = az.ess(tree, method="tail")
    table = az.summary(tree, var_names=SCALAR_FINITE, kind="diagnostics", round_to="none")
    for name in SCALAR_FINITE:
        q = summary["quantities"][name]
        for key, ref in (("r_hat", rhat), ("ess_bulk", bulk), ("ess_tail", tail)):
            np.testing.assert_allclose(q[key], float(ref[name].values), rtol=1e-12)
            np.testing.assert_allclose(q[key], table.loc[name, key], rtol=1e-12)


def test_intervals_against_exact_normal_quantiles(summary):
    # log10_m200c holds the exact N(13.4, 0.2) quantiles at (k + 1/2)/800
    # (scipy.stats.norm.ppf), so an empirical quantile sits within one grid
    # spacing of the true one: SIGMA / (800 pdf(z)) = 0.0043 at the 2.5% and
    # 97.5% points, 0.001 at 16% and 84%, hence atol = 0.005.  An 89% or 90%
    # interval (the arviz 1.x default is 89%) would miss by more than 0.06.
    q = summary["quantities"]["log10_m200c"]
    true = stats.norm(MU, SIGMA)
    np.testing.assert_allclose(q["interval_95"], true.ppf([0.025, 0.975]), rtol=0, atol=0.005)
    np.testing.assert_allclose(q["interval_68"], true.ppf([0.16, 0.84]), rtol=0, atol=0.005)
    assert q["median"] == pytest.approx(MU, abs=0.005)
    # The grid is symmetric about MU, so its mean is MU to rounding (1e-10 is
    # ~1e4 ulp of 13.4 summed over 800 draws); its sd is SIGMA less the grid's
    # truncated tails, 0.02% low for 800 points, hence rel = 1e-3.
    assert q["mean"] == pytest.approx(MU, abs=1e-10)
    assert q["sd"] == pytest.approx(SIGMA, rel=1e-3)


def test_diagnostics_flag_known_cases(summary):
    # Known truths, seeded draws:
    # - four chains centred 0, 1, 2, 3 with unit spread: the between-chain
    #   variance dominates, R-hat ~ sqrt(1 + var(0..3)) ~ 1.5 > 1.1 by far;
    # - independent draws: R-hat within 1.01 of 1 (its sampling spread for
    #   4 x 200 iid draws is ~0.003);
    # - AR(1) with rho = 0.9: ESS = N (1 - rho)/(1 + rho) = 42 for N = 800; the
    #   estimate scatters by tens of percent at this length, so a factor 2.
    q = summary["quantities"]
    assert q["unmixed"]["r_hat"] > 1.3
    for name in ("log10_m200c", "fdm_einstein"):
        assert abs(q[name]["r_hat"] - 1.0) < 0.01
    expected = N_CHAINS * N_DRAWS * (1 - RHO) / (1 + RHO)
    assert expected / 2 < q["autocorrelated"]["ess_bulk"] < 2 * expected


def test_summary_json_round_trip_is_strict_json(summary, tmp_path):
    path = write_summary(summary, tmp_path / "summary.json")
    assert path == str(tmp_path / "summary.json")

    def no_constants(token):  # NaN / Infinity are not JSON
        raise AssertionError(f"non-JSON constant {token} in the summary")

    with open(path, encoding="utf-8") as fh:
        back = json.load(fh, parse_constant=no_constants)
    assert back == json.loads(json.dumps(summary))  # tuples -> lists only
    assert os.listdir(tmp_path) == ["summary.json"]
