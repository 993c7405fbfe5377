r"""Velocity anisotropy models: isotropic, constant and Osipkov–Merritt.

The anisotropy :math:`\beta(r) = 1 - \sigma_t^2/\sigma_r^2` (with
:math:`\sigma_t` the one-dimensional tangential dispersion) enters the
spherical Jeans equation through the integrating factor

.. math::

    f(r) = \exp\int^r \frac{2\beta(s)}{s}\,ds ,

and the line-of-sight projection through the factor :math:`1 - \beta R^2/r^2`.
Exchanging the order of the two integrals turns them into one integral with a
kernel :math:`K(u, u_a)`, :math:`u = r/R`, :math:`u_a = r_a/R`
(Mamon & Łokas 2005, MNRAS 363, 705, eq. A16 and the kernel table of their
appendix; the table number is not quoted from memory).

Each model is an immutable JAX pytree; its parameter is a data field, so it
can be a sampled (traced) value and gradients flow through it.
"""

from __future__ import annotations

import dataclasses

import jax
import jax.numpy as jnp

from lensinfer.dynamics._rules import log_cosh, unit_rule
from lensinfer.profiles._units import KPC, to_internal
from lensinfer.profiles.base import as_float

__all__ = ["Anisotropy", "ConstantAnisotropy", "Isotropic", "OsipkovMerritt"]

#: Gauss–Legendre nodes of the constant-beta kernel integral (see
#: :meth:`ConstantAnisotropy.los_kernel`).  Against 30-digit mpmath quadrature,
#: 20 nodes give a relative error below 1.2e-7 for -3 <= beta <= 0.99 and
#: 0 < t <= 12.2 (r/R up to 1e5); 16 nodes give 5e-5 at beta = -3.
N_KERNEL = 20
_KERNEL_RULE = unit_rule(N_KERNEL)


class Anisotropy:
    """Base class of the anisotropy models (see the module docstring).

    Methods
    -------
    beta_at(r)
        :math:`\\beta(r)`.
    log_integrating_factor(r)
        :math:`\\ln f(r)` up to an additive constant (it cancels).
    los_kernel(t, R)
        The Mamon & Łokas kernel :math:`K(u, r_a/R)` at :math:`u = \\cosh t`.
    """

    def beta_at(self, r):
        raise NotImplementedError

    def log_integrating_factor(self, r):
        raise NotImplementedError

    def los_kernel(self, t, R):
        raise NotImplementedError


@jax.tree_util.register_dataclass
@dataclasses.dataclass(frozen=True)
class Isotropic(Anisotropy):
    r"""Isotropic orbits, :math:`\beta = 0`.

    .. math::

        f(r) = 1,\qquad K(u) = \sqrt{1 - u^{-2}} = \tanh t\quad(u = \cosh t)

    (Mamon & Łokas 2005, appendix kernel table, isotropic row).

    Examples
    --------
    >>> from lensinfer.dynamics import Isotropic
    >>> float(Isotropic().los_kernel(1.0, 1.0))  # tanh(1)
    0.7615941559557649
    """

    def beta_at(self, r):
        return jnp.zeros_like(as_float(r))

    def log_integrating_factor(self, r):
        return jnp.zeros_like(as_float(r))

    def los_kernel(self, t, R):
        t = as_float(t)
        return jnp.tanh(t) + 0.0 * as_float(R)


