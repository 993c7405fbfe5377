"""Lensing by spherical mass distributions: Sigma_cr, convergence, Einstein radius."""

from lensinfer.lensing.convergence import convergence, deflection, mean_convergence
from lensinfer.lensing.critical import critical_surface_density
from lensinfer.lensing.einstein import einstein_radius, einstein_radius_kpc

__all__ = [
    "convergence",
    "critical_surface_density",
    "deflection",
    "einstein_radius",
    "einstein_radius_kpc",
    "mean_convergence",
]
