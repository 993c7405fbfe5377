"""The observation file: a valid text parses, and every bad input raises one SpecError.

Each bad input is a one-line mutation of the valid text in ``conftest.py``; the
error must carry the file, the dotted key and the offending value, and its
message must say all three and what would be accepted.  The lens is invented.
"""

import dataclasses
import math

import pytest

from lensinfer.mock import format_observation
from lensinfer.spec import (
    Kinematics,
    Measurement,
    Observation,
    SpecError,
    parse_observation,
    read_observation,
)

PATH = "invented_lens_a.toml"

# Lines of the valid text (conftest.OBSERVATION_TEXT) that the mutations rewrite.
NAME = 'name = "invented test lens A"'
Z_LENS = "z_lens = 0.3"
Z_SOURCE = "z_source = 0.8"
COSMOLOGY = 'cosmology = "Planck18"'
RING = "einstein_radius_arcsec = { value = 1.2, sd = 0.02 }"
PROFILE = 'profile = "sersic"'
R_EFF = "r_eff_arcsec = { value = 1.3, sd = 0.05 }"
SERSIC = "sersic_index = { value = 4.0, sd = 0.2 }"
MSTAR = "log10_mstar_msun = { value = 11.3, sd = 0.1 }"
IMF = 'reference_imf = "chabrier03"'
SIGMA = "sigma_kms = { value = 250.0, sd = 10.0 }"
APERTURE = "aperture_radius_arcsec = 0.75"
SEEING = "seeing_fwhm_arcsec = 0.6"
SYSTEM_BLOCK = "\n".join(["[system]", NAME, Z_LENS, Z_SOURCE, COSMOLOGY]) + "\n"
RING_BLOCK = f"[ring]\n{RING}\n"
MSTAR_BLOCK = f"[stellar_mass]\n{MSTAR}\n{IMF}\n"
KIN_BLOCK = f"[kinematics]\n{SIGMA}\n{APERTURE}\n{SEEING}\n"


def mutated(text, *replacements):
    """Apply (old, new) replacements, each of which must hit exactly one place."""
    for old, new in replacements:
        assert text.count(old) == 1, f"mutation target {old!r} must occur exactly once"
        text = text.replace(old, new)
    return text


def same_value(got, want):
    if isinstance(want, float) and math.isnan(want):
        return isinstance(got, float) and math.isnan(got)
    return got == want and type(got) is type(want)


def assert_names_everything(exc, path, key, value, accepted):
    """The error and its message name the file, the key, the value and what is accepted."""
    assert exc.path == path
    assert exc.key == key
    assert same_value(exc.value, value), exc.value
    msg = str(exc)
    assert path in msg
    assert f"'{key}'" in msg
    assert "expected" in msg
    assert accepted in msg
    if value is None:
        assert "is missing" in msg
    else:
        assert repr(value) in msg
    assert "\n" not in msg  # one message, one line


# --- the valid text ---------------------------------------------------------


def test_valid_observation_parses(observation_text):
    obs = parse_observation(observation_text, PATH)
    assert isinstance(obs, Observation)
    assert obs.name == "invented test lens A"
    assert obs.z_lens == 0.3
    assert obs.z_source == Measurement(0.8, 0.0)
    assert obs.z_source.fixed
    assert obs.einstein_radius_arcsec == Measurement(1.2, 0.02)
    assert not obs.einstein_radius_arcsec.fixed
    assert obs.light_profile == "sersic"
    assert obs.r_eff_arcsec == Measurement(1.3, 0.05)
    assert obs.sersic_index == Measurement(4.0, 0.2)
    assert obs.log10_mstar_msun == Measurement(11.3, 0.1)
    assert obs.reference_imf == "chabrier03"
    assert obs.kinematics == Kinematics(Measurement(250.0, 10.0), 0.75, 0.6)
    assert obs.cosmology == "Planck18"
    assert obs.text == observation_text
    assert obs.path == PATH


def test_observation_is_frozen(observation_text):
    obs = parse_observation(observation_text, PATH)
    with pytest.raises(dataclasses.FrozenInstanceError):
        obs.z_lens = 0.5


