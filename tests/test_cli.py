"""The ``lensinfer`` command line: check, mock, models, --help/--version, and the
failure paths of sample.

Most tests call ``lensinfer.cli.main`` in-process (fast); a few run the
command as a subprocess to prove that bad input gives exit status 2 and one
message on stderr, with no traceback.  No test runs a real sampling job.
Every lens here is invented.
"""

import contextlib
import fcntl
import io
import json
import os
import subprocess
import sys

import pytest

from lensinfer._version import __version__
from lensinfer.cli import main
from lensinfer.spec import builtin_model_names, builtin_model_path, parse_observation

OBSERVATION = """\
# An invented lens for the command-line tests (not a real object).
[system]
name = "invented cli lens"
z_lens = 0.3
z_source = { mean = 0.8, sd = 0.05 }

[ring]
einstein_radius_arcsec = { value = 1.2, sd = 0.02 }

[light]
profile = "sersic"
r_eff_arcsec = { value = 1.3, sd = 0.05 }
sersic_index = { value = 4.0, sd = 0.2 }

[stellar_mass]
log10_mstar_msun = { value = 11.3, sd = 0.1 }
reference_imf = "chabrier03"
"""

MODEL = """\
[model]
name = "cli-test-model"

[stars]
imf_factor = { prior = "uniform", low = -0.3, high = 0.5 }

[halo]
profile = "nfw"
log10_m200c = { relation = "moster13" }
log10_c200c = { relation = "dutton14" }

[response]
prescription = "gnedin04"
"""

TRUTH = """\
# Invented parameter values for a mock lens.
[system]
name = "invented mock lens"
z_lens = 0.3
z_source = 0.8

[truth]
log10_m200c = 13.2
log10_mstar_ref = 11.3
log10_c200c = 0.8
log10_imf_factor = 0.1
r_eff_kpc = 6.0
sersic_index = 4.0

[errors]
einstein_radius_arcsec = 0.02
log10_mstar_msun = 0.1
r_eff_arcsec = 0.05
sersic_index = 0.2
"""


def mutated(text, old, new):
    assert text.count(old) == 1, f"mutation target {old!r} must occur exactly once"
    return text.replace(old, new)


def write(directory, name, text):
    path = directory / name
    path.write_text(text, encoding="utf-8")
    return str(path)


def listing(directory):
    return sorted(p.name for p in directory.iterdir())


def run(capsys, *argv):
    """Run the CLI in-process; returns (exit status, stdout, stderr)."""
    status = main(list(argv))
    out, err = capsys.readouterr()
    return status, out, err


def assert_one_error(err, *fragments):
    """stderr is exactly one 'lensinfer: error:' line that contains every fragment."""
    lines = err.splitlines()
    assert len(lines) == 1, err
    assert lines[0].startswith("lensinfer: error: ")
    assert "Traceback" not in err
    for fragment in fragments:
        assert fragment in lines[0], (fragment, lines[0])


# --- --version, --help, models ------------------------------------------------


def test_version(capsys):
    with pytest.raises(SystemExit) as info:
        main(["--version"])
    assert info.value.code == 0
    assert capsys.readouterr().out == f"lensinfer {__version__}\n"


def test_help_lists_the_commands(capsys):
    with pytest.raises(SystemExit) as info:
        main(["--help"])
    assert info.value.code == 0
    out = capsys.readouterr().out
    assert out.startswith("usage: lensinfer")
    for command in ("sample", "check", "mock", "models", "demo"):
        assert command in out


@pytest.mark.parametrize("command", ["sample", "check", "mock", "models"])
def test_subcommand_help(capsys, command):
    with pytest.raises(SystemExit) as info:
        main([command, "--help"])
    assert info.value.code == 0
    assert capsys.readouterr().out.startswith(f"usage: lensinfer {command}")


def test_no_command_prints_help(capsys):
    status, out, err = run(capsys)
    assert status == 0
    assert out.startswith("usage: lensinfer")
    assert err == ""


def test_unknown_command_is_a_usage_error(capsys):
    with pytest.raises(SystemExit) as info:
        main(["fit"])
    assert info.value.code == 2
    assert "invalid choice: 'fit'" in capsys.readouterr().err


