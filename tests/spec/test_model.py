"""The model spec: the built-in specs and valid texts parse; every bad input raises one SpecError.

Bad inputs are one-line mutations of the valid specs in ``conftest.py``; each
error must carry the file, the dotted key and the offending value, and its
message must say all three and what would be accepted.
"""

import dataclasses
import math
import os

import pytest

from lensinfer.spec import (
    ModelSpec,
    PriorSpec,
    SpecError,
    builtin_model_names,
    builtin_model_path,
    parse_model,
    read_model,
)

PATH = "test_spec.toml"
MODELS_DIR = os.path.join(os.path.dirname(__file__), os.pardir, os.pardir, "models")

# Lines of conftest.MODEL_TEXT that the mutations rewrite.
NAME = 'name = "test-decomposition"'
SUMMARY = 'summary = "An NFW halo with explicit priors and a free response index."'
IMF = 'imf_factor = { prior = "uniform", low = -0.3, high = 0.5 }'
MSTAR = 'log10_mstar_ref = { prior = "normal", mean = 11.3, sd = 0.1 }'
HALO_PROFILE = 'profile = "nfw"'
M200 = 'log10_m200c = { prior = "uniform", low = 12.0, high = 14.5 }'
C200 = 'log10_c200c = { prior = "normal", mean = 0.8, sd = 0.1 }'
PRESCRIPTION = 'prescription = "power"'
NU = 'response_nu = { prior = "uniform", low = -0.3, high = 1.5 }'
HALO_BLOCK = f"[halo]\n{HALO_PROFILE}\n{M200}\n{C200}\n"
RESPONSE_BLOCK = f"[response]\n{PRESCRIPTION}\n{NU}\n"
TOTAL_BLOCK = """\
[total]
profile = "power_law"
slope = { prior = "uniform", low = 1.5, high = 2.6 }
theta_e_arcsec = { prior = "uniform", low = 0.2, high = 4.0 }
"""
RELATION = 'log10_m200c = { relation = "moster13", low = 11.5, high = 15.0 }'

EXPECTED_BUILTINS = {
    # name: (mass model, prescription)
    "blumenthal86": ("decomposition", "blumenthal86"),
    "free-response": ("decomposition", "power"),
    "gnedin04": ("decomposition", "gnedin04"),
    "gnedin11": ("decomposition", "gnedin11"),
    "gnedin11-scatter": ("decomposition", "orbit_averaged"),
    "no-response": ("decomposition", "none"),
    "power-law-total": ("total_power_law", None),
}


def mutated(text, *replacements):
    """Apply (old, new) replacements, each of which must hit exactly one place."""
    for old, new in replacements:
        assert text.count(old) == 1, f"mutation target {old!r} must occur exactly once"
        text = text.replace(old, new)
    return text


def assert_names_everything(exc, path, key, value, accepted):
    """The error and its message name the file, the key, the value and what is accepted."""
    assert exc.path == path
    assert exc.key == key
    assert exc.value == value and type(exc.value) is type(value), exc.value
    msg = str(exc)
    assert path in msg
    assert f"'{key}'" in msg
    assert "expected" in msg
    assert accepted in msg
    if value is None:
        assert "is missing" in msg
    else:
        assert repr(value) in msg
    assert "\n" not in msg


# --- built-in specs -----------------------------------------------------------


def test_builtin_model_names_are_the_shipped_files():
    on_disk = sorted(f[:-5] for f in os.listdir(MODELS_DIR) if f.endswith(".toml"))
    assert builtin_model_names() == on_disk
    assert set(EXPECTED_BUILTINS) <= set(on_disk)


@pytest.mark.parametrize("name", sorted(EXPECTED_BUILTINS))
def test_builtin_model_parses_by_name_and_by_path(name):
    by_name = read_model(name)
    path = builtin_model_path(name)
    assert os.path.samefile(path, os.path.join(MODELS_DIR, f"{name}.toml"))
    by_path = read_model(path)
    assert by_name == by_path
    assert isinstance(by_name, ModelSpec)
    assert by_name.name == name  # each file's [model] name matches its file name
    assert by_name.summary
    assert (by_name.mass_model, by_name.prescription) == EXPECTED_BUILTINS[name]
    assert by_name.log10_mstar_ref is not None or by_name.log10_m200c.kind == "relation"


