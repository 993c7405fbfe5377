"""The Jaffe (1983) sphere."""

import dataclasses

import jax
import jax.numpy as jnp

from lensinfer.profiles._special import arccosh_ratio, near_one, polyval_ascending
from lensinfer.profiles._units import KPC, MSUN, to_internal
from lensinfer.profiles.base import SphericalProfile, as_float

__all__ = ["Jaffe"]

# Taylor coefficients about s = 1 of [1 - (2 - s^2) F(s)] / (1 - s^2) (sympy; tested).
_SIGMA_SERIES = (
    -1.3333333333333333,
    1.0666666666666667,
    -0.8380952380952381,
    0.6603174603174603,
    -0.5275613275613276,
    0.4297924297924298,
    -0.3576867576867577,
    0.30392613922025685,
    -0.26317184707277586,
    0.23166431092127687,
    -0.2067971065144305,
)
# Asymptotic series in u = 1/s of 1/s + (2/pi) [1 - (2 - s^2) F(s)] / (1 - s^2)
# for s > 30, where the closed form cancels (~1e-16 s^2 relative); sympy.
# Asymptotic series in u = 1/s of s [pi/2 - s F(s)] (the cylinder mass over M),
# for s > 30, where the closed form cancels (~1e-16 s relative); sympy.
_LARGE_S_MASS_SERIES = (
    1.0,
    -0.7853981633974483,
    0.6666666666666666,
    -0.5890486225480862,
    0.5333333333333333,
    -0.4908738521234052,
    0.45714285714285713,
    -0.42951462060797957,
    0.40634920634920635,
    -0.3865631585471816,
    0.3694083694083694,
    -0.35434956200158313,
    0.340992340992341,
    -0.32903887900147005,
)
_LARGE_S_SERIES = (
    0.0,
    0.0,
    0.0,
    0.5,
    -0.8488263631567752,
    1.125,
    -1.3581221810508401,
    1.5625,
    -1.7461570899225087,
    1.9140625,
    -2.069519513982233,
    2.21484375,
    -2.3517267204343555,
    2.4814453125,
)


#: Beyond s = 30 the asymptotic series replace the closed forms (series
#: truncation ~ 2.5 u^14 / u^3 < 1e-15 relative there).
_LARGE_S = 30.0


def _sigma_bracket(s):
    return near_one(
        s, lambda y: (1.0 - (2.0 - y**2) * arccosh_ratio(y)) / (1.0 - y**2), _SIGMA_SERIES
    )


@jax.tree_util.register_dataclass
@dataclasses.dataclass(frozen=True)
class Jaffe(SphericalProfile):
    r"""Jaffe (1983, MNRAS 202, 995) profile of total mass M and scale radius a.

    .. math::

        \rho(r) = \frac{M a}{4\pi r^2 (r + a)^2},\qquad
        M(<r) = M\frac{r}{r + a}

        \Sigma(R) = \frac{M}{4 a^2}\left[\frac{1}{s}
            + \frac{2}{\pi}\,\frac{1 - (2 - s^2) F(s)}{1 - s^2}\right],\qquad
        M_{2D}(<R) = M s\left[\frac{\pi}{2} - s F(s)\right]

    with s = R/a and F as in Hernquist (1990, eq. 33) (Jaffe 1983, eqs. 1, 3 and
    the projections in its section 2).  The projected half-mass radius is
    R_eff = 0.7447 a (Jaffe 1983).

    Parameters
    ----------
    mass : float or Quantity
        Total mass, Msun.
    scale_radius : float or Quantity
        Scale radius a (the 3-D half-mass radius), kpc.
    """

    mass: jax.Array
    scale_radius: jax.Array

    def __post_init__(self):
        object.__setattr__(self, "mass", to_internal(self.mass, MSUN))
        object.__setattr__(self, "scale_radius", to_internal(self.scale_radius, KPC))

    @property
    def quadrature_scale(self):
        return self.scale_radius

    def density(self, r):
        r = as_float(r)
        a = self.scale_radius
        return self.mass * a / (4.0 * jnp.pi * r**2 * (r + a) ** 2)

    def enclosed_mass(self, r):
        r = as_float(r)
        return self.mass * r / (r + self.scale_radius)

    def surface_density(self, R):
        a = self.scale_radius
        s = as_float(R) / a
        large = s > _LARGE_S
        s_mid = jnp.where(large, 2.0, s)
        direct = 1.0 / s_mid + 2.0 / jnp.pi * _sigma_bracket(s_mid)
        asymptotic = polyval_ascending(_LARGE_S_SERIES, 1.0 / jnp.where(large, s, 2.0 * _LARGE_S))
        return self.mass / (4.0 * a**2) * jnp.where(large, asymptotic, direct)

    def projected_mass(self, R):
        s = as_float(R) / self.scale_radius
        large = s > _LARGE_S
        s_mid = jnp.where(large, 2.0, s)
        direct = s_mid * (0.5 * jnp.pi - s_mid * arccosh_ratio(s_mid))
        asymptotic = polyval_ascending(
            _LARGE_S_MASS_SERIES, 1.0 / jnp.where(large, s, 2.0 * _LARGE_S)
        )
        return self.mass * jnp.where(large, asymptotic, direct)
