"""Tabulated 3-D Sérsic profile: a bicubic interpolant of the Abel deprojection.

The deprojection integrals of :class:`~lensinfer.profiles.Sersic` cost 160
quadrature nodes per radius; inside a NUTS step that needs the stellar mass
at ~100 radii (halo contraction, Jeans integrals) that dominates the run time.
This module tabulates

- ln mu(x, n), mu = M(<x R_eff) / M,         and
- ln nu(x, n) + b_n x^(1/n), nu = rho(x R_eff) R_eff^3 / M (the exponential
  fall-off taken out, so the tabulated function is smooth and never underflows),

on a grid uniform in ln x (1e-5 <= x <= 1e4, step 0.05) and in ln n
(0.45 <= n <= 10.05, 193 knots), computed with the quadrature of
:class:`Sersic` (relative error ~1e-13).  The knot values ship with the
package (``data/sersic_deprojection.npy``, 1.3 MB, float64), because building
them takes 2-8 s of compilation and evaluation; regenerate them with
``python -m lensinfer.profiles._sersic_table`` after any change to the
quadrature (a test recomputes sample columns and compares them with the file).  Between the knots a bicubic Hermite
patch uses derivatives from not-a-knot cubic splines along each axis, so the
interpolant is C^1 in (ln x, n) (NUTS needs continuous gradients) with an
interpolation error of order h^4: measured below 3e-7 relative in mu and
1e-6 in nu over 1e-2 <= x <= 1e2, 0.5 <= n <= 10 (tests check it against the
direct quadrature).  Outside the tabulated x range ln mu and ln nu continue
linearly in ln x; n outside [0.45, 10.05] gives NaN.
"""

import functools
import os

import jax
import jax.numpy as jnp
import numpy as np

from lensinfer._spline import second_derivative_operator

__all__: list[str] = []

U_LO, U_STEP, N_U = float(np.log(1e-5)), 0.05, round(np.log(1e9) / 0.05) + 1
N_N = 193
N_LO = float(np.log(0.45))  # the n axis is uniform in ln n
N_STEP = float((np.log(10.05) - np.log(0.45)) / (N_N - 1))


def _derivative_operator(n: int, h: float) -> np.ndarray:
    """Matrix D with y' = D y at the knots of the not-a-knot spline through y."""
    s = second_derivative_operator(n, h)
    d = np.zeros((n, n))
    for k in range(n - 1):
        d[k, k], d[k, k + 1] = -1.0 / h, 1.0 / h
    d[:-1] -= h / 6.0 * (2.0 * s[:-1] + s[1:])
    # Last knot: derivative from the last interval's right end.
    d[-1, -2], d[-1, -1] = -1.0 / h, 1.0 / h
    d[-1] += h / 6.0 * (s[-2] + 2.0 * s[-1])
    return d


DATA_PATH = os.path.join(os.path.dirname(__file__), "data", "sersic_deprojection.npy")


def knot_indices():
    """The n values of the table's columns."""
    return np.exp(N_LO + N_STEP * np.arange(N_N))