def test_every_builtin_model_parses():
    for name in builtin_model_names():
        assert read_model(name).name == name


def test_builtin_model_path_of_unknown_name_is_none():
    assert builtin_model_path("no-such-model") is None


def test_read_model_of_unknown_name_lists_the_builtins():
    with pytest.raises(SpecError) as info:
        read_model("gnedin05")
    exc = info.value
    assert exc.path == "gnedin05"
    msg = str(exc)
    assert "gnedin05" in msg
    assert "neither a file nor a built-in model" in msg
    for name in builtin_model_names():
        assert name in msg


def test_read_model_of_a_directory(tmp_path):
    with pytest.raises(SpecError) as info:
        read_model(tmp_path)
    assert info.value.path == str(tmp_path)
    assert "cannot be read" in str(info.value)


def test_read_model_prefers_an_existing_file_to_a_builtin_name(tmp_path, monkeypatch, model_text):
    monkeypatch.chdir(tmp_path)
    (tmp_path / "gnedin04").write_text(model_text, encoding="utf-8")
    assert read_model("gnedin04").name == "test-decomposition"


# --- valid texts ---------------------------------------------------------------


def test_decomposition_spec_parses(model_text):
    spec = parse_model(model_text, PATH)
    assert spec.name == "test-decomposition"
    assert spec.mass_model == "decomposition"
    assert spec.imf_factor == PriorSpec("uniform", low=-0.3, high=0.5)
    assert spec.log10_mstar_ref == PriorSpec("normal", mean=11.3, sd=0.1)
    assert spec.halo_profile == "nfw"
    assert spec.log10_m200c == PriorSpec("uniform", low=12.0, high=14.5)
    assert spec.log10_c200c == PriorSpec("normal", mean=0.8, sd=0.1)
    assert spec.inner_slope is None
    assert spec.prescription == "power"
    assert spec.response_nu == PriorSpec("uniform", low=-0.3, high=1.5)
    assert spec.slope is None and spec.theta_e_arcsec is None
    assert spec.kinematics == {}
    assert spec.text == model_text
    assert spec.path == PATH
    with pytest.raises(dataclasses.FrozenInstanceError):
        spec.name = "other"


def test_relation_spec_parses(relation_model_text):
    spec = parse_model(relation_model_text, PATH)
    assert spec.imf_factor == PriorSpec("imf", name="salpeter55")
    # The halo-mass prior defaults to the halo mass function, the concentration
    # scatter to all haloes.
    assert spec.log10_m200c == PriorSpec(
        "relation", low=11.5, high=15.0, name="moster13", abundance="tinker08"
    )
    assert spec.log10_c200c == PriorSpec("relation", name="dutton14", population="all")
    assert spec.log10_mstar_ref is None  # tied to the halo by the relation
    assert spec.summary == ""


def test_halo_abundance_and_population_choices(relation_model_text):
    text = mutated(
        relation_model_text,
        (RELATION, 'log10_m200c = { relation = "moster13", abundance = "uniform_in_log" }'),
    )
    assert parse_model(text, PATH).log10_m200c.abundance == "uniform_in_log"
    text = mutated(
        relation_model_text,
        (RELATION, 'log10_m200c = { relation = "moster13", abundance = "flat" }'),
    )
    with pytest.raises(SpecError) as err:
        parse_model(text, PATH)
    assert "halo.log10_m200c.abundance" in str(err.value)
    assert "'tinker08'" in str(err.value) and "'uniform_in_log'" in str(err.value)


def test_relation_without_range_gets_the_default_range(relation_model_text):
    text = mutated(relation_model_text, (RELATION, 'log10_m200c = { relation = "behroozi13" }'))
    spec = parse_model(text, PATH)
    assert spec.log10_m200c == PriorSpec(
        "relation", low=11.5, high=15.0, name="behroozi13", abundance="tinker08"
    )