def test_models_lists_every_builtin_with_its_summary(capsys):
    from lensinfer.spec import read_model

    status, out, err = run(capsys, "models")
    assert status == 0 and err == ""
    lines = out.splitlines()
    assert len(lines) == len(builtin_model_names()) == 7
    for line, name in zip(lines, builtin_model_names(), strict=True):
        assert line.split()[0] == name
        assert line.endswith(read_model(name).summary)


# --- check ---------------------------------------------------------------------


def test_check_good_observation(capsys, tmp_path):
    path = write(tmp_path, "lens.toml", OBSERVATION)
    status, out, err = run(capsys, "check", path)
    assert status == 0 and err == ""
    assert out == f"{path}: ok (observation 'invented cli lens', z_lens 0.3, z_source 0.8)\n"


def test_check_model_file_builtin_name_and_builtin_path(capsys, tmp_path):
    path = write(tmp_path, "my-model.toml", MODEL)
    status, out, err = run(capsys, "check", path, "gnedin11", builtin_model_path("power-law-total"))
    assert status == 0 and err == ""
    lines = out.splitlines()
    assert lines[0] == f"{path}: ok (model 'cli-test-model', decomposition, response gnedin04)"
    assert lines[1] == "gnedin11: ok (model 'gnedin11', decomposition, response gnedin11)"
    assert "ok (model 'power-law-total', total_power_law" in lines[2]


def test_check_every_builtin_by_name(capsys):
    status, out, _ = run(capsys, "check", *builtin_model_names())
    assert status == 0
    assert out.count(": ok (model ") == len(builtin_model_names())


BAD_OBSERVATIONS = {
    "wrong-type": ("z_lens = 0.3", 'z_lens = "0.3"', "key 'system.z_lens' has value '0.3'"),
    "bool-for-number": (
        "r_eff_arcsec = { value = 1.3, sd = 0.05 }",
        "r_eff_arcsec = { value = true, sd = 0.05 }",
        "key 'light.r_eff_arcsec.value' has value True",
    ),
    "missing-key": ("z_lens = 0.3\n", "", "key 'system.z_lens' is missing"),
    "unknown-profile": (
        'profile = "sersic"',
        'profile = "exponential"',
        "key 'light.profile' has value 'exponential'; expected one of 'sersic', 'hernquist'",
    ),
    "negative-redshift": ("z_lens = 0.3", "z_lens = -0.3", "key 'system.z_lens' has value -0.3"),
    "inverted-redshift": (
        "z_source = { mean = 0.8, sd = 0.05 }",
        "z_source = 0.2",
        "key 'system.z_source' has value 0.2; expected a source redshift larger than z_lens = 0.3",
    ),
    "zero-sd": (
        "einstein_radius_arcsec = { value = 1.2, sd = 0.02 }",
        "einstein_radius_arcsec = { value = 1.2, sd = 0.0 }",
        "key 'ring.einstein_radius_arcsec.sd' has value 0.0; expected a positive number",
    ),
    "unknown-key": (
        "z_lens = 0.3",
        "z_lens = 0.3\nz_lense = 0.3",
        "key 'system.z_lense' is not a known key",
    ),
    "toml-syntax-error": ("z_lens = 0.3", "z_lens = 0.3.", "file is not valid TOML"),
}


@pytest.mark.parametrize(
    ("old", "new", "fragment"), BAD_OBSERVATIONS.values(), ids=BAD_OBSERVATIONS.keys()
)
def test_check_bad_observation(capsys, tmp_path, old, new, fragment):
    path = write(tmp_path, "bad-lens.toml", mutated(OBSERVATION, old, new))
    status, out, err = run(capsys, "check", path)
    assert status == 2
    assert out == ""
    assert_one_error(err, f"lensinfer: error: {path}: ", fragment, "expected")


