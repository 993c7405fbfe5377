"""``lensinfer compare`` from the command line: outputs, reuse of finished models, bad input."""

import json
import os

import pytest

from lensinfer.cli import demo_observation_path, main

SMALL = ["--live", "60", "--chains", "1", "--warmup", "150", "--draws", "150", "--no-progress"]


def test_compare_writes_its_files_and_reuses_finished_models(tmp_path, capsys):
    out = tmp_path / "cmp"
    args = [
        "compare",
        demo_observation_path(),
        "power-law-total",
        "-o",
        str(out),
        *SMALL,
        "--no-continuous",
    ]
    assert main(args) == 0
    first = capsys.readouterr()
    assert "power-law-total" in first.out and "comparison:" in first.out
    result = json.loads((out / "compare.json").read_text())
    assert [r["model"] for r in result["table"]] == ["power-law-total"]
    rec = result["models"]["power-law-total"]
    assert rec["nested"]["ln_z_err"] > 0 and rec["importance"]["ln_z_err"] > 0
    assert set(rec["loo"]["sites"]) == {"einstein_radius", "stellar_mass", "velocity_dispersion"}
    md = (out / "compare.md").read_text()
    assert "Kass & Raftery" in md and "PSIS-LOO" in md and "Caveats" in md
    assert (out / "compare.png").read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    cached = sorted(os.listdir(out / "models"))
    assert len(cached) == 2 and cached[0].endswith(".json") and cached[1].endswith(".nc")
    # Re-run with the same arguments: the finished model is reused, not re-run.
    assert main([*args[:-1], "--no-continuous"]) == 0
    second = capsys.readouterr()
    again = json.loads((out / "compare.json").read_text())
    assert again["models"]["power-law-total"]["nested"] == rec["nested"]
    # Other settings are another cache entry.
    assert main([*args, "--seed", "1"]) == 0
    assert len(os.listdir(out / "models")) == 4
    del second


@pytest.mark.parametrize(
    ("extra", "message"),
    [
        (["no-such-model"], "no-such-model"),
        (["power-law-total", "--prior-odds", "gnedin04=2"], "not among the compared models"),
        (["power-law-total", "--prior-odds", "power-law-total=-1"], "MODEL=WEIGHT"),
        (["power-law-total", "--live", "0"], "--live"),
    ],
)
def test_bad_input_exits_2_and_writes_nothing(tmp_path, capsys, extra, message):
    out = tmp_path / "cmp"
    code = main(["compare", demo_observation_path(), *extra, "-o", str(out), "--no-progress"])
    assert code == 2
    assert message in capsys.readouterr().err
    assert not out.exists()


def test_output_that_is_a_file_is_refused(tmp_path, capsys):
    f = tmp_path / "file.txt"
    f.write_text("keep me")
    code = main(["compare", demo_observation_path(), "power-law-total", "-o", str(f)])
    assert code == 2 and "not a directory" in capsys.readouterr().err
    assert f.read_text() == "keep me"