def test_explicit_halo_prior_without_mstar_prior_gets_the_default(model_text):
    spec = parse_model(mutated(model_text, (MSTAR + "\n", "")), PATH)
    assert spec.log10_mstar_ref == PriorSpec("uniform", low=9.5, high=12.8)


@pytest.mark.parametrize("prescription", ["none", "blumenthal86", "gnedin04", "gnedin11"])
def test_every_fixed_prescription_is_accepted(model_text, prescription):
    text = mutated(model_text, (PRESCRIPTION, f'prescription = "{prescription}"'), (NU + "\n", ""))
    spec = parse_model(text, PATH)
    assert spec.prescription == prescription
    assert spec.response_nu is None


def test_gnfw_halo_with_a_fixed_inner_slope(model_text):
    text = mutated(
        model_text, (HALO_PROFILE, 'profile = "gnfw"'), (C200, C200 + "\ninner_slope = 1.2")
    )
    spec = parse_model(text, PATH)
    assert spec.halo_profile == "gnfw"
    assert spec.inner_slope == PriorSpec("fixed", value=1.2)


def test_total_power_law_spec_parses(total_model_text):
    spec = parse_model(total_model_text, PATH)
    assert spec.mass_model == "total_power_law"
    assert spec.halo_profile is None and spec.prescription is None
    assert spec.slope == PriorSpec("uniform", low=1.5, high=2.6)
    assert spec.theta_e_arcsec == PriorSpec("uniform", low=0.2, high=4.0)
    assert spec.log10_mstar_ref == PriorSpec("uniform", low=9.5, high=12.8)


@pytest.mark.parametrize(
    ("section", "expected"),
    [
        ("[kinematics]\n", {"use": True, "anisotropy": "isotropic"}),
        ("[kinematics]\nuse = false\n", {"use": False, "anisotropy": "isotropic"}),
        (
            '[kinematics]\nanisotropy = "constant"\n'
            'beta = { prior = "uniform", low = -0.5, high = 0.5 }\n',
            {
                "use": True,
                "anisotropy": "constant",
                "beta": PriorSpec("uniform", low=-0.5, high=0.5),
            },
        ),
        (
            '[kinematics]\nanisotropy = "osipkov_merritt"\nlog10_r_anisotropy_reff = 0.5\n',
            {
                "use": True,
                "anisotropy": "osipkov_merritt",
                "log10_r_anisotropy_reff": PriorSpec("fixed", value=0.5),
            },
        ),
    ],
    ids=["default", "off", "constant-beta", "osipkov-merritt"],
)
def test_kinematics_section(model_text, section, expected):
    assert parse_model(model_text + section, PATH).kinematics == expected


# --- bad values: each case is (base, replacements, key, value, part of "expected") ---

