"""lensinfer: stars versus dark matter in galaxy-scale strong gravitational lenses.

Importing the package switches JAX to 64-bit floats
(``jax.config.update("jax_enable_x64", True)``): every physics function works in
float64, because root finds, contraction solves and NUTS gradients of lensing
masses lose accuracy in float32.  Sub-packages:

- :mod:`lensinfer.cosmology` — distances and critical densities in JAX;
- :mod:`lensinfer.profiles` — spherical mass and light profiles;
- :mod:`lensinfer.lensing` — critical surface density, convergence, deflection,
  Einstein radius.
"""

import jax as _jax

_jax.config.update("jax_enable_x64", True)

from lensinfer._version import __version__  # noqa: E402

__all__ = ["__version__"]