BAD_MODELS = {
    "unknown-prescription": (
        'prescription = "gnedin04"',
        'prescription = "gnedin05"',
        "key 'response.prescription' has value 'gnedin05'; expected one of",
    ),
    "power-without-nu": (
        'prescription = "gnedin04"',
        'prescription = "power"',
        "key 'response.response_nu' is missing",
    ),
    "unknown-relation": (
        'log10_m200c = { relation = "moster13" }',
        'log10_m200c = { relation = "moster31" }',
        "key 'halo.log10_m200c.relation' has value 'moster31'",
    ),
    "inverted-bounds": (
        "low = -0.3, high = 0.5",
        "low = 0.5, high = -0.3",
        "key 'stars.imf_factor.high' has value -0.3; expected a number larger than low = 0.5",
    ),
}


@pytest.mark.parametrize(("old", "new", "fragment"), BAD_MODELS.values(), ids=BAD_MODELS.keys())
def test_check_bad_model(capsys, tmp_path, old, new, fragment):
    path = write(tmp_path, "bad-model.toml", mutated(MODEL, old, new))
    status, out, err = run(capsys, "check", path)
    assert status == 2
    assert out == ""
    assert_one_error(err, f"lensinfer: error: {path}: ", fragment)


def test_check_reports_every_file(capsys, tmp_path):
    good = write(tmp_path, "good.toml", OBSERVATION)
    bad1 = write(tmp_path, "bad1.toml", mutated(OBSERVATION, "z_lens = 0.3", "z_lens = -1.0"))
    bad2 = write(tmp_path, "bad2.toml", mutated(MODEL, 'profile = "nfw"', 'profile = "cusp"'))
    status, out, err = run(capsys, "check", bad1, good, bad2, "gnedin04")
    assert status == 2
    assert out.splitlines() == [
        f"{good}: ok (observation 'invented cli lens', z_lens 0.3, z_source 0.8)",
        "gnedin04: ok (model 'gnedin04', decomposition, response gnedin04)",
    ]
    errors = err.splitlines()
    assert len(errors) == 2
    assert errors[0].startswith(f"lensinfer: error: {bad1}: key 'system.z_lens' has value -1.0")
    assert errors[1].startswith(f"lensinfer: error: {bad2}: key 'halo.profile' has value 'cusp'")


def test_check_unknown_name_lists_the_builtins(capsys, tmp_path):
    missing = str(tmp_path / "no-such-file.toml")
    status, out, err = run(capsys, "check", missing)
    assert status == 2 and out == ""
    assert_one_error(err, missing, "neither a file nor a built-in model", *builtin_model_names())


def test_check_file_that_is_neither_model_nor_observation(capsys, tmp_path):
    path = write(tmp_path, "other.toml", "[sampler]\nchains = 4\n")
    status, out, err = run(capsys, "check", path)
    assert status == 2 and out == ""
    assert_one_error(err, path, "is neither a model nor an observation", "[model]", "[system]")


def test_check_directory(capsys, tmp_path):
    # BUG: `lensinfer check DIR` raises IsADirectoryError (a traceback)
    # instead of a message and exit status 2.
    status, _, err = run(capsys, "check", str(tmp_path))
    assert status == 2
    assert_one_error(err, str(tmp_path))


def test_check_file_that_is_not_utf8_then_a_good_file(capsys, tmp_path):
    # BUG: a non-UTF-8 file gives "lensinfer: error: 'utf-8' codec can't
    # decode byte ..." without the file name, and the files after it are
    # never checked.
    bad = tmp_path / "latin1.toml"
    bad.write_bytes(OBSERVATION.replace("invented", "inv\xe9nted").encode("latin-1"))
    good = write(tmp_path, "good.toml", OBSERVATION)
    status, out, err = run(capsys, "check", str(bad), good)
    assert status == 2
    assert_one_error(err, str(bad))
    assert out.startswith(f"{good}: ok")


# --- mock ------------------------------------------------------------------------
#
# The first mock in a process evaluates (and compiles) the model: ~15-20 s.
# Every mock run that gets that far happens once, in the module fixture
# below, and the tests read its results; the failure paths that stop before
# the model is evaluated run in their own tests.