BAD = {
    # unknown names
    "unknown-prescription": (
        "model",
        [(PRESCRIPTION, 'prescription = "adiabatic"')],
        "response.prescription",
        "adiabatic",
        "one of 'none', 'blumenthal86', 'gnedin04', 'gnedin11', 'orbit_averaged', 'power'",
    ),
    "prescription-not-a-string": (
        "model",
        [(PRESCRIPTION, "prescription = true")],
        "response.prescription",
        True,
        "'gnedin04'",
    ),
    "unknown-halo-profile": (
        "model",
        [(HALO_PROFILE, 'profile = "cored"')],
        "halo.profile",
        "cored",
        "one of 'nfw', 'gnfw'",
    ),
    "unknown-total-profile": (
        "total",
        [('profile = "power_law"', 'profile = "broken_power_law"')],
        "total.profile",
        "broken_power_law",
        "'power_law'",
    ),
    "unknown-prior-kind": (
        "model",
        [(IMF, 'imf_factor = { prior = "lognormal", low = -0.3, high = 0.5 }')],
        "stars.imf_factor.prior",
        "lognormal",
        "one of 'uniform', 'normal'",
    ),
    "unknown-stellar-halo-relation": (
        "relation",
        [(RELATION, 'log10_m200c = { relation = "invented20" }')],
        "halo.log10_m200c.relation",
        "invented20",
        "one of 'moster13', 'behroozi13'",
    ),
    "unknown-concentration-relation": (
        "relation",
        [('log10_c200c = { relation = "dutton14" }', 'log10_c200c = { relation = "dutton15" }')],
        "halo.log10_c200c.relation",
        "dutton15",
        "'duffy08', 'duffy08_vir', 'dutton14', 'dutton14_vir'",
    ),
    "concentration-relation-for-the-halo-mass": (
        "relation",
        [(RELATION, 'log10_m200c = { relation = "dutton14" }')],
        "halo.log10_m200c.relation",
        "dutton14",
        "'moster13'",
    ),
    "unknown-imf": (
        "relation",
        [('imf_factor = { imf = "salpeter55" }', 'imf_factor = { imf = "bottom-heavy" }')],
        "stars.imf_factor.imf",
        "bottom-heavy",
        "one of 'salpeter55', 'kroupa01', 'chabrier03'",
    ),
    "unknown-anisotropy": (
        "model",
        [(NU, NU + '\n[kinematics]\nanisotropy = "radial"')],
        "kinematics.anisotropy",
        "radial",
        "'isotropic', 'constant', 'osipkov_merritt'",
    ),
    # power response needs its index; prior shapes
    "power-without-response-nu": (
        "model",
        [(NU + "\n", "")],
        "response.response_nu",
        None,
        "'response_nu'",
    ),
    "inverted-uniform-bounds": (
        "model",
        [(IMF, 'imf_factor = { prior = "uniform", low = 0.5, high = -0.3 }')],
        "stars.imf_factor.high",
        -0.3,
        "a number larger than low = 0.5",
    ),
    "equal-uniform-bounds": (
        "model",
        [(M200, 'log10_m200c = { prior = "uniform", low = 13.0, high = 13.0 }')],
        "halo.log10_m200c.high",
        13.0,
        "a number larger than low = 13.0",
    ),
    "inverted-relation-bounds": (
        "relation",
        [(RELATION, 'log10_m200c = { relation = "moster13", low = 15.0, high = 11.5 }')],
        "halo.log10_m200c.high",
        11.5,
        "with high > low = 15.0",
    ),
    "relation-with-only-low": (
        "relation",
        [(RELATION, 'log10_m200c = { relation = "moster13", low = 11.5 }')],
        "halo.log10_m200c.high",
        None,
        "both low and high",
    ),
    "zero-normal-sd": (
        "model",
        [(C200, 'log10_c200c = { prior = "normal", mean = 0.8, sd = 0.0 }')],
        "halo.log10_c200c.sd",
        0.0,
        "a positive number",
    ),
    "negative-normal-sd": (
        "model",
        [(MSTAR, 'log10_mstar_ref = { prior = "normal", mean = 11.3, sd = -0.1 }')],
        "stars.log10_mstar_ref.sd",
        -0.1,
        "a positive number",
    ),
    "uniform-missing-high": (
        "model",
        [(IMF, 'imf_factor = { prior = "uniform", low = -0.3 }')],
        "stars.imf_factor.high",
        None,
        "'high'",
    ),
    "normal-missing-sd": (
        "model",
        [(C200, 'log10_c200c = { prior = "normal", mean = 0.8 }')],
        "halo.log10_c200c.sd",
        None,
        "'sd'",
    ),
    "prior-table-without-prior": (
        "model",
        [(IMF, "imf_factor = { low = -0.3, high = 0.5 }")],
        "stars.imf_factor",
        {"low": -0.3, "high": 0.5},
        '{ prior = "uniform", low = <number>, high = <number> }',
    ),
    "fixed-number-where-not-allowed": (
        "model",
        [(IMF, "imf_factor = 0.1")],
        "stars.imf_factor",
        0.1,
        '{ prior = "normal", mean = <number>, sd = <positive number> }',
    ),
    "prior-as-string": (
        "model",
        [(M200, 'log10_m200c = "uniform(12, 14.5)"')],
        "halo.log10_m200c",
        "uniform(12, 14.5)",
        "{ relation = <one of 'moster13', 'behroozi13'> }",
    ),
    "relation-where-none-is-accepted": (
        "model",
        [(NU, 'response_nu = { relation = "moster13" }')],
        "response.response_nu",
        {"relation": "moster13"},
        '{ prior = "uniform"',
    ),
    # bools and strings where numbers are expected
    "bool-low": (
        "model",
        [(IMF, 'imf_factor = { prior = "uniform", low = true, high = 0.5 }')],
        "stars.imf_factor.low",
        True,
        "a number",
    ),
    "string-mean": (
        "model",
        [(C200, 'log10_c200c = { prior = "normal", mean = "0.8", sd = 0.1 }')],
        "halo.log10_c200c.mean",
        "0.8",
        "a number",
    ),
    "bool-sd": (
        "model",
        [(C200, 'log10_c200c = { prior = "normal", mean = 0.8, sd = true }')],
        "halo.log10_c200c.sd",
        True,
        "a positive number",
    ),
    "bool-fixed-inner-slope": (
        "model",
        [(HALO_PROFILE, 'profile = "gnfw"'), (C200, C200 + "\ninner_slope = true")],
        "halo.inner_slope",
        True,
        "a number (fixed)",
    ),
    "nan-relation-bound": (
        "relation",
        [(RELATION, 'log10_m200c = { relation = "moster13", low = nan, high = 15.0 }')],
        "halo.log10_m200c.low",
        math.nan,
        "a number",
    ),
    "kinematics-use-not-bool": (
        "model",
        [(NU, NU + '\n[kinematics]\nuse = "yes"')],
        "kinematics.use",
        "yes",
        "true or false",
    ),
    # physically invalid ranges
    "imf-factor-out-of-range": (
        "model",
        [(IMF, 'imf_factor = { prior = "uniform", low = -0.3, high = 2.0 }')],
        "stars.imf_factor",
        2.0,
        "log10 alpha_IMF between -1.0 and 1.5",
    ),
    "m200c-in-msun-not-log10": (
        "model",
        [(M200, 'log10_m200c = { prior = "uniform", low = 1e12, high = 1e14 }')],
        "halo.log10_m200c",
        1e12,
        "log10 M200c/Msun between 10.5 and 16.0",
    ),
    "relation-range-out-of-bounds": (
        "relation",
        [(RELATION, 'log10_m200c = { relation = "moster13", low = 9.0, high = 15.0 }')],
        "halo.log10_m200c",
        9.0,
        "between 10.5 and 16.0",
    ),
    "concentration-out-of-range": (
        "model",
        [(C200, 'log10_c200c = { prior = "normal", mean = 8.0, sd = 0.1 }')],
        "halo.log10_c200c",
        8.0,
        "log10 c200c between -0.5 and 1.7",
    ),
    "mstar-ref-out-of-range": (
        "model",
        [(MSTAR, 'log10_mstar_ref = { prior = "normal", mean = 14.0, sd = 0.1 }')],
        "stars.log10_mstar_ref",
        14.0,
        "between 8.0 and 13.0",
    ),
    "response-nu-crossing-shells": (
        "model",
        [(NU, 'response_nu = { prior = "uniform", low = -1.0, high = 1.5 }')],
        "response.response_nu",
        -1.0,
        "a response index nu between -0.3 and 3.0",
    ),
    "inner-slope-out-of-range": (
        "model",
        [(HALO_PROFILE, 'profile = "gnfw"'), (C200, C200 + "\ninner_slope = 3.0")],
        "halo.inner_slope",
        3.0,
        # gamma < 2: a gNFW with a steeper cusp has no r_-2, so no concentration.
        "an inner slope between 0.0 and 1.9",
    ),
    "slope-out-of-range": (
        "total",
        [("low = 1.5, high = 2.6", "low = 0.5, high = 2.6")],
        "total.slope",
        0.5,
        "a 3-D density slope between 1.05 and 2.95",
    ),
    "beta-out-of-range": (
        "model",
        [(NU, NU + '\n[kinematics]\nanisotropy = "constant"\nbeta = 1.0')],
        "kinematics.beta",
        1.0,
        "an anisotropy beta between -2.0 and 0.95",
    ),
    # missing keys and sections, and structure
    "missing-model-section": (
        "model",
        [(f"[model]\n{NAME}\n{SUMMARY}\n", "")],
        "model",
        None,
        "a [model] section",
    ),
    "missing-name": ("model", [(NAME + "\n", "")], "model.name", None, "'name'"),
    "name-not-a-string": ("model", [(NAME, "name = 4")], "model.name", 4, "a string"),
    "missing-stars": ("model", [(f"[stars]\n{IMF}\n{MSTAR}\n", "")], "stars", None, "[stars]"),
    "missing-imf-factor": ("model", [(IMF + "\n", "")], "stars.imf_factor", None, "'imf_factor'"),
    "missing-halo-profile": (
        "model",
        [(HALO_PROFILE + "\n", "")],
        "halo.profile",
        None,
        "'profile'",
    ),
    "missing-m200c": ("model", [(M200 + "\n", "")], "halo.log10_m200c", None, "'log10_m200c'"),
    "gnfw-without-inner-slope": (
        "model",
        [(HALO_PROFILE, 'profile = "gnfw"')],
        "halo.inner_slope",
        None,
        "'inner_slope'",
    ),
    "missing-response-section": ("model", [(RESPONSE_BLOCK, "")], "response", None, "[response]"),
    "missing-prescription": (
        "model",
        [(PRESCRIPTION + "\n", "")],
        "response.prescription",
        None,
        "'prescription'",
    ),
    "constant-anisotropy-without-beta": (
        "model",
        [(NU, NU + '\n[kinematics]\nanisotropy = "constant"')],
        "kinematics.beta",
        None,
        "'beta'",
    ),
    "halo-not-a-table": (
        "model",
        [(HALO_BLOCK, ""), ("[model]", 'halo = "nfw"\n[model]')],
        "halo",
        "nfw",
        "a table",
    ),
    "neither-halo-nor-total": (
        "model",
        [(HALO_BLOCK, "")],
        "halo",
        None,
        "exactly one of a [halo] section (stars + dark matter) or a [total] section",
    ),
}

