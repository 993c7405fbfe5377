"""Shared timing helpers for the benchmarks (not part of the test suite)."""

import json
import os
import platform
import time

import jax
import jax.numpy as jnp

RESULTS_DIR = os.path.join(os.path.dirname(__file__), "results")


def time_in_loop(fn, x0, n_inner=2000, repeats=5):
    """Seconds per call of ``fn(x)`` inside a jitted ``lax.scan`` of n_inner steps.

    The input changes at every step (x0 * (1 + 1e-6 i)) so nothing is hoisted
    out of the loop; the best of ``repeats`` runs is reported (compile excluded).
    """

    @jax.jit
    def loop(x0):
        def body(carry, i):
            out = fn(x0 * (1.0 + 1e-6 * i))
            # Every output leaf enters the carry, so a gradient returned beside
            # the value cannot be dropped by the compiler as dead code.
            leaves = jax.tree_util.tree_leaves(out)
            return carry + sum(jnp.sum(jnp.asarray(leaf)) for leaf in leaves), None

        return jax.lax.scan(body, 0.0, jnp.arange(n_inner, dtype=jnp.float64))[0]

    jax.block_until_ready(loop(x0))
    best = float("inf")
    for _ in range(repeats):
        t = time.perf_counter()
        jax.block_until_ready(loop(x0))
        best = min(best, time.perf_counter() - t)
    return best / n_inner


def time_python_call(fn, x0, n=300, repeats=3):
    """Seconds per Python-level call of the jitted ``fn`` (dispatch included)."""
    f = jax.jit(fn)
    jax.block_until_ready(f(x0))
    best = float("inf")
    for _ in range(repeats):
        t = time.perf_counter()
        for _ in range(n):
            out = f(x0)
        jax.block_until_ready(out)
        best = min(best, time.perf_counter() - t)
    return best / n


def machine_info():
    return {
        "python": platform.python_version(),
        "jax": jax.__version__,
        "cpu_count": os.cpu_count(),
        "machine": platform.machine(),
        "x64": bool(jax.config.jax_enable_x64),
    }


def write_json(name, payload):
    os.makedirs(RESULTS_DIR, exist_ok=True)
    path = os.path.join(RESULTS_DIR, name)
    with open(path + ".tmp", "w") as fh:
        json.dump(payload, fh, indent=2)
    os.replace(path + ".tmp", path)
    return path
