"""Shared pytest set-up: importing lensinfer switches JAX to float64."""

import lensinfer  # noqa: F401  (enables jax_enable_x64 before any test builds arrays)