BASES = {"model": "model_text", "relation": "relation_model_text", "total": "total_model_text"}


def _same(got, want):
    if isinstance(want, float) and math.isnan(want):
        return isinstance(got, float) and math.isnan(got)
    return got == want and type(got) is type(want)


@pytest.mark.parametrize(
    ("base", "replacements", "key", "value", "accepted"), BAD.values(), ids=BAD.keys()
)
def test_bad_value_names_file_key_value_and_accepted(
    request, base, replacements, key, value, accepted
):
    text = mutated(request.getfixturevalue(BASES[base]), *replacements)
    with pytest.raises(SpecError) as info:
        parse_model(text, PATH)
    exc = info.value
    if isinstance(value, float) and math.isnan(value):
        assert _same(exc.value, value)
        assert (exc.path, exc.key) == (PATH, key)
        assert "nan" in str(exc) and accepted in str(exc)
    else:
        assert_names_everything(exc, PATH, key, value, accepted)


def test_both_halo_and_total(model_text):
    # BUG: with both sections present the message reads "key 'halo' is missing;
    # expected exactly one of ...", which claims the opposite of the problem.
    text = model_text + "\n" + TOTAL_BLOCK
    with pytest.raises(SpecError) as info:
        parse_model(text, PATH)
    exc = info.value
    assert exc.path == PATH
    msg = str(exc)
    assert PATH in msg
    assert "[halo]" in msg and "[total]" in msg
    assert "expected exactly one of" in msg
    assert "is missing" not in msg


