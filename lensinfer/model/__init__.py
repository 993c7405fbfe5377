"""numpyro models built from a model spec and an observation."""

from lensinfer.model.lens_model import (
    DERIVED_QUANTITIES,
    LIKELIHOOD_SITES,
    PARAMETERS,
    SystemModel,
    build_model,
)
from lensinfer.model.priors import Normal, TruncatedNormal, Uniform

__all__ = [
    "DERIVED_QUANTITIES",
    "LIKELIHOOD_SITES",
    "PARAMETERS",
    "Normal",
    "SystemModel",
    "TruncatedNormal",
    "Uniform",
    "build_model",
]
