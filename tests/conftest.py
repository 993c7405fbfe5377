"""Shared pytest set-up: importing lensinfer switches JAX to float64.

numpyro.distributions is then imported once, here, at collection: under
``pytest -n 2`` a first import of it inside a test (filterwarnings = "error")
was once seen to leave the package without its ``distribution`` submodule
attribute, so that numpyro.factor failed later with AttributeError (not
reproduced since). Importing it here makes the import order the same whichever
test runs first.
"""

import lensinfer  # noqa: F401  (enables jax_enable_x64 before any test builds arrays)

import numpyro.distributions  # noqa: F401  # isort: skip  (after lensinfer, see above)
