"""One-dimensional priors usable both by numpyro and as unit-cube transforms."""

from __future__ import annotations

import dataclasses

import jax.numpy as jnp
from jax.scipy.special import ndtr, ndtri

__all__ = ["Normal", "TruncatedNormal", "Uniform"]


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


def _fmt(x) -> str:
    try:
        return f"{float(x):.4g}"
    except (TypeError, ValueError):
        return "(conditional)"
