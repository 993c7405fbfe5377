"""Spherical Jeans dynamics: velocity dispersions with anisotropy, apertures and seeing.

- :func:`radial_dispersion` — sigma_r(r) from the spherical Jeans equation;
- :func:`los_dispersion` — line-of-sight sigma(R) by the Mamon & Łokas (2005)
  single-integral kernels;
- :func:`aperture_dispersion`, :func:`slit_dispersion` — luminosity-weighted
  sigma inside a circular aperture or a rectangular slit, after Gaussian
  seeing;
- :class:`Isotropic`, :class:`ConstantAnisotropy`, :class:`OsipkovMerritt` —
  the anisotropy models (pytrees; their parameters may be sampled).

Radii are in kpc, masses in Msun, velocities in km/s.  Every function is pure
JAX (float64), differentiable and ``vmap``-able.
"""

from lensinfer.dynamics.anisotropy import ConstantAnisotropy, Isotropic, OsipkovMerritt
from lensinfer.dynamics.aperture import aperture_dispersion, slit_dispersion
from lensinfer.dynamics.jeans import radial_dispersion
from lensinfer.dynamics.projection import los_dispersion

__all__ = [
    "ConstantAnisotropy",
    "Isotropic",
    "OsipkovMerritt",
    "aperture_dispersion",
    "los_dispersion",
    "radial_dispersion",
    "slit_dispersion",
]