def test_photometric_source_redshift(observation_text):
    text = mutated(observation_text, (Z_SOURCE, "z_source = { mean = 0.8, sd = 0.1 }"))
    obs = parse_observation(text, PATH)
    assert obs.z_source == Measurement(0.8, 0.1)
    assert not obs.z_source.fixed


def test_hernquist_light_has_fixed_index_four(observation_text):
    text = mutated(observation_text, (PROFILE, 'profile = "hernquist"'), (SERSIC + "\n", ""))
    obs = parse_observation(text, PATH)
    assert obs.light_profile == "hernquist"
    assert obs.sersic_index == Measurement(4.0, 0.0)


def test_plain_numbers_are_exact_and_integers_become_floats(observation_text):
    text = mutated(
        observation_text,
        (Z_LENS, "z_lens = 1"),
        (Z_SOURCE, "z_source = 2"),
        (R_EFF, "r_eff_arcsec = 1"),
        (SERSIC, "sersic_index = 4"),
    )
    obs = parse_observation(text, PATH)
    assert obs.z_lens == 1.0 and isinstance(obs.z_lens, float)
    assert obs.r_eff_arcsec == Measurement(1.0, 0.0)
    assert obs.r_eff_arcsec.fixed
    assert isinstance(obs.sersic_index.value, float)


def test_optional_keys_take_their_defaults(tmp_path, observation_text):
    text = mutated(observation_text, (NAME + "\n", ""), (COSMOLOGY + "\n", ""), (IMF + "\n", ""))
    text = mutated(text, (KIN_BLOCK, ""))
    path = tmp_path / "my_lens.toml"
    path.write_text(text, encoding="utf-8")
    obs = read_observation(path)
    assert obs.name == "my_lens"  # the file's stem
    assert obs.cosmology == "Planck18"
    assert obs.reference_imf == "chabrier03"
    assert obs.kinematics is None
    assert obs.path == str(path)


@pytest.mark.parametrize("name", ["WMAP9", "Planck15"])
def test_other_astropy_cosmologies_are_accepted(observation_text, name):
    text = mutated(observation_text, (COSMOLOGY, f'cosmology = "{name}"'))
    assert parse_observation(text, PATH).cosmology == name


@pytest.mark.parametrize("imf", ["chabrier03", "kroupa01", "salpeter55"])
def test_every_reference_imf_is_accepted(observation_text, imf):
    text = mutated(observation_text, (IMF, f'reference_imf = "{imf}"'))
    assert parse_observation(text, PATH).reference_imf == imf


def test_format_observation_round_trips(observation_text):
    """mock.format_observation is documented as the inverse of parse_observation."""
    for text in (
        observation_text,
        mutated(observation_text, (Z_SOURCE, "z_source = { mean = 0.8, sd = 0.1 }")),
    ):
        obs = parse_observation(text, PATH)
        again = parse_observation(format_observation(obs, "invented\nheader"), PATH)
        assert dataclasses.replace(again, text="") == dataclasses.replace(obs, text="")


# --- bad values: each case is (replacements, key, value, part of "expected") ---