def _capture_main(argv):
    """Run the CLI in-process; returns (exit status or the exception's repr, stdout, stderr)."""
    out, err = io.StringIO(), io.StringIO()
    with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
        try:
            result = main(argv)
        except Exception as exc:  # a traceback: recorded so that the test can report it
            result = f"raised {exc!r}"
    return result, out.getvalue(), err.getvalue()


def _make_mock_runs(root):
    """Mocks of gnedin04 from one truth: noiseless, noisy (seeds 7, 7, 8) and three bad runs."""
    good = root / "good"
    good.mkdir()
    truth = write(good, "truth.toml", TRUTH)
    runs = {}
    for label, extra in {
        "plain": [],
        "seed7": ["--noise", "--seed", "7"],
        "seed7-again": ["--noise", "--seed", "7"],
        "seed8": ["--noise", "--seed", "8"],
    }.items():
        out = str(good / f"{label}.toml")
        argv = ["mock", "gnedin04", "--truth", truth, "-o", out, *extra]
        status, stdout, stderr = _capture_main(argv)
        text = None
        if os.path.exists(out):
            with open(out, encoding="utf-8") as fh:
                text = fh.read()
        runs[label] = dict(path=out, status=status, out=stdout, err=stderr, text=text)

    # A truth with a negative effective radius (a value no galaxy has).
    bad = root / "negative-r_eff"
    bad.mkdir()
    bad_truth = write(bad, "truth.toml", mutated(TRUTH, "r_eff_kpc = 6.0", "r_eff_kpc = -6.0"))
    argv = ["mock", "gnedin04", "--truth", bad_truth, "-o", str(bad / "m.toml")]
    status, stdout, stderr = _capture_main(argv)
    runs["negative-r_eff"] = dict(dir=str(bad), truth=bad_truth, status=status, err=stderr)

    # A good truth, written into a directory that does not exist.
    nodir = root / "missing-dir"
    nodir.mkdir()
    good_truth = write(nodir, "truth.toml", TRUTH)
    target = str(nodir / "no-such-dir")
    argv = ["mock", "gnedin04", "--truth", good_truth, "-o", os.path.join(target, "m.toml")]
    status, stdout, stderr = _capture_main(argv)
    runs["missing-dir"] = dict(dir=str(nodir), target=target, status=status, err=stderr)

    # A good truth, with -o naming an existing directory.
    isdir = root / "output-is-directory"
    isdir.mkdir()
    good_truth = write(isdir, "truth.toml", TRUTH)
    target = isdir / "out.toml"
    target.mkdir()
    argv = ["mock", "gnedin04", "--truth", good_truth, "-o", str(target)]
    status, stdout, stderr = _capture_main(argv)
    runs["output-is-directory"] = dict(
        dir=str(isdir), target=str(target), status=status, err=stderr
    )
    return runs


@pytest.fixture(scope="module")
def mock_runs(tmp_path_factory):
    """The runs of :func:`_make_mock_runs`, made once per test session.

    The first mock in a process compiles the model (~15-20 s), so under
    pytest-xdist the workers share one set of runs through a file lock in the
    session's common temporary directory (the recipe of the pytest-xdist
    documentation, with ``fcntl`` instead of the ``filelock`` package).
    """
    root = tmp_path_factory.getbasetemp()
    if os.environ.get("PYTEST_XDIST_WORKER"):
        root = root.parent  # shared by all workers of this session
    shared = root / "cli-mock-runs"
    with open(root / "cli-mock-runs.lock", "w") as lock:
        fcntl.flock(lock, fcntl.LOCK_EX)
        try:
            if not (shared / "runs.json").exists():
                shared.mkdir(exist_ok=True)
                runs = _make_mock_runs(shared)
                (shared / "runs.json").write_text(json.dumps(runs), encoding="utf-8")
            return json.loads((shared / "runs.json").read_text(encoding="utf-8"))
        finally:
            fcntl.flock(lock, fcntl.LOCK_UN)


