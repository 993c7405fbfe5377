"""Declarative files: model specs and observations, strictly validated.

This is the only layer that knows the file layout.  Every problem raises
:class:`SpecError`, whose message names the file, the key, the value and what
would be accepted.
"""

from lensinfer.spec.errors import SpecError
from lensinfer.spec.model import (
    ModelSpec,
    PriorSpec,
    builtin_model_names,
    builtin_model_path,
    parse_model,
    read_model,
)
from lensinfer.spec.observation import (
    Kinematics,
    Measurement,
    Observation,
    parse_observation,
    read_observation,
)

__all__ = [
    "Kinematics",
    "Measurement",
    "ModelSpec",
    "Observation",
    "PriorSpec",
    "SpecError",
    "builtin_model_names",
    "builtin_model_path",
    "parse_model",
    "parse_observation",
    "read_model",
    "read_observation",
]