BAD = {
    # wrong types
    "z_lens-string": ([(Z_LENS, 'z_lens = "0.3"')], "system.z_lens", "0.3", "a redshift > 0"),
    "z_lens-bool": ([(Z_LENS, "z_lens = true")], "system.z_lens", True, "a redshift > 0"),
    "z_lens-array": ([(Z_LENS, "z_lens = [0.3]")], "system.z_lens", [0.3], "a redshift > 0"),
    "z_source-string": ([(Z_SOURCE, 'z_source = "0.8"')], "system.z_source", "0.8", "{ mean = <z>"),
    "z_source-bool": ([(Z_SOURCE, "z_source = false")], "system.z_source", False, "a redshift"),
    "name-number": ([(NAME, "name = 7")], "system.name", 7, "a string"),
    "cosmology-number": ([(COSMOLOGY, "cosmology = 18")], "system.cosmology", 18, "a string"),
    "ring-plain-number": (
        [(RING, "einstein_radius_arcsec = 1.2")],
        "ring.einstein_radius_arcsec",
        1.2,
        "{ value = <number>, sd = <positive number> }",
    ),
    "ring-string": (
        [(RING, 'einstein_radius_arcsec = "1.2 +- 0.02"')],
        "ring.einstein_radius_arcsec",
        "1.2 +- 0.02",
        "{ value = <number>",
    ),
    "ring-value-bool": (
        [(RING, "einstein_radius_arcsec = { value = true, sd = 0.02 }")],
        "ring.einstein_radius_arcsec.value",
        True,
        "a positive number",
    ),
    "ring-sd-bool": (
        [(RING, "einstein_radius_arcsec = { value = 1.2, sd = false }")],
        "ring.einstein_radius_arcsec.sd",
        False,
        "a positive number",
    ),
    "r_eff-value-string": (
        [(R_EFF, 'r_eff_arcsec = { value = "1.3", sd = 0.05 }')],
        "light.r_eff_arcsec.value",
        "1.3",
        "a positive number",
    ),
    "r_eff-bool": ([(R_EFF, "r_eff_arcsec = true")], "light.r_eff_arcsec", True, "or a number"),
    "profile-number": ([(PROFILE, "profile = 1")], "light.profile", 1, "'sersic'"),
    "imf-bool": (
        [(IMF, "reference_imf = true")],
        "stellar_mass.reference_imf",
        True,
        "'chabrier03'",
    ),
    "mstar-plain-number": (
        [(MSTAR, "log10_mstar_msun = 11.3")],
        "stellar_mass.log10_mstar_msun",
        11.3,
        "{ value = <number>",
    ),
    "mstar-value-bool": (
        [(MSTAR, "log10_mstar_msun = { value = false, sd = 0.1 }")],
        "stellar_mass.log10_mstar_msun.value",
        False,
        "between 6.0 and 13.5",
    ),
    "sigma-plain-number": (
        [(SIGMA, "sigma_kms = 250.0")],
        "kinematics.sigma_kms",
        250.0,
        "{ value = <number>",
    ),
    "aperture-string": (
        [(APERTURE, 'aperture_radius_arcsec = "0.75"')],
        "kinematics.aperture_radius_arcsec",
        "0.75",
        "a positive number",
    ),
    "aperture-bool": (
        [(APERTURE, "aperture_radius_arcsec = true")],
        "kinematics.aperture_radius_arcsec",
        True,
        "a positive number",
    ),
    "seeing-bool": (
        [(SEEING, "seeing_fwhm_arcsec = true")],
        "kinematics.seeing_fwhm_arcsec",
        True,
        ">= 0",
    ),
    "section-not-a-table": (
        [(RING_BLOCK, ""), ("[system]", "ring = 1.2\n[system]")],
        "ring",
        1.2,
        "a table",
    ),
    "kinematics-not-a-table": (
        [(KIN_BLOCK, ""), ("[system]", "kinematics = true\n[system]")],
        "kinematics",
        True,
        "a table",
    ),
    # missing keys and sections
    "missing-system": ([(SYSTEM_BLOCK, "")], "system", None, "a [system] section"),
    "missing-ring": ([(RING_BLOCK, "")], "ring", None, "a [ring] section"),
    "missing-stellar-mass": ([(MSTAR_BLOCK, "")], "stellar_mass", None, "[stellar_mass]"),
    "misspelt-section-name": (
        [("[stellar_mass]", "[stellar_masses]")],
        "stellar_mass",
        None,
        "[stellar_mass]",
    ),
    "missing-z_lens": ([(Z_LENS + "\n", "")], "system.z_lens", None, "z_lens"),
    "missing-z_source": ([(Z_SOURCE + "\n", "")], "system.z_source", None, "z_source"),
    "missing-z_source-mean": (
        [(Z_SOURCE, "z_source = { sd = 0.1 }")],
        "system.z_source.mean",
        None,
        "'mean'",
    ),
    "missing-z_source-sd": (
        [(Z_SOURCE, "z_source = { mean = 0.8 }")],
        "system.z_source.sd",
        None,
        "'sd'",
    ),
    "missing-ring-value": (
        [(RING, "einstein_radius_arcsec = { sd = 0.02 }")],
        "ring.einstein_radius_arcsec.value",
        None,
        "value",
    ),
    "missing-ring-sd": (
        [(RING, "einstein_radius_arcsec = { value = 1.2 }")],
        "ring.einstein_radius_arcsec.sd",
        None,
        "'sd'",
    ),
    "missing-einstein-radius": (
        [(RING, "")],
        "ring.einstein_radius_arcsec",
        None,
        "'einstein_radius_arcsec'",
    ),
    "missing-profile": ([(PROFILE + "\n", "")], "light.profile", None, "profile"),
    "missing-r_eff": ([(R_EFF + "\n", "")], "light.r_eff_arcsec", None, "r_eff_arcsec"),
    "missing-sersic-index": ([(SERSIC + "\n", "")], "light.sersic_index", None, "sersic_index"),
    "missing-mstar": ([(MSTAR + "\n", "")], "stellar_mass.log10_mstar_msun", None, "log10_mstar"),
    "missing-sigma": ([(SIGMA + "\n", "")], "kinematics.sigma_kms", None, "sigma_kms"),
    "missing-aperture": (
        [(APERTURE + "\n", "")],
        "kinematics.aperture_radius_arcsec",
        None,
        "aperture_radius_arcsec",
    ),
    "missing-seeing": ([(SEEING + "\n", "")], "kinematics.seeing_fwhm_arcsec", None, "seeing"),
    # unknown names
    "unknown-profile": (
        [(PROFILE, 'profile = "gaussian"')],
        "light.profile",
        "gaussian",
        "one of 'sersic', 'hernquist'",
    ),
    "profile-wrong-case": (
        [(PROFILE, 'profile = "Sersic"')],
        "light.profile",
        "Sersic",
        "'sersic'",
    ),
    "unknown-reference-imf": (
        [(IMF, 'reference_imf = "top-heavy"')],
        "stellar_mass.reference_imf",
        "top-heavy",
        "one of 'chabrier03', 'kroupa01', 'salpeter55'",
    ),
    "unknown-cosmology": (
        [(COSMOLOGY, 'cosmology = "Planck99"')],
        "system.cosmology",
        "Planck99",
        "Planck18",
    ),
    "cosmology-wrong-case": (
        [(COSMOLOGY, 'cosmology = "planck18"')],
        "system.cosmology",
        "planck18",
        "WMAP9",
    ),
    # redshifts
    "negative-z_lens": ([(Z_LENS, "z_lens = -0.3")], "system.z_lens", -0.3, "a redshift > 0"),
    "zero-z_lens": ([(Z_LENS, "z_lens = 0")], "system.z_lens", 0, "a redshift > 0"),
    "nan-z_lens": ([(Z_LENS, "z_lens = nan")], "system.z_lens", math.nan, "a redshift > 0"),
    "negative-z_source": ([(Z_SOURCE, "z_source = -0.8")], "system.z_source", -0.8, "redshift > 0"),
    "z_source-equals-z_lens": (
        [(Z_SOURCE, "z_source = 0.3")],
        "system.z_source",
        0.3,
        "a source redshift larger than z_lens = 0.3",
    ),
    "z_source-below-z_lens": (
        [(Z_SOURCE, "z_source = 0.2")],
        "system.z_source",
        0.2,
        "larger than z_lens = 0.3",
    ),
    "photometric-z_source-below-z_lens": (
        [(Z_SOURCE, "z_source = { mean = 0.25, sd = 0.05 }")],
        "system.z_source",
        0.25,
        "larger than z_lens = 0.3",
    ),
    "negative-z_source-mean": (
        [(Z_SOURCE, "z_source = { mean = -0.8, sd = 0.1 }")],
        "system.z_source.mean",
        -0.8,
        "a redshift > 0",
    ),
    "infinite-z_source": ([(Z_SOURCE, "z_source = inf")], "system.z_source", math.inf, "redshift"),
    # non-positive errors
    "zero-ring-sd": (
        [(RING, "einstein_radius_arcsec = { value = 1.2, sd = 0.0 }")],
        "ring.einstein_radius_arcsec.sd",
        0.0,
        "a positive number (the 1-sigma error)",
    ),
    "zero-int-ring-sd": (
        [(RING, "einstein_radius_arcsec = { value = 1.2, sd = 0 }")],
        "ring.einstein_radius_arcsec.sd",
        0,
        "a positive number",
    ),
    "negative-ring-sd": (
        [(RING, "einstein_radius_arcsec = { value = 1.2, sd = -0.02 }")],
        "ring.einstein_radius_arcsec.sd",
        -0.02,
        "a positive number",
    ),
    "nan-ring-sd": (
        [(RING, "einstein_radius_arcsec = { value = 1.2, sd = nan }")],
        "ring.einstein_radius_arcsec.sd",
        math.nan,
        "a positive number",
    ),
    "zero-z_source-sd": (
        [(Z_SOURCE, "z_source = { mean = 0.8, sd = 0.0 }")],
        "system.z_source.sd",
        0.0,
        "a positive number",
    ),
    "zero-r_eff-sd": (
        [(R_EFF, "r_eff_arcsec = { value = 1.3, sd = 0.0 }")],
        "light.r_eff_arcsec.sd",
        0.0,
        "a positive number",
    ),
    "negative-sersic-sd": (
        [(SERSIC, "sersic_index = { value = 4.0, sd = -0.2 }")],
        "light.sersic_index.sd",
        -0.2,
        "a positive number",
    ),
    "zero-mstar-sd": (
        [(MSTAR, "log10_mstar_msun = { value = 11.3, sd = 0.0 }")],
        "stellar_mass.log10_mstar_msun.sd",
        0.0,
        "a positive number",
    ),
    "negative-sigma-sd": (
        [(SIGMA, "sigma_kms = { value = 250.0, sd = -10.0 }")],
        "kinematics.sigma_kms.sd",
        -10.0,
        "a positive number",
    ),
    # out-of-range values
    "zero-einstein-radius": (
        [(RING, "einstein_radius_arcsec = { value = 0.0, sd = 0.02 }")],
        "ring.einstein_radius_arcsec.value",
        0.0,
        "a positive number",
    ),
    "negative-einstein-radius": (
        [(RING, "einstein_radius_arcsec = { value = -1.2, sd = 0.02 }")],
        "ring.einstein_radius_arcsec.value",
        -1.2,
        "a positive number",
    ),
    "infinite-einstein-radius": (
        [(RING, "einstein_radius_arcsec = { value = inf, sd = 0.02 }")],
        "ring.einstein_radius_arcsec.value",
        math.inf,
        "a positive number",
    ),
    "negative-r_eff": (
        [(R_EFF, "r_eff_arcsec = { value = -1.3, sd = 0.05 }")],
        "light.r_eff_arcsec.value",
        -1.3,
        "a positive number",
    ),
    "negative-plain-r_eff": (
        [(R_EFF, "r_eff_arcsec = -1.3")],
        "light.r_eff_arcsec",
        -1.3,
        "positive",
    ),
    "sersic-index-too-small": (
        [(SERSIC, "sersic_index = { value = 0.2, sd = 0.2 }")],
        "light.sersic_index.value",
        0.2,
        "a number between 0.5 and 10.0",
    ),
    "sersic-index-too-large": (
        [(SERSIC, "sersic_index = 12.0")],
        "light.sersic_index",
        12.0,
        "a number between 0.5 and 10.0",
    ),
    "mstar-too-large": (
        [(MSTAR, "log10_mstar_msun = { value = 15.0, sd = 0.1 }")],
        "stellar_mass.log10_mstar_msun.value",
        15.0,
        "a number between 6.0 and 13.5",
    ),
    "mstar-in-msun-not-log10": (
        [(MSTAR, "log10_mstar_msun = { value = 2e11, sd = 0.1 }")],
        "stellar_mass.log10_mstar_msun.value",
        2e11,
        "a number between 6.0 and 13.5",
    ),
    "negative-sigma": (
        [(SIGMA, "sigma_kms = { value = -250.0, sd = 10.0 }")],
        "kinematics.sigma_kms.value",
        -250.0,
        "a positive number",
    ),
    "zero-aperture": (
        [(APERTURE, "aperture_radius_arcsec = 0.0")],
        "kinematics.aperture_radius_arcsec",
        0.0,
        "a positive number",
    ),
    "negative-seeing": (
        [(SEEING, "seeing_fwhm_arcsec = -0.1")],
        "kinematics.seeing_fwhm_arcsec",
        -0.1,
        "a number >= 0",
    ),
}