def test_mock_writes_an_observation_that_passes_check(capsys, mock_runs):
    run_ = mock_runs["plain"]
    assert run_["status"] == 0, run_
    assert run_["err"] == ""
    assert run_["out"].startswith(f"wrote {run_['path']} (Einstein radius ")
    text = run_["text"]
    assert "invented data" in text
    obs = parse_observation(text, run_["path"])
    assert obs.name == "invented mock lens"
    assert (obs.z_lens, obs.z_source.value, obs.z_source.sd) == (0.3, 0.8, 0.0)
    assert obs.einstein_radius_arcsec.sd == 0.02
    assert 0.1 < obs.einstein_radius_arcsec.value < 5.0  # a galaxy-scale ring
    assert obs.r_eff_arcsec.sd == 0.05
    assert obs.sersic_index.value == 4.0 and obs.sersic_index.sd == 0.2
    # Noiseless: the SED mass is the true M*_ref (log10 11.3), to the 6 digits written.
    assert obs.log10_mstar_msun.value == pytest.approx(11.3, abs=1e-5)
    assert obs.log10_mstar_msun.sd == 0.1
    paths = [mock_runs[k]["path"] for k in ("plain", "seed7", "seed7-again", "seed8")]
    status, out, err = run(capsys, "check", *paths)
    assert status == 0 and err == ""
    assert out.count(": ok (observation 'invented mock lens'") == 4


def test_mock_writes_only_its_output(mock_runs):
    d = os.path.dirname(mock_runs["plain"]["path"])
    expected = ["truth.toml", *(f"{k}.toml" for k in ("plain", "seed7", "seed7-again", "seed8"))]
    assert sorted(os.listdir(d)) == sorted(expected)  # no temporary files left behind


def test_mock_noise_is_reproducible(mock_runs):
    text = {k: mock_runs[k]["text"] for k in ("plain", "seed7", "seed7-again", "seed8")}
    assert all(mock_runs[k]["status"] == 0 for k in text)
    assert text["seed7"] == text["seed7-again"]
    assert text["seed7"] != text["seed8"]
    noisy = parse_observation(text["seed7"])
    plain = parse_observation(text["plain"])
    # Noise is drawn with the stated errors: within 5 sigma of the noiseless values.
    for field in ("einstein_radius_arcsec", "r_eff_arcsec", "sersic_index", "log10_mstar_msun"):
        a, b = getattr(noisy, field), getattr(plain, field)
        assert a.sd == b.sd
        assert a.value != b.value
        assert abs(a.value - b.value) < 5 * b.sd


def test_mock_negative_effective_radius_in_truth(mock_runs):
    # BUG: truth values are not range-checked; r_eff_kpc = -6.0 is accepted and
    # the run ends with "key 'truth' is missing; expected parameters that make
    # a super-critical lens", which names neither the key nor the value.
    run_ = mock_runs["negative-r_eff"]
    assert os.listdir(run_["dir"]) == ["truth.toml"]
    assert run_["status"] == 2
    assert_one_error(run_["err"], run_["truth"], "truth.r_eff_kpc", "-6.0")


def test_mock_into_a_missing_directory(mock_runs):
    # BUG: -o into a directory that does not exist raises FileNotFoundError
    # (a traceback) from the temporary-file step instead of a message.
    run_ = mock_runs["missing-dir"]
    assert os.listdir(run_["dir"]) == ["truth.toml"]
    assert run_["status"] == 2
    assert_one_error(run_["err"], run_["target"])


def test_mock_onto_an_existing_directory(mock_runs):
    # BUG: -o naming an existing directory fails in os.replace with
    # IsADirectoryError (a traceback) and leaves the temporary file
    # ".tmp-XXXXXXXX.toml" behind beside it.
    run_ = mock_runs["output-is-directory"]
    assert sorted(os.listdir(run_["dir"])) == ["out.toml", "truth.toml"]  # no temporary file
    assert os.listdir(run_["target"]) == []
    assert run_["status"] == 2
    assert_one_error(run_["err"], run_["target"])


