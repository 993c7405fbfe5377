"""Shared text for the spec-layer tests: one valid observation and two valid model specs.

Every lens here is invented for the tests; none is a real object.
"""

import pytest

#: A complete, valid observation (all sections, including the optional kinematics).
OBSERVATION_TEXT = """\
# Invented lens for the spec tests (not a real object).
[system]
name = "invented test lens A"
z_lens = 0.3
z_source = 0.8
cosmology = "Planck18"

[ring]
einstein_radius_arcsec = { value = 1.2, sd = 0.02 }

[light]
profile = "sersic"
r_eff_arcsec = { value = 1.3, sd = 0.05 }
sersic_index = { value = 4.0, sd = 0.2 }

[stellar_mass]
log10_mstar_msun = { value = 11.3, sd = 0.1 }
reference_imf = "chabrier03"

[kinematics]
sigma_kms = { value = 250.0, sd = 10.0 }
aperture_radius_arcsec = 0.75
seeing_fwhm_arcsec = 0.6
"""

#: A valid stars + halo spec with explicit priors everywhere and a free response index.
MODEL_TEXT = """\
# Test model spec (invented for the tests).
[model]
name = "test-decomposition"
summary = "An NFW halo with explicit priors and a free response index."

[stars]
imf_factor = { prior = "uniform", low = -0.3, high = 0.5 }
log10_mstar_ref = { prior = "normal", mean = 11.3, sd = 0.1 }

[halo]
profile = "nfw"
log10_m200c = { prior = "uniform", low = 12.0, high = 14.5 }
log10_c200c = { prior = "normal", mean = 0.8, sd = 0.1 }

[response]
prescription = "power"
response_nu = { prior = "uniform", low = -0.3, high = 1.5 }
"""

#: A valid spec whose halo mass is tied to M*_ref by a stellar-to-halo relation.
RELATION_MODEL_TEXT = """\
[model]
name = "test-relation"

[stars]
imf_factor = { imf = "salpeter55" }

[halo]
profile = "nfw"
log10_m200c = { relation = "moster13", low = 11.5, high = 15.0 }
log10_c200c = { relation = "dutton14" }

[response]
prescription = "gnedin04"
"""

#: A valid total-mass power-law spec.
TOTAL_MODEL_TEXT = """\
[model]
name = "test-total"

[stars]
imf_factor = { prior = "normal", mean = 0.1, sd = 0.1 }

[total]
profile = "power_law"
slope = { prior = "uniform", low = 1.5, high = 2.6 }
theta_e_arcsec = { prior = "uniform", low = 0.2, high = 4.0 }
"""


@pytest.fixture
def observation_text():
    return OBSERVATION_TEXT


@pytest.fixture
def model_text():
    return MODEL_TEXT


@pytest.fixture
def relation_model_text():
    return RELATION_MODEL_TEXT


@pytest.fixture
def total_model_text():
    return TOTAL_MODEL_TEXT
