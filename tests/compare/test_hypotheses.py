"""Bayes factors, model probabilities and the Kass & Raftery (1995) scale."""

import math

import pytest

from lensinfer.comparison import evidence_table, kass_raftery


@pytest.mark.parametrize(
    ("ln_b", "label"),
    [
        # Kass & Raftery (1995, JASA 90, 773, section 3.2; from memory), on 2 ln B:
        # 0-2 bare mention, 2-6 positive, 6-10 strong, > 10 very strong.
        (0.0, "not worth more than a bare mention"),
        (0.99, "not worth more than a bare mention"),
        (1.01, "positive"),
        (2.99, "positive"),
        (3.01, "strong"),
        (4.99, "strong"),
        (5.01, "very strong"),
        (-4.0, "strong"),  # the scale is symmetric: the label is for the preferred model
    ],
)
def test_kass_raftery_scale(ln_b, label):
    assert kass_raftery(ln_b) == label


def test_table_by_hand():
    ln_z = {"a": -10.0, "b": -12.0, "c": -10.5}
    err = {"a": 0.1, "b": 0.2, "c": 0.1}
    rows = evidence_table(ln_z, err)
    assert [r["model"] for r in rows] == ["a", "c", "b"]
    b = rows[2]
    assert b["delta_ln_z"] == pytest.approx(-2.0)
    assert b["delta_ln_z_err"] == pytest.approx(math.hypot(0.1, 0.2))
    assert b["bayes_factor_vs_best"] == pytest.approx(math.exp(2.0))
    assert b["kass_raftery"] == "positive"  # 2 ln B = 4
    assert rows[0]["delta_ln_z_err"] == 0.0 and rows[0]["kass_raftery"] == "(best)"
    # Equal prior odds: P_i = Z_i / sum Z.
    z = {k: math.exp(v) for k, v in ln_z.items()}
    for r in rows:
        assert r["probability"] == pytest.approx(z[r["model"]] / sum(z.values()), rel=1e-12)


def test_prior_odds_shift_probabilities_not_evidences():
    ln_z = {"a": 0.0, "b": 0.0}
    rows = evidence_table(ln_z, {"a": 0.1, "b": 0.1}, prior_odds={"b": 3.0})
    p = {r["model"]: r["probability"] for r in rows}
    assert p["b"] == pytest.approx(0.75) and p["a"] == pytest.approx(0.25)
    assert all(r["delta_ln_z"] == 0.0 for r in rows)


def test_bad_prior_odds_are_refused():
    with pytest.raises(ValueError, match="'z'"):
        evidence_table({"a": 0.0}, {"a": 0.1}, prior_odds={"z": 1.0})
    with pytest.raises(ValueError, match="> 0"):
        evidence_table({"a": 0.0}, {"a": 0.1}, prior_odds={"a": 0.0})


# --- evidences that are not comparable -------------------------------------------


def test_power_law_total_evidence_is_flagged_as_not_comparable():
    from lensinfer.comparison import comparability_note
    from lensinfer.comparison.run import _caveats
    from lensinfer.spec import read_model

    total, nfw, contracted = (read_model(n) for n in ("power-law-total", "no-response", "gnedin04"))
    note = comparability_note([nfw, total, contracted])
    assert note is not None and note.startswith("power-law-total:")
    assert "not a Bayes factor" in note
    # Only decompositions, or only total-mass models: nothing to warn about.
    assert comparability_note([nfw, contracted]) is None
    assert comparability_note([total]) is None
    # compare() puts the note among the caveats of compare.json / compare.md.
    result = {"cross_check": {"a": {"agree": True}}}
    obs = type("Obs", (), {"kinematics": None})()
    assert note in _caveats(result, obs, [nfw, total])
    assert note not in _caveats(result, obs, [nfw, contracted])