BAD_TRUTHS = {
    "missing-parameter": ("log10_c200c = 0.8\n", "", "key 'truth.log10_c200c' is missing"),
    "missing-r_eff": ("r_eff_kpc = 6.0\n", "", "key 'truth.r_eff_kpc' is missing"),
    "unknown-parameter": (
        "log10_m200c = 13.2",
        "log10_m200 = 13.2",
        "key 'truth.log10_m200' is not a known parameter",
    ),
    "string-value": ("log10_m200c = 13.2", 'log10_m200c = "13.2"', "key 'truth.log10_m200c'"),
    "missing-ring-error": (
        "einstein_radius_arcsec = 0.02\n",
        "",
        "key 'errors.einstein_radius_arcsec' is missing",
    ),
    "inverted-redshift": (
        "z_source = 0.8",
        "z_source = 0.3",
        "key 'system.z_source' has value 0.3",
    ),
    "unknown-error-key": (
        "sersic_index = 0.2",
        "sersic_index = 0.2\nmagnitude = 0.1",
        "key 'errors.magnitude' is not a known key",
    ),
}


@pytest.mark.parametrize(("old", "new", "fragment"), BAD_TRUTHS.values(), ids=BAD_TRUTHS.keys())
def test_mock_bad_truth_writes_nothing(capsys, tmp_path, old, new, fragment):
    truth = write(tmp_path, "truth.toml", mutated(TRUTH, old, new))
    before = listing(tmp_path)
    status, out, err = run(
        capsys, "mock", "gnedin04", "--truth", truth, "-o", str(tmp_path / "mock.toml")
    )
    assert status == 2
    assert out == ""
    assert_one_error(err, f"lensinfer: error: {truth}: ", fragment, "expected")
    assert listing(tmp_path) == before


def test_mock_failure_leaves_an_existing_output_untouched(capsys, tmp_path):
    truth = write(tmp_path, "truth.toml", mutated(TRUTH, "log10_c200c = 0.8\n", ""))
    out = write(tmp_path, "mock.toml", "# an earlier file\n")
    status, _, _ = run(capsys, "mock", "gnedin04", "--truth", truth, "-o", out)
    assert status == 2
    with open(out, encoding="utf-8") as fh:
        assert fh.read() == "# an earlier file\n"
    assert listing(tmp_path) == ["mock.toml", "truth.toml"]


def test_mock_unknown_model_writes_nothing(capsys, tmp_path):
    truth = write(tmp_path, "truth.toml", TRUTH)
    status, _, err = run(
        capsys, "mock", "gnedin-04", "--truth", truth, "-o", str(tmp_path / "m.toml")
    )
    assert status == 2
    assert_one_error(err, "gnedin-04", "neither a file nor a built-in model", "gnedin04")
    assert listing(tmp_path) == ["truth.toml"]


def test_mock_missing_truth_file(capsys, tmp_path):
    truth = str(tmp_path / "nowhere.toml")
    status, _, err = run(
        capsys, "mock", "gnedin04", "--truth", truth, "-o", str(tmp_path / "m.toml")
    )
    assert status == 2
    assert_one_error(err, truth, "cannot be read", "expected a readable truth file")
    assert listing(tmp_path) == []


def test_mock_unknown_cosmology_in_truth(capsys, tmp_path):
    # BUG: the truth file's cosmology is not validated; "Planck99" reaches
    # astropy and raises AttributeError (a traceback) instead of a SpecError.
    truth = write(
        tmp_path,
        "truth.toml",
        mutated(TRUTH, "z_source = 0.8", 'z_source = 0.8\ncosmology = "Planck99"'),
    )
    status, _, err = run(
        capsys, "mock", "gnedin04", "--truth", truth, "-o", str(tmp_path / "m.toml")
    )
    assert status == 2
    assert_one_error(err, truth, "system.cosmology", "Planck99", "Planck18")
    assert listing(tmp_path) == ["truth.toml"]


# --- sample: failure paths only (a real run takes a minute) ----------------------


def _sample(capsys, tmp_path, model, observation, *extra):
    before = listing(tmp_path)
    status, out, err = run(
        capsys,
        "sample",
        model,
        observation,
        "-o",
        str(tmp_path / "results.nc"),
        "--no-progress",
        *extra,
    )
    assert status == 2
    assert out == ""
    # No results file, no summary, no temporary file.
    assert listing(tmp_path) == before
    return err


