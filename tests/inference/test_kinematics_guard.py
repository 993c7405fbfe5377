"""Until the Jeans-dynamics layer exists, a dispersion is refused, never ignored."""

import importlib.util

import pytest

from lensinfer.model import build_model
from lensinfer.spec import SpecError, parse_observation, read_model

KINEMATICS = """
[kinematics]
sigma_kms = { value = 250.0, sd = 10.0 }
aperture_radius_arcsec = 1.0
seeing_fwhm_arcsec = 0.8
"""


@pytest.mark.skipif(
    importlib.util.find_spec("lensinfer.dynamics") is not None,
    reason="the dynamics layer is present: tests/inference/test_kinematics_recovery.py applies",
)
def test_observed_dispersion_is_refused_with_a_clear_message():
    from lensinfer.cli import demo_observation_path

    with open(demo_observation_path(), encoding="utf-8") as fh:
        text = fh.read() + KINEMATICS
    obs = parse_observation(text, "lens-with-sigma.toml")
    with pytest.raises(
        SpecError, match=r"lens-with-sigma.toml: key 'kinematics' cannot be used yet"
    ):
        build_model(read_model("gnedin04"), obs)
    # Without the section the same lens builds.
    build_model(read_model("gnedin04"), parse_observation(text.replace(KINEMATICS, ""), "x.toml"))