@pytest.mark.parametrize(("replacements", "key", "value", "accepted"), BAD.values(), ids=BAD.keys())
def test_bad_value_names_file_key_value_and_accepted(
    observation_text, replacements, key, value, accepted
):
    text = mutated(observation_text, *replacements)
    with pytest.raises(SpecError) as info:
        parse_observation(text, PATH)
    assert_names_everything(info.value, PATH, key, value, accepted)


def test_spec_error_is_a_value_error(observation_text):
    with pytest.raises(ValueError, match=r"system\.z_lens"):
        parse_observation(mutated(observation_text, (Z_LENS, "z_lens = -1.0")), PATH)


def test_z_lens_above_the_maximum_says_what_is_accepted(observation_text):
    # BUG: z_lens is checked against high=20 but the message says
    # "expected a redshift > 0" for z_lens = 25, which is > 0.
    text = mutated(observation_text, (Z_LENS, "z_lens = 25.0"), (Z_SOURCE, "z_source = 30.0"))
    with pytest.raises(SpecError) as info:
        parse_observation(text, PATH)
    assert info.value.key == "system.z_lens"
    assert info.value.value == 25.0
    assert "20" in info.value.expected


@pytest.mark.parametrize(
    ("replacements", "key", "accepted"),
    [
        ([(PROFILE + "\n", "")], "light.profile", "'hernquist'"),
        ([(Z_LENS + "\n", "")], "system.z_lens", "redshift"),
        ([(APERTURE + "\n", "")], "kinematics.aperture_radius_arcsec", "positive"),
    ],
    ids=["profile", "z_lens", "aperture"],
)
def test_missing_key_says_what_is_accepted(observation_text, replacements, key, accepted):
    # BUG: a missing key's message reads "expected a value for 'profile'",
    # which does not say what would be accepted (the profile names, a redshift...).
    with pytest.raises(SpecError) as info:
        parse_observation(mutated(observation_text, *replacements), PATH)
    assert info.value.key == key
    assert accepted in str(info.value)