def test_mstar_prior_together_with_a_stellar_halo_relation(model_text):
    text = mutated(model_text, (M200, RELATION))
    with pytest.raises(SpecError) as info:
        parse_model(text, PATH)
    exc = info.value
    assert (exc.path, exc.key) == (PATH, "stars.log10_mstar_ref")
    msg = str(exc)
    assert PATH in msg and "'stars.log10_mstar_ref'" in msg
    assert "expected no explicit prior" in msg
    assert "'moster13'" in msg


def test_mstar_prior_together_with_a_relation_names_the_value(model_text):
    # BUG: the error's value is the placeholder string "(a prior)", not the
    # table the user wrote, so the message does not show the offending value.
    text = mutated(model_text, (M200, RELATION))
    with pytest.raises(SpecError) as info:
        parse_model(text, PATH)
    assert info.value.value == {"prior": "normal", "mean": 11.3, "sd": 0.1}


def test_relation_with_only_high_names_the_missing_low(relation_model_text):
    # BUG: { relation = "moster13", high = 15.0 } reports key
    # 'halo.log10_m200c.high' with value 15.0 and "high > low = None"; the key
    # that is missing is 'halo.log10_m200c.low'.
    text = mutated(
        relation_model_text, (RELATION, 'log10_m200c = { relation = "moster13", high = 15.0 }')
    )
    with pytest.raises(SpecError) as info:
        parse_model(text, PATH)
    assert info.value.key == "halo.log10_m200c.low"
    assert info.value.value is None