def compute_knot_values(n_values=None):
    """(2, N_U, len(n_values)) knot values [ln mu, ln nu + b x^(1/n)] by quadrature."""
    from lensinfer.profiles.sersic import Sersic

    n = knot_indices() if n_values is None else np.asarray(n_values, dtype=float)
    u = U_LO + U_STEP * np.arange(N_U)
    x = jnp.asarray(np.exp(u))

    def column(n_val):
        s = Sersic(1.0, 1.0, n_val, deprojection="quadrature")
        log_nu = s.log_density_quadrature(x) + s.b * x ** (1.0 / n_val)
        return jnp.stack([jnp.log(s.enclosed_mass(x)), log_nu])

    columns = jax.jit(jax.vmap(column))
    with jax.ensure_compile_time_eval():
        chunks = [
            np.asarray(columns(jnp.asarray(c))) for c in np.array_split(n, max(1, n.size // 24))
        ]
    return np.moveaxis(np.concatenate(chunks, axis=0), 0, -1)


@functools.cache
def _table():
    """(N_U, N_N, 2, 4) array: [ln mu, ln nu'] x [f, f_u, f_n, f_un] at the knots."""
    f = np.load(DATA_PATH)
    if f.shape != (2, N_U, N_N):
        raise RuntimeError(f"{DATA_PATH} has shape {f.shape}, expected {(2, N_U, N_N)}")
    du = _derivative_operator(N_U, U_STEP)
    dn = _derivative_operator(N_N, N_STEP)
    fu = np.einsum("ij,qjk->qik", du, f)
    fn = np.einsum("kj,qij->qik", dn, f)
    fun = np.einsum("kj,qij->qik", dn, fu)
    packed = np.stack([f, fu, fn, fun], axis=-1)  # (2, N_U, N_N, 4)
    # numpy, not jnp: a cached jax array created inside a trace would leak it.
    return np.ascontiguousarray(np.moveaxis(packed, 0, 2))  # (N_U, N_N, 2, 4)


def _hermite(t):
    t2, t3 = t * t, t * t * t
    return (2 * t3 - 3 * t2 + 1, t3 - 2 * t2 + t, -2 * t3 + 3 * t2, t3 - t2)


@functools.cache
def _device_table():
    """The table as a device array, made once outside any trace.

    A numpy constant captured by jitted code is converted and copied to the
    device at every call (~150 us for these 5 MB); a cached jax array is
    passed by reference.
    """
    with jax.ensure_compile_time_eval():
        return jnp.asarray(_table())


def log_profile(x, n, b):
    """(ln mu, ln nu) at x = r / R_eff for index n with b = b_n (broadcasting over x)."""
    table = _device_table()
    x = jnp.asarray(x, dtype=jnp.float64)
    u = jnp.log(x)
    n = jnp.asarray(n, dtype=jnp.float64)
    ln_n = jnp.log(n)
    u_hi = U_LO + U_STEP * (N_U - 1)
    uc = jnp.clip(u, U_LO, u_hi)
    su = (uc - U_LO) / U_STEP
    i = jnp.clip(jnp.floor(su), 0, N_U - 2).astype(jnp.int32)
    t = su - i
    sn = (ln_n - N_LO) / N_STEP
    valid_n = (sn >= 0.0) & (sn <= N_N - 1)
    j = jnp.clip(jnp.floor(sn), 0, N_N - 2).astype(jnp.int32)
    s = jnp.clip(sn, 0.0, N_N - 1.0) - j
    j = jnp.broadcast_to(j, i.shape)
    s = jnp.broadcast_to(s, t.shape)
    h0t, h1t, h2t, h3t = _hermite(t)
    h0s, h1s, h2s, h3s = _hermite(s)
    out = 0.0
    for di, (a0, a1) in enumerate(((h0t, h1t), (h2t, h3t))):
        for dj, (b0, b1) in enumerate(((h0s, h1s), (h2s, h3s))):
            c = table[i + di, j + dj]  # (..., 2, 4)
            out = out + (
                (a0 * b0)[..., None] * c[..., 0]
                + (U_STEP * a1 * b0)[..., None] * c[..., 1]
                + (N_STEP * a0 * b1)[..., None] * c[..., 2]
                + (U_STEP * N_STEP * a1 * b1)[..., None] * c[..., 3]
            )
    # Beyond the x range: continue linearly in ln x with the end slope.
    slope_end = _slope_at(table, jnp.where(u < U_LO, 0, N_U - 1), j, s)
    out = out + slope_end * (u - uc)[..., None]
    out = out.at[..., 1].add(-b * x ** (1.0 / n))
    return jnp.where(valid_n[..., None], out, jnp.nan)


def _slope_at(table, i, j, s):
    """d/du of (ln mu, ln nu) at knot i, interpolated in n (Hermite)."""
    i = jnp.broadcast_to(i, j.shape)
    h0s, h1s, h2s, h3s = _hermite(s)
    c0, c1 = table[i, j], table[i, j + 1]
    return (
        h0s[..., None] * c0[..., 1]
        + (N_STEP * h1s)[..., None] * c0[..., 3]
        + h2s[..., None] * c1[..., 1]
        + (N_STEP * h3s)[..., None] * c1[..., 3]
    )


def main():
    """Recompute the knot values and write them to DATA_PATH (atomically)."""
    import lensinfer  # noqa: F401  (float64)

    values = compute_knot_values()
    os.makedirs(os.path.dirname(DATA_PATH), exist_ok=True)
    tmp = DATA_PATH + ".tmp.npy"
    np.save(tmp, values)
    os.replace(tmp, DATA_PATH)
    print(f"wrote {DATA_PATH} {values.shape}")


if __name__ == "__main__":
    main()