# --- unknown keys (typos must not be silently ignored) -----------------------

UNKNOWN = {
    "top-level-key": ([("[system]", "foo = 1\n[system]")], "foo", 1, "'system'"),
    "top-level-section": (
        [(KIN_BLOCK, KIN_BLOCK + "\n[lensing]\nshear = 0.05\n")],
        "lensing",
        {"shear": 0.05},
        "'kinematics'",
    ),
    "misspelt-optional-section": (
        [("[kinematics]", "[kinematic]")],
        "kinematic",
        {
            "sigma_kms": {"value": 250.0, "sd": 10.0},
            "aperture_radius_arcsec": 0.75,
            "seeing_fwhm_arcsec": 0.6,
        },
        "'kinematics'",
    ),
    "system-typo": ([(Z_LENS, Z_LENS + "\nz_lense = 0.3")], "system.z_lense", 0.3, "'z_lens'"),
    "system-extra": (
        [(Z_LENS, Z_LENS + "\nz_lens_err = 0.001")],
        "system.z_lens_err",
        0.001,
        "'z_source'",
    ),
    "ring-extra": (
        [(RING, RING + "\nmagnification = 10.0")],
        "ring.magnification",
        10.0,
        "'einstein_radius_arcsec'",
    ),
    "inside-value-sd-table": (
        [(RING, "einstein_radius_arcsec = { value = 1.2, sd = 0.02, sigma = 0.03 }")],
        "ring.einstein_radius_arcsec.sigma",
        0.03,
        "'value', 'sd'",
    ),
    "inside-value-sd-table-unit": (
        [(R_EFF, 'r_eff_arcsec = { value = 1.3, sd = 0.05, unit = "arcsec" }')],
        "light.r_eff_arcsec.unit",
        "arcsec",
        "'value', 'sd'",
    ),
    "inside-z_source-table": (
        [(Z_SOURCE, "z_source = { mean = 0.8, sd = 0.1, err = 0.2 }")],
        "system.z_source.err",
        0.2,
        "'mean', 'sd'",
    ),
    "sersic-index-with-hernquist": (
        [(PROFILE, 'profile = "hernquist"')],
        "light.sersic_index",
        {"value": 4.0, "sd": 0.2},
        "'profile', 'r_eff_arcsec'",
    ),
    "light-typo": (
        [(SERSIC, SERSIC + "\nsersic_indx = 4.0")],
        "light.sersic_indx",
        4.0,
        "'sersic_index'",
    ),
    "stellar-mass-extra": (
        [(IMF, IMF + '\nimf = "salpeter55"')],
        "stellar_mass.imf",
        "salpeter55",
        "'reference_imf'",
    ),
    "kinematics-extra": (
        [(SEEING, SEEING + "\nslit_width_arcsec = 1.0")],
        "kinematics.slit_width_arcsec",
        1.0,
        "'seeing_fwhm_arcsec'",
    ),
}