def test_response_section_in_a_total_power_law_spec(total_model_text):
    text = total_model_text + '\n[response]\nprescription = "gnedin04"\n'
    with pytest.raises(SpecError) as info:
        parse_model(text, PATH)
    assert (info.value.key, info.value.value) == ("response", {"prescription": "gnedin04"})


def test_response_section_in_a_total_power_law_spec_is_not_listed_as_accepted(total_model_text):
    # BUG: the message says "key 'response' is not a known key (a typo?);
    # expected only the keys 'model', 'stars', 'halo', 'total', 'response',
    # 'kinematics' here" -- it lists the rejected key as accepted.
    text = total_model_text + '\n[response]\nprescription = "gnedin04"\n'
    with pytest.raises(SpecError) as info:
        parse_model(text, PATH)
    assert "'response'" not in info.value.expected


# --- unknown keys (typos must not be silently ignored) -------------------------

UNKNOWN = {
    "top-level-key": ("model", [("[model]", "seed = 1\n[model]")], "seed", 1, "'stars'"),
    "top-level-section": (
        "model",
        [(NU, NU + "\n[sampler]\nchains = 4")],
        "sampler",
        {"chains": 4},
        "'response'",
    ),
    "model-typo": (
        "model",
        [(SUMMARY, SUMMARY.replace("summary", "summry"))],
        "model.summry",
        "An NFW halo with explicit priors and a free response index.",
        "'summary'",
    ),
    "stars-extra": (
        "model",
        [(IMF, IMF + "\nlog10_mstar = 11.0")],
        "stars.log10_mstar",
        11.0,
        "'log10_mstar_ref'",
    ),
    "halo-typo": (
        "model",
        [(C200, C200 + "\nlog10_m200 = 13.0")],
        "halo.log10_m200",
        13.0,
        "'log10_m200c'",
    ),
    "inner-slope-with-nfw": (
        "model",
        [(C200, C200 + "\ninner_slope = 1.0")],
        "halo.inner_slope",
        1.0,
        "'profile', 'log10_m200c', 'log10_c200c'",
    ),
    "response-nu-without-power": (
        "model",
        [(PRESCRIPTION, 'prescription = "gnedin04"')],
        "response.response_nu",
        {"prior": "uniform", "low": -0.3, "high": 1.5},
        "'prescription'",
    ),
    "inside-uniform-prior": (
        "model",
        [(IMF, 'imf_factor = { prior = "uniform", low = -0.3, high = 0.5, hihg = 0.6 }')],
        "stars.imf_factor.hihg",
        0.6,
        "'prior', 'low', 'high'",
    ),
    "sd-in-uniform-prior": (
        "model",
        [(IMF, 'imf_factor = { prior = "uniform", low = -0.3, high = 0.5, sd = 0.1 }')],
        "stars.imf_factor.sd",
        0.1,
        "'prior', 'low', 'high'",
    ),
    "inside-normal-prior": (
        "model",
        [(C200, 'log10_c200c = { prior = "normal", mean = 0.8, sd = 0.1, low = 0.0 }')],
        "halo.log10_c200c.low",
        0.0,
        "'prior', 'mean', 'sd'",
    ),
    "inside-relation": (
        "relation",
        [(RELATION, 'log10_m200c = { relation = "moster13", scatter_dex = 0.2 }')],
        "halo.log10_m200c.scatter_dex",
        0.2,
        "'relation', 'low', 'high'",
    ),
    "prior-together-with-relation": (
        "relation",
        [(RELATION, 'log10_m200c = { relation = "moster13", prior = "uniform" }')],
        "halo.log10_m200c.prior",
        "uniform",
        "'relation'",
    ),
    "inside-imf": (
        "relation",
        [
            (
                'imf_factor = { imf = "salpeter55" }',
                'imf_factor = { imf = "salpeter55", offset = 0.1 }',
            )
        ],
        "stars.imf_factor.offset",
        0.1,
        "'imf'",
    ),
    "total-extra": (
        "total",
        [('profile = "power_law"', 'profile = "power_law"\ncore_kpc = 0.1')],
        "total.core_kpc",
        0.1,
        "'slope'",
    ),
    "kinematics-extra": (
        "model",
        [(NU, NU + "\n[kinematics]\nbeta = 0.2")],
        "kinematics.beta",
        0.2,
        "'use', 'anisotropy'",
    ),
}


