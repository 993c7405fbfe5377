"""Cubic splines on a fixed uniform grid, with a precomputed system matrix.

The knots are uniform in u with spacing h, so the not-a-knot cubic-spline
system that gives the knot second derivatives has a constant matrix; its
inverse times the second-difference operator is computed once (numpy) and a
spline fit in jitted code is a single matrix–vector product (differentiable,
no loops).  Evaluation needs no search: the interval index is
floor((u - u_0) / h).
"""

import jax.numpy as jnp
import numpy as np

__all__: list[str] = []


def second_derivative_operator(n: int, h: float) -> np.ndarray:
    """Matrix S with M = S y: knot second derivatives of the not-a-knot spline.

    Interior rows: M_{k-1} + 4 M_k + M_{k+1} = 6 (y_{k-1} - 2 y_k + y_{k+1}) / h^2
    (de Boor 2001, "A Practical Guide to Splines", ch. IV).  End rows: the
    third derivative is continuous at the second and the penultimate knots,
    M_0 - 2 M_1 + M_2 = 0 and M_{n-3} - 2 M_{n-2} + M_{n-1} = 0.
    """
    a = np.zeros((n, n))
    b = np.zeros((n, n))
    for k in range(1, n - 1):
        a[k, k - 1 : k + 2] = (1.0, 4.0, 1.0)
        b[k, k - 1 : k + 2] = np.array([1.0, -2.0, 1.0]) * 6.0 / h**2
    a[0, 0:3] = (1.0, -2.0, 1.0)
    a[-1, -3:] = (1.0, -2.0, 1.0)
    return np.linalg.solve(a, b)


def evaluate_many(u, u0, h, y, m, derivative=False):
    """Spline value (and, with ``derivative=True``, dy/du) at the points u.

    The cubic through knots y with knot second derivatives m (from
    :func:`second_derivative_operator`), clamped to the grid's intervals:
    outside the grid the end cubic is continued, and callers that
    extrapolate further use the end values and slopes instead.  The
    interval's end values are picked with a one-hot matrix product rather
    than an indexed gather: reverse-mode differentiation of a gather is a
    scatter-add, which on XLA's CPU backend made the gradient of a 48-node
    projection cost 175 us instead of 46 us, and of the 61-radius Jeans grid
    123 us instead of 44 us (measured).
    """
    n = y.shape[-1]
    s = (u - u0) / h
    k = jnp.clip(jnp.floor(s), 0, n - 2)
    t = s - k
    onehot = (k[..., None] == jnp.arange(n - 1, dtype=k.dtype)).astype(y.dtype)
    y0, y1 = onehot @ y[:-1], onehot @ y[1:]
    m0, m1 = onehot @ m[:-1], onehot @ m[1:]
    omt = 1.0 - t
    val = omt * y0 + t * y1 + h**2 / 6.0 * ((omt**3 - omt) * m0 + (t**3 - t) * m1)
    if not derivative:
        return val
    der = (y1 - y0) / h + h / 6.0 * (-(3.0 * omt**2 - 1.0) * m0 + (3.0 * t**2 - 1.0) * m1)
    return val, der