@pytest.mark.parametrize(
    ("replacements", "key", "value", "accepted"), UNKNOWN.values(), ids=UNKNOWN.keys()
)
def test_unknown_key_is_an_error(observation_text, replacements, key, value, accepted):
    with pytest.raises(SpecError) as info:
        parse_observation(mutated(observation_text, *replacements), PATH)
    exc = info.value
    assert (exc.path, exc.key, exc.value) == (PATH, key, value)
    msg = str(exc)
    assert PATH in msg
    assert f"'{key}'" in msg
    assert "not a known key" in msg
    assert "expected only the keys" in msg
    assert accepted in msg


def test_unknown_key_message_names_the_value(observation_text):
    # BUG: SpecError._message drops the value whenever ``problem`` is set, so
    # "key 'system.z_lense' is not a known key (a typo?); expected ..." never
    # shows the value 0.31 the user wrote.
    text = mutated(observation_text, (Z_LENS, Z_LENS + "\nz_lense = 0.31"))
    with pytest.raises(SpecError) as info:
        parse_observation(text, PATH)
    assert "0.31" in str(info.value)


# --- TOML syntax errors and unreadable files ---------------------------------

SYNTAX = {
    "unclosed-inline-table": [(RING, "einstein_radius_arcsec = { value = 1.2, sd = 0.02")],
    "duplicate-key": [(Z_LENS, Z_LENS + "\nz_lens = 0.4")],
    "bare-string": [(PROFILE, "profile = sersic")],
    "duplicate-section": [(KIN_BLOCK, KIN_BLOCK + "[ring]\n")],
}


