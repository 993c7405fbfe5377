"""One-dimensional priors usable both by numpyro and as unit-cube transforms."""

from __future__ import annotations

import dataclasses

import jax.numpy as jnp
import numpy as np
from jax.scipy.special import ndtr, ndtri

__all__ = ["Normal", "TabulatedLogDensity", "TruncatedNormal", "Uniform"]


@dataclasses.dataclass(frozen=True)
class Uniform:
    """Uniform on [low, high]."""

    low: float
    high: float

    def distribution(self):
        import numpyro.distributions as dist

        return dist.Uniform(self.low, self.high)

    def from_unit_cube(self, u):
        return self.low + (self.high - self.low) * u

    def to_unit_cube(self, x):
        """The prior CDF at x (the inverse of :meth:`from_unit_cube`)."""
        return (x - self.low) / (self.high - self.low)

    def median(self):
        return 0.5 * (self.low + self.high)

    def describe(self) -> str:
        return f"uniform({_fmt(self.low)}, {_fmt(self.high)})"


@dataclasses.dataclass(frozen=True)
class Normal:
    """Normal(mean, sd); mean may be a traced value (a conditional prior)."""

    mean: object
    sd: object

    def distribution(self):
        import numpyro.distributions as dist

        return dist.Normal(self.mean, self.sd)

    def from_unit_cube(self, u):
        return self.mean + self.sd * ndtri(u)

    def to_unit_cube(self, x):
        """The prior CDF at x (the inverse of :meth:`from_unit_cube`)."""
        return ndtr((x - self.mean) / self.sd)

    def median(self):
        return self.mean

    def describe(self) -> str:
        return f"normal({_fmt(self.mean)}, {_fmt(self.sd)})"


@dataclasses.dataclass(frozen=True)
class TruncatedNormal:
    """Normal(mean, sd) truncated to [low, high] (for positive nuisance parameters)."""

    mean: float
    sd: float
    low: float
    high: float

    def distribution(self):
        import numpyro.distributions as dist

        return dist.TruncatedNormal(self.mean, self.sd, low=self.low, high=self.high)

    def from_unit_cube(self, u):
        a = ndtr((self.low - self.mean) / self.sd)
        b = ndtr((self.high - self.mean) / self.sd)
        return self.mean + self.sd * ndtri(a + u * (b - a))

    def to_unit_cube(self, x):
        """The prior CDF at x (the inverse of :meth:`from_unit_cube`)."""
        a = ndtr((self.low - self.mean) / self.sd)
        b = ndtr((self.high - self.mean) / self.sd)
        return (ndtr((x - self.mean) / self.sd) - a) / (b - a)

    def median(self):
        return self.from_unit_cube(jnp.asarray(0.5))

    def describe(self) -> str:
        return (
            f"normal({_fmt(self.mean)}, {_fmt(self.sd)}) truncated to "
            f"[{_fmt(self.low)}, {_fmt(self.high)}]"
        )