def test_sample_bad_observation(capsys, tmp_path):
    obs = write(tmp_path, "lens.toml", mutated(OBSERVATION, "sd = 0.02", "sd = -0.02"))
    err = _sample(capsys, tmp_path, "gnedin04", obs)
    assert_one_error(
        err, f"{obs}: key 'ring.einstein_radius_arcsec.sd' has value -0.02", "expected"
    )


def test_sample_bad_model_file(capsys, tmp_path):
    obs = write(tmp_path, "lens.toml", OBSERVATION)
    model = write(tmp_path, "model.toml", MODEL + "\n[sampler]\nchains = 2\n")
    err = _sample(capsys, tmp_path, model, obs)
    assert_one_error(err, f"{model}: key 'sampler' is not a known key", "expected")


def test_sample_unknown_model_name(capsys, tmp_path):
    obs = write(tmp_path, "lens.toml", OBSERVATION)
    err = _sample(capsys, tmp_path, "contracted", obs)
    assert_one_error(
        err, "contracted: file is neither a file nor a built-in model", *builtin_model_names()
    )


def test_sample_missing_observation_file(capsys, tmp_path):
    missing = str(tmp_path / "nowhere.toml")
    err = _sample(capsys, tmp_path, "gnedin04", missing)
    assert_one_error(err, missing, "cannot be read")


@pytest.mark.parametrize(
    ("option", "fragment"),
    [
        (["--chains", "0"], "--chains must be a positive integer, not 0"),
        (["--draws", "-5"], "--draws must be a positive integer, not -5"),
        (["--target-accept", "1.5"], "--target-accept must lie between 0 and 1"),
    ],
    ids=["chains", "draws", "target-accept"],
)
def test_sample_bad_sampling_option(capsys, tmp_path, option, fragment):
    obs = write(tmp_path, "lens.toml", OBSERVATION)
    err = _sample(capsys, tmp_path, "gnedin04", obs, *option)
    assert_one_error(err, fragment)


def test_sample_into_a_missing_directory(capsys, tmp_path):
    obs = write(tmp_path, "lens.toml", OBSERVATION)
    out = tmp_path / "no-such-dir" / "results.nc"
    status, _, err = run(capsys, "sample", "no-response", obs, "-o", str(out), "--no-progress")
    assert status == 2
    assert_one_error(err, "output directory", str(tmp_path / "no-such-dir"), "does not exist")
    assert listing(tmp_path) == ["lens.toml"]


# --- as a subprocess: exit status 2, one message, no traceback -------------------


def _cli(*argv, cwd):
    return subprocess.run(
        [sys.executable, "-m", "lensinfer.cli", *argv],
        capture_output=True,
        text=True,
        cwd=cwd,
        timeout=120,
    )


def test_subprocess_check_bad_observation(tmp_path):
    path = write(
        tmp_path,
        "lens.toml",
        mutated(OBSERVATION, "z_source = { mean = 0.8, sd = 0.05 }", "z_source = 0.3"),
    )
    proc = _cli("check", path, cwd=tmp_path)
    assert proc.returncode == 2
    assert proc.stdout == ""
    assert_one_error(proc.stderr, path, "system.z_source", "0.3", "larger than z_lens = 0.3")


def test_subprocess_sample_unknown_model_writes_nothing(tmp_path):
    obs = write(tmp_path, "lens.toml", OBSERVATION)
    proc = _cli("sample", "no-such-model", obs, "-o", "results.nc", cwd=tmp_path)
    assert proc.returncode == 2
    assert_one_error(proc.stderr, "no-such-model", "neither a file nor a built-in model")
    assert listing(tmp_path) == ["lens.toml"]


def test_subprocess_mock_missing_parameter_writes_nothing(tmp_path):
    truth = write(tmp_path, "truth.toml", mutated(TRUTH, "r_eff_kpc = 6.0\n", ""))
    proc = _cli("mock", "gnedin04", "--truth", truth, "-o", "mock.toml", cwd=tmp_path)
    assert proc.returncode == 2
    assert_one_error(proc.stderr, truth, "truth.r_eff_kpc", "is missing", "expected")
    assert listing(tmp_path) == ["truth.toml"]