@jax.tree_util.register_dataclass
@dataclasses.dataclass(frozen=True)
class ConstantAnisotropy(Anisotropy):
    r"""Constant anisotropy :math:`\beta < 1` at all radii.

    .. math::

        f(r) = r^{2\beta},\qquad
        K(u) = u^{2\beta - 1}\int_1^u \left(1 - \frac{\beta}{w^2}\right)
               \frac{w^{1 - 2\beta}}{\sqrt{w^2 - 1}}\,dw
             = \int_0^t \left(1 - \beta\,{\rm sech}^2\theta\right)
               \left(\frac{\cosh\theta}{\cosh t}\right)^{1 - 2\beta} d\theta

    with :math:`u = \cosh t`, :math:`w = \cosh\theta`.  Mamon & Łokas (2005,
    eq. A16) write this integral with incomplete beta functions,

    .. math::

        K(u) = \tfrac12 u^{2\beta-1}\Big[\big(\tfrac32 - \beta\big)\sqrt\pi\,
               \frac{\Gamma(\beta - \frac12)}{\Gamma(\beta)}
               + \beta\,B\big(u^{-2}; \beta + \tfrac12, \tfrac12\big)
               - B\big(u^{-2}; \beta - \tfrac12, \tfrac12\big)\Big],

    which needs the analytic continuation of :math:`B(x; a, b)` to
    :math:`a \le 0` for :math:`\beta \le 1/2` (removable singularities at
    half-integer beta), and ``jax.scipy.special.betainc`` has neither that
    continuation nor a derivative with respect to its first parameter.  Here
    the second (smooth, non-singular) form is integrated with 20 fixed
    Gauss–Legendre nodes in :math:`\theta \in [0, t]`, which is valid for
    every :math:`\beta < 1`, differentiable in beta, and accurate to 1.2e-7
    for :math:`-3 \le \beta \le 0.99` (tests compare with the incomplete-beta
    form and with mpmath).

    Parameters
    ----------
    beta : float or array
        The anisotropy, beta < 1 (beta < 0 tangential, 0 < beta < 1 radial).
        May be traced (sampled).
    """

    beta: jax.Array

    def __post_init__(self):
        if isinstance(self.beta, (int, float)) and not self.beta < 1.0:
            raise ValueError(f"ConstantAnisotropy needs beta < 1, got {self.beta!r}")

    def beta_at(self, r):
        return jnp.zeros_like(as_float(r)) + self.beta

    def log_integrating_factor(self, r):
        return 2.0 * self.beta * jnp.log(as_float(r))

    def los_kernel(self, t, R):
        t = as_float(t)
        beta = as_float(self.beta)
        x, w = _KERNEL_RULE
        theta = t[..., None] * x
        c = 1.0 - 2.0 * beta[..., None]
        integrand = (1.0 - beta[..., None] / jnp.cosh(theta) ** 2) * jnp.exp(
            c * (log_cosh(theta) - log_cosh(t)[..., None])
        )
        return t * jnp.sum(w * integrand, axis=-1) + 0.0 * as_float(R)


@jax.tree_util.register_dataclass
@dataclasses.dataclass(frozen=True)
class OsipkovMerritt(Anisotropy):
    r"""Osipkov (1979) – Merritt (1985) anisotropy, isotropic inside r_a.

    .. math::

        \beta(r) = \frac{r^2}{r^2 + r_a^2},\qquad
        f(r) = 1 + \frac{r^2}{r_a^2},

        K(u, u_a) = \frac{u_a^2 + \frac12}{(u_a^2 + 1)^{3/2}}
            \frac{u^2 + u_a^2}{u}
            \arctan\sqrt{\frac{u^2 - 1}{u_a^2 + 1}}
          - \frac{1/2}{u_a^2 + 1}\sqrt{1 - u^{-2}}

    with :math:`u = r/R = \cosh t` and :math:`u_a = r_a/R` (Mamon & Łokas
    2005, appendix kernel table, Osipkov–Merritt row; :math:`\sqrt{u^2-1} = \sinh t` is
    used so there is no cancellation as :math:`u \to 1`).  For
    :math:`r_a \to \infty` the kernel tends to the isotropic one.

    Parameters
    ----------
    r_anisotropy : float or Quantity
        The anisotropy radius r_a, kpc (> 0).  May be traced (sampled).

    References
    ----------
    Osipkov L. P., 1979, Pis'ma Astron. Zh. 5, 77.
    Merritt D., 1985, AJ 90, 1027.
    """

    r_anisotropy: jax.Array

    def __post_init__(self):
        value = to_internal(self.r_anisotropy, KPC)
        if isinstance(value, (int, float)) and not value > 0.0:
            raise ValueError(f"OsipkovMerritt needs r_anisotropy > 0 kpc, got {value!r}")
        object.__setattr__(self, "r_anisotropy", value)

    def beta_at(self, r):
        x2 = (as_float(r) / self.r_anisotropy) ** 2
        return x2 / (1.0 + x2)

    def log_integrating_factor(self, r):
        return jnp.log1p((as_float(r) / self.r_anisotropy) ** 2)

    def los_kernel(self, t, R):
        t = as_float(t)
        ua2 = (self.r_anisotropy / as_float(R)) ** 2
        ch = jnp.cosh(t)
        first = (
            (ua2 + 0.5)
            / (ua2 + 1.0) ** 1.5
            * (ch**2 + ua2)
            / ch
            * jnp.arctan(jnp.sinh(t) / jnp.sqrt(ua2 + 1.0))
        )
        return first - 0.5 / (ua2 + 1.0) * jnp.tanh(t)