@dataclasses.dataclass(frozen=True, eq=False)
class TabulatedLogDensity:
    r"""A density on [x_0, x_{n-1}] whose logarithm is linear between uniform knots.

    .. math::

        \ln p(x) = y_k + b_k (x - x_k) - \ln Z, \qquad
        x_k \le x \le x_{k+1}, \quad b_k = (y_{k+1} - y_k) / h,

    normalised exactly: each segment integrates to
    :math:`e^{y_k} h\,\varphi(b_k h)` with :math:`\varphi(s) = (e^s - 1)/s`,
    so the CDF and its inverse are closed-form in every segment and
    :meth:`from_unit_cube` and :meth:`to_unit_cube` are exact inverses of one
    another and of the density :meth:`distribution` gives NUTS.  Used for the
    halo-mass prior proportional to the halo mass function
    (:mod:`lensinfer.halo.abundance`).

    Parameters
    ----------
    grid : array
        Uniform knots (increasing).
    log_density : array
        :math:`y_k`, the log-density at the knots up to a constant.
    label : str
        What :meth:`describe` calls it.
    """

    grid: object
    log_density: object
    label: str = "tabulated"

    def __post_init__(self):
        x = np.asarray(self.grid, dtype=float)
        y = np.asarray(self.log_density, dtype=float)
        if x.ndim != 1 or x.shape != y.shape or x.size < 2:
            raise ValueError("grid and log_density must be 1-D arrays of equal length >= 2")
        h = np.diff(x)
        if not (np.all(h > 0) and np.allclose(h, h[0], rtol=1e-9, atol=0.0)):
            raise ValueError("the grid must be uniform and increasing")
        if not np.all(np.isfinite(y)):
            raise ValueError("log_density must be finite at every knot")
        y = y - y.max()
        b = np.diff(y) / h[0]
        seg = np.exp(y[:-1]) * h[0] * _phi_np(b * h[0])
        z = seg.sum()
        object.__setattr__(self, "_x", x)
        object.__setattr__(self, "_h", float(h[0]))
        object.__setattr__(self, "_y", y - np.log(z))  # normalised log density at knots
        object.__setattr__(self, "_b", b)
        object.__setattr__(self, "_cdf", np.concatenate([[0.0], np.cumsum(seg / z)]))

    @property
    def low(self) -> float:
        return float(self._x[0])

    @property
    def high(self) -> float:
        return float(self._x[-1])

    def log_prob(self, x):
        """Normalised log density (linear interpolation of the log; -inf outside)."""
        x = jnp.asarray(x)
        inside = (x >= self._x[0]) & (x <= self._x[-1])
        lp = jnp.interp(jnp.clip(x, self._x[0], self._x[-1]), self._x, self._y)
        return jnp.where(inside, lp, -jnp.inf)

    def _segment(self, x):
        k = jnp.clip(jnp.floor((x - self._x[0]) / self._h).astype(int), 0, self._x.size - 2)
        return k, x - jnp.asarray(self._x)[k]

    def to_unit_cube(self, x):
        """The CDF at x."""
        x = jnp.clip(jnp.asarray(x), self._x[0], self._x[-1])
        k, t = self._segment(x)
        y, b = jnp.asarray(self._y)[k], jnp.asarray(self._b)[k]
        return jnp.asarray(self._cdf)[k] + jnp.exp(y) * t * _phi(b * t)

    def from_unit_cube(self, u):
        """The inverse CDF at u (closed form in the segment that holds u)."""
        u = jnp.clip(jnp.asarray(u), 0.0, 1.0)
        cdf = jnp.asarray(self._cdf)
        k = jnp.clip(jnp.searchsorted(cdf, u, side="right") - 1, 0, self._x.size - 2)
        y, b = jnp.asarray(self._y)[k], jnp.asarray(self._b)[k]
        # The integral of exp(b s) over [0, t] must equal r.  Rounding can push
        # b r just below -1 (steep falling segments, u next to a CDF knot) or
        # make exp(-y) overflow: keep b r above -1 and t inside the segment.
        r = jnp.minimum((u - cdf[k]) * jnp.exp(-jnp.maximum(y, -700.0)), 1e300)
        br = jnp.maximum(b * r, -1.0 + 1e-15)
        t = r * _log1p_ratio(br)
        t = jnp.where(t > self._h, self._h, jnp.where(t < 0.0, 0.0, t))  # ties keep d/du
        return jnp.clip(jnp.asarray(self._x)[k] + t, self._x[0], self._x[-1])

    def distribution(self):
        return _tabulated_distribution(self)

    def median(self):
        return self.from_unit_cube(jnp.asarray(0.5))

    def describe(self) -> str:
        return f"{self.label} on [{_fmt(self.low)}, {_fmt(self.high)}]"


def _phi_np(s):
    s = np.asarray(s, dtype=float)
    small = np.abs(s) < 1e-8
    safe = np.where(small, 1.0, s)
    return np.where(small, 1.0 + 0.5 * s, np.expm1(safe) / safe)


def _phi(s):
    """(e^s - 1) / s, smooth through s = 0."""
    small = jnp.abs(s) < 1e-8
    safe = jnp.where(small, 1.0, s)
    return jnp.where(small, 1.0 + 0.5 * s, jnp.expm1(safe) / safe)


def _log1p_ratio(v):
    """log(1 + v) / v, smooth through v = 0 (v > -1)."""
    small = jnp.abs(v) < 1e-8
    safe = jnp.where(small, 1.0, v)
    return jnp.where(small, 1.0 - 0.5 * v, jnp.log1p(safe) / safe)


def _tabulated_distribution(table: TabulatedLogDensity):
    """A numpyro distribution with the table's density (support: its interval)."""
    import jax.random
    import numpyro.distributions as dist
    from numpyro.distributions import constraints

    class _Tabulated(dist.Distribution):
        support = constraints.interval(table.low, table.high)

        def __init__(self):
            super().__init__(batch_shape=(), event_shape=())

        def sample(self, key, sample_shape=()):
            return table.from_unit_cube(jax.random.uniform(key, sample_shape))

        def log_prob(self, value):
            return table.log_prob(value)

        def cdf(self, value):
            return table.to_unit_cube(value)

        def icdf(self, q):
            return table.from_unit_cube(q)

    return _Tabulated()


def _fmt(x) -> str:
    try:
        return f"{float(x):.4g}"
    except (TypeError, ValueError):
        return "(conditional)"
