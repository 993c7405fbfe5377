"""Shared test helper: derivatives against central finite differences."""

import jax
import numpy as np

_COMPILED = {}


def _compiled(f, n_args, forward):
    """jit(f), jit(grad f) and jit(jacfwd f), built once per (f, n_args).

    Tests that pass the same module-level function with different argument
    values then share one compilation (compiling these derivatives costs
    ~1-3 s each on the 2-core test machines).
    """
    key = (f, n_args, forward)
    if key not in _COMPILED:
        argnums = tuple(range(n_args))
        _COMPILED[key] = (
            jax.jit(f),
            jax.jit(jax.grad(f, argnums=argnums)),
            jax.jit(jax.jacfwd(f, argnums=argnums)) if forward else None,
        )
    return _COMPILED[key]


def assert_grads_match_fd(f, args, *, forward=True, rel_step=1e-6, rtol=1e-6, atol=1e-10):
    """Check reverse- (and forward-) mode derivatives of a scalar f against finite differences.

    Central differences with step h = rel_step * max(1, |x|) have truncation
    error ~h^2 |f'''| / 6 (~1e-12 relative here) and rounding error
    ~1e-16 |f| / h (~1e-10 relative), so rtol = 1e-6 catches any wrong
    derivative while staying far above the noise.  Forward and reverse mode
    must agree with each other to 1e-12.  ``forward=False`` skips forward mode
    to save a compilation (3-6 s for the larger functions): JAX derives
    reverse mode by transposing the same linearised JVP, so a correct reverse
    derivative already exercises the forward rules; forward mode is checked
    separately on the cheap functions.

    This does what ``jax.test_util.check_grads(f, args, order=1)`` does, but
    compiles each derivative once (check_grads re-traces the linearised and
    transposed functions on every call, which cost 8-20 s per check here).
    """
    args = tuple(float(a) for a in args)
    f_jit, grad_jit, jacfwd_jit = _compiled(f, len(args), forward)
    rev = grad_jit(*args)
    fwd = jacfwd_jit(*args) if forward else rev
    for i, x in enumerate(args):
        h = rel_step * max(1.0, abs(x))
        up = list(args)
        down = list(args)
        up[i] = x + h
        down[i] = x - h
        fd = (float(f_jit(*up)) - float(f_jit(*down))) / (2.0 * h)
        np.testing.assert_allclose(float(rev[i]), fd, rtol=rtol, atol=atol, err_msg=f"rev arg {i}")
        np.testing.assert_allclose(float(fwd[i]), fd, rtol=rtol, atol=atol, err_msg=f"fwd arg {i}")
        np.testing.assert_allclose(float(rev[i]), float(fwd[i]), rtol=1e-12, atol=1e-14)