@pytest.mark.parametrize(
    ("base", "replacements", "key", "value", "accepted"), UNKNOWN.values(), ids=UNKNOWN.keys()
)
def test_unknown_key_is_an_error(request, base, replacements, key, value, accepted):
    text = mutated(request.getfixturevalue(BASES[base]), *replacements)
    with pytest.raises(SpecError) as info:
        parse_model(text, PATH)
    exc = info.value
    assert (exc.path, exc.key, exc.value) == (PATH, key, value)
    msg = str(exc)
    assert PATH in msg
    assert f"'{key}'" in msg
    assert "not a known key" in msg
    assert "expected only the keys" in msg
    assert accepted in msg


# --- TOML syntax errors ---------------------------------------------------------


@pytest.mark.parametrize(
    "replacements",
    [
        [(IMF, 'imf_factor = { prior = "uniform", low = -0.3, high = 0.5')],
        [(NAME, "name = test-decomposition")],
        [(HALO_PROFILE, HALO_PROFILE + '\nprofile = "gnfw"')],
    ],
    ids=["unclosed-inline-table", "bare-string", "duplicate-key"],
)
def test_toml_syntax_error(model_text, replacements):
    with pytest.raises(SpecError) as info:
        parse_model(mutated(model_text, *replacements), PATH)
    exc = info.value
    assert (exc.path, exc.key, exc.value) == (PATH, "", None)
    msg = str(exc)
    assert msg.startswith(f"{PATH}: file is not valid TOML")
    assert "line" in msg
    assert "expected valid TOML" in msg


def test_toml_syntax_error_in_a_file_names_its_path(tmp_path):
    path = tmp_path / "broken-model.toml"
    path.write_text("[model\nname = 'x'\n", encoding="utf-8")
    with pytest.raises(SpecError) as info:
        read_model(path)
    assert info.value.path == str(path)
    assert str(path) in str(info.value)


def test_model_files_quote_the_salpeter_factor_the_code_computes():
    # The built-in model files state Salpeter's mass factor relative to Chabrier
    # in a comment; it must be the number lensinfer.stellar.imf_mass_factor gives
    # (0.224 dex at 10 Gyr), to the three decimals quoted.
    import math
    import re

    from lensinfer.spec import builtin_model_names, builtin_model_path
    from lensinfer.stellar import imf_mass_factor

    computed = math.log10(float(imf_mass_factor("salpeter55", age_gyr=10.0)))
    quoted = []
    for name in builtin_model_names():
        with open(builtin_model_path(name)) as fh:
            text = fh.read()
        quoted += [float(v) for v in re.findall(r"Salpeter is \+([0-9.]+) dex", text)]
        assert "0.25 dex" not in text, name
    assert quoted, "no model file quotes the factor"
    for q in quoted:
        assert q == pytest.approx(computed, abs=5e-4)
