"""Background cosmology computed in JAX (distances, critical density)."""

from lensinfer.cosmology.flrw import Cosmology

__all__ = ["Cosmology"]