@pytest.mark.parametrize("replacements", SYNTAX.values(), ids=SYNTAX.keys())
def test_toml_syntax_error_names_the_file_and_line(observation_text, replacements):
    with pytest.raises(SpecError) as info:
        parse_observation(mutated(observation_text, *replacements), PATH)
    exc = info.value
    assert exc.path == PATH
    assert exc.key == ""  # a whole-file problem
    assert exc.value is None
    msg = str(exc)
    assert msg.startswith(f"{PATH}: file is not valid TOML")
    assert "line" in msg
    assert "expected valid TOML" in msg


def test_toml_syntax_error_from_a_file_names_its_path(tmp_path):
    path = tmp_path / "broken.toml"
    path.write_text("[system\nz_lens = 0.3\n", encoding="utf-8")
    with pytest.raises(SpecError) as info:
        read_observation(path)
    assert info.value.path == str(path)
    assert str(path) in str(info.value)


def test_missing_file(tmp_path):
    path = tmp_path / "nowhere.toml"
    with pytest.raises(SpecError) as info:
        read_observation(path)
    assert info.value.path == str(path)
    assert "cannot be read" in str(info.value)
    assert "expected a readable observation file" in str(info.value)


def test_directory_instead_of_file(tmp_path):
    with pytest.raises(SpecError) as info:
        read_observation(tmp_path)
    assert info.value.path == str(tmp_path)
    assert "cannot be read" in str(info.value)


def test_file_that_is_not_utf8(tmp_path, observation_text):
    # BUG: a file that is not UTF-8 raises a bare UnicodeDecodeError (no file
    # name) instead of a SpecError.
    path = tmp_path / "latin1.toml"
    path.write_bytes(observation_text.replace("A", "\xc5").encode("latin-1"))
    with pytest.raises(SpecError) as info:
        read_observation(path)
    assert info.value.path == str(path)
    assert str(path) in str(info.value)


def test_empty_file_reports_the_first_missing_section(tmp_path):
    path = tmp_path / "empty.toml"
    path.write_text("", encoding="utf-8")
    with pytest.raises(SpecError) as info:
        read_observation(path)
    assert (info.value.key, info.value.value) == ("system", None)
