"""lensinfer: stars versus dark matter in galaxy-scale strong gravitational lenses.

Importing the package switches JAX to 64-bit floats
(``jax.config.update("jax_enable_x64", True)``): every physics function works in
float64, because root finds, contraction solves and NUTS gradients of lensing
masses lose accuracy in float32.  Sub-packages:

- :mod:`lensinfer.cosmology` — distances and critical densities in JAX;
- :mod:`lensinfer.profiles` — spherical mass and light profiles;
- :mod:`lensinfer.lensing` — critical surface density, convergence, deflection,
  Einstein radius;
- :mod:`lensinfer.stellar`, :mod:`lensinfer.halo` — IMFs, halo relations;
- :mod:`lensinfer.contraction` — the halo's response to the galaxy;
- :mod:`lensinfer.spec`, :mod:`lensinfer.model`, :mod:`lensinfer.inference` —
  declarative files, numpyro models, NUTS and results files.

It keeps a persistent JAX compilation cache in ``~/.cache/lensinfer/jax``
(``LENSINFER_JAX_CACHE`` sets another directory, or "off"), so a model is
compiled once per machine rather than once per run.  It also asks JAX for
one CPU device per core (at least 4) through XLA_FLAGS,
unless XLA_FLAGS already sets a device count, so chains can run in parallel.
"""

import os as _os

# One JAX CPU device per core (and at least 4) so NUTS chains can run in
# parallel.  This only takes effect if JAX has not started yet, and never
# overrides a device count the user has set in XLA_FLAGS.
if "xla_force_host_platform_device_count" not in _os.environ.get("XLA_FLAGS", ""):
    _os.environ["XLA_FLAGS"] = (
        _os.environ.get("XLA_FLAGS", "")
        + f" --xla_force_host_platform_device_count={max(_os.cpu_count() or 1, 4)}"
    ).strip()

import jax as _jax

_jax.config.update("jax_enable_x64", True)

# Persistent compilation cache: compiling a contraction model's NUTS kernel
# takes tens of seconds, and the same model compiles to the same program in
# every run.  Set LENSINFER_JAX_CACHE to a directory, or to "off"; an existing
# jax_compilation_cache_dir setting is left alone.
_cache_dir = _os.environ.get(
    "LENSINFER_JAX_CACHE", _os.path.join(_os.path.expanduser("~"), ".cache", "lensinfer", "jax")
)
if _cache_dir.lower() not in ("", "0", "off", "none") and not _jax.config.jax_compilation_cache_dir:
    _jax.config.update("jax_compilation_cache_dir", _cache_dir)
    _jax.config.update("jax_persistent_cache_min_compile_time_secs", 0.5)

from lensinfer._version import __version__  # noqa: E402

__all__ = [
    "__version__",
    "build_model",
    "compare",
    "read_model",
    "read_observation",
    "read_results",
    "sample",
    "summarize",
    "write_results",
]

_LAZY = {
    "sample": "lensinfer.inference",
    "read_results": "lensinfer.inference",
    "write_results": "lensinfer.inference",
    "summarize": "lensinfer.inference",
    "read_model": "lensinfer.spec",
    "read_observation": "lensinfer.spec",
    "build_model": "lensinfer.model",
    "compare": "lensinfer.comparison",
}


def __getattr__(name):
    # Heavy modules (numpyro, arviz) load only when their names are used.
    if name in _LAZY:
        import importlib

        return getattr(importlib.import_module(_LAZY[name]), name)
    raise AttributeError(f"module 'lensinfer' has no attribute {name!r}")
