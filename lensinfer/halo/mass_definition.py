r"""Spherical-overdensity halo masses and conversions between definitions.

A spherical-overdensity mass :math:`M_\Delta` is the mass inside the radius
:math:`r_\Delta` within which the mean density is :math:`\Delta` times the
critical density :math:`\rho_c(z)`:

.. math:: M_\Delta = \frac{4\pi}{3}\,\Delta\,\rho_c(z)\,r_\Delta^3 .

Definitions are named by short static strings:

``"200c"``, ``"500c"``, ... (``"<N>c"``)
    :math:`\Delta = N` (N times the critical density).
``"200m"``, ... (``"<N>m"``)
    :math:`\Delta = N\,\Omega_m(z)` (N times the mean matter density).
``"vir"``
    The virial overdensity of Bryan & Norman (1998) for a flat universe, see
    :func:`virial_overdensity`.

Masses are in Msun, radii in kpc, densities in Msun / kpc^3.  The definition
strings are static Python arguments (not traced); everything else is JAX
float64, works on scalars or broadcasting arrays, and is differentiable.
"""

from __future__ import annotations

import functools
import math
import re

import jax
import jax.numpy as jnp

from lensinfer.cosmology import Cosmology
from lensinfer.halo._common import as_float64, newton_root, resolve_cosmology

__all__ = [
    "convert_mass",
    "mass_from_radius",
    "overdensity",
    "radius_from_mass",
    "virial_overdensity",
]

_DEFINITION_PATTERN = re.compile(r"^(\d+(?:\.\d+)?)([cm])$")
_ACCEPTED = (
    "'vir' (Bryan & Norman 1998), '<N>c' (N times the critical density, e.g. '200c', "
    "'500c') or '<N>m' (N times the mean matter density, e.g. '200m')"
)

# Newton steps in ln c for the concentration of the new definition.  Starting from
# the old concentration, 5 steps reach |delta ln c| < 1e-13 for 0.3 <= c <= 100 and
# overdensity ratios between 1/20 and 20 (measured while writing this module;
# tests/halo/test_mass_definition.py checks the result against a scipy root find).
# One more, gradient-carrying, step is taken by newton_root.
_N_NEWTON = 6


def _parse_definition(definition: str) -> tuple[str, float]:
    """Split a definition string into (kind, factor); kind is 'c', 'm' or 'vir'."""
    if definition == "vir":
        return "vir", math.nan
    match = _DEFINITION_PATTERN.match(definition) if isinstance(definition, str) else None
    if match is None or float(match.group(1)) <= 0.0:
        raise ValueError(f"unknown halo mass definition {definition!r}; accepted: {_ACCEPTED}")
    return match.group(2), float(match.group(1))


def _nfw_mass_shape(x):
    r"""Dimensionless NFW enclosed mass :math:`m(x) = \ln(1+x) - x/(1+x)`.

    :math:`M(<r) = 4\pi\rho_s r_s^3\,m(r/r_s)` (Navarro, Frenk & White 1997).
    Loses about two digits to cancellation near x = 0.1 and more below; fine for
    the concentrations used here (x >= 0.3).
    """
    return jnp.log1p(x) - x / (1.0 + x)


def virial_overdensity(z, cosmology: Cosmology | None = None):
    r"""Virial overdensity relative to the critical density (Bryan & Norman 1998).

    .. math::

        \Delta_{\rm vir}(z) = 18\pi^2 + 82\,x - 39\,x^2,
        \qquad x = \Omega_m(z) - 1 ,

    the fit to the spherical top-hat collapse in a flat universe with a
    cosmological constant.  It tends to :math:`18\pi^2 \approx 177.7` as
    :math:`\Omega_m \to 1` and is about 100 at z = 0 for :math:`\Omega_m = 0.3`.

    Parameters
    ----------
    z : float or array
        Redshift.
    cosmology : Cosmology, optional
        Defaults to Planck18.  :math:`\Omega_m(z)` is taken from
        :meth:`Cosmology.omega_m`; the flat-universe form is used whatever the
        curvature (Bryan & Norman give a different fit for open universes
        without a cosmological constant).

    Returns
    -------
    array
        :math:`\Delta_{\rm vir}` in units of the critical density.

    References
    ----------
    Bryan, G. L. & Norman, M. L. 1998, ApJ, 495, 80, eq. 6.
    """
    return _overdensity(as_float64(z), resolve_cosmology(cosmology), definition="vir")


def overdensity(definition: str, z, cosmology: Cosmology | None = None):
    r"""Overdensity :math:`\Delta` of a mass definition, in units of :math:`\rho_c(z)`.

    Parameters
    ----------
    definition : str
        ``"vir"``, ``"<N>c"`` (e.g. ``"200c"``, ``"500c"``) or ``"<N>m"``
        (e.g. ``"200m"``, meaning :math:`\Delta = N\,\Omega_m(z)`).
    z : float or array
        Redshift.
    cosmology : Cosmology, optional
        Defaults to Planck18.

    Returns
    -------
    array
        :math:`\Delta` relative to the critical density at z.

    Raises
    ------
    ValueError
        For a definition string not of the accepted forms.

    References
    ----------
    Bryan, G. L. & Norman, M. L. 1998, ApJ, 495, 80, eq. 6 (``"vir"``).
    """
    _parse_definition(definition)
    return _overdensity(as_float64(z), resolve_cosmology(cosmology), definition=definition)


# The public functions validate their static strings and convert units eagerly,
# then call jitted cores: an un-jitted call compiles one small program per input
# shape instead of dispatching (and compiling) every operation separately.  Inside
# a user's jax.jit the cores are simply inlined.
@functools.partial(jax.jit, static_argnames="definition")
def _overdensity(z, cosmology: Cosmology, *, definition: str):
    kind, factor = _parse_definition(definition)
    if kind == "vir":
        # Bryan & Norman (1998), eq. 6 (flat universe).
        x = cosmology.omega_m(z) - 1.0
        return 18.0 * math.pi**2 + 82.0 * x - 39.0 * x**2
    if kind == "m":
        return factor * cosmology.omega_m(z)
    return jnp.full_like(z, factor)


def radius_from_mass(mass, z, definition: str = "200c", cosmology: Cosmology | None = None):
    r"""Halo radius :math:`r_\Delta` in kpc from the mass :math:`M_\Delta` in Msun.

    .. math:: r_\Delta = \left[\frac{3 M_\Delta}{4\pi\,\Delta\,\rho_c(z)}\right]^{1/3}

    Parameters
    ----------
    mass : float, array or Quantity
        :math:`M_\Delta` in Msun (a Quantity is converted).
    z : float or array
        Redshift.
    definition : str, default "200c"
        Mass definition (see :func:`overdensity`).
    cosmology : Cosmology, optional
        Defaults to Planck18.

    Returns
    -------
    array
        :math:`r_\Delta` in kpc.
    """
    _parse_definition(definition)
    return _radius_from_mass(
        as_float64(mass, "Msun"), as_float64(z), resolve_cosmology(cosmology), definition=definition
    )


@functools.partial(jax.jit, static_argnames="definition")
def _radius_from_mass(mass, z, cosmology: Cosmology, *, definition: str):
    density = _overdensity(z, cosmology, definition=definition) * cosmology.critical_density(z)
    return jnp.cbrt(3.0 * mass / (4.0 * math.pi * density))


def mass_from_radius(radius, z, definition: str = "200c", cosmology: Cosmology | None = None):
    r"""Halo mass :math:`M_\Delta` in Msun from the radius :math:`r_\Delta` in kpc.

    .. math:: M_\Delta = \frac{4\pi}{3}\,\Delta\,\rho_c(z)\,r_\Delta^3

    Parameters
    ----------
    radius : float, array or Quantity
        :math:`r_\Delta` in kpc (a Quantity is converted).
    z : float or array
        Redshift.
    definition : str, default "200c"
        Mass definition (see :func:`overdensity`).
    cosmology : Cosmology, optional
        Defaults to Planck18.

    Returns
    -------
    array
        :math:`M_\Delta` in Msun.
    """
    _parse_definition(definition)
    radius = as_float64(radius, "kpc")
    cosmology = resolve_cosmology(cosmology)
    return _mass_from_radius(radius, as_float64(z), cosmology, definition=definition)


@functools.partial(jax.jit, static_argnames="definition")
def _mass_from_radius(radius, z, cosmology: Cosmology, *, definition: str):
    density = _overdensity(z, cosmology, definition=definition) * cosmology.critical_density(z)
    return 4.0 * math.pi / 3.0 * density * radius**3


def _log_overdensity_ratio(from_: str, to: str, z, cosmology: Cosmology):
    """ln(Delta_to / Delta_from) at redshift z."""
    return jnp.log(_overdensity(z, cosmology, definition=to)) - jnp.log(
        _overdensity(z, cosmology, definition=from_)
    )


def _log_mass_slope(x):
    r"""Logarithmic slope :math:`d\ln m / d\ln x = x^2 / [(1+x)^2 m(x)]` of the NFW mass."""
    return x**2 / ((1.0 + x) ** 2 * _nfw_mass_shape(x))


def _concentration_residual(log_c_new, log_c_old, log_ratio):
    """ln[m(c')/c'^3] - ln[m(c)/c^3] - ln(Delta'/Delta); zero at the new concentration."""
    c_new = jnp.exp(log_c_new)
    c_old = jnp.exp(log_c_old)
    return (
        jnp.log(_nfw_mass_shape(c_new))
        - 3.0 * log_c_new
        - jnp.log(_nfw_mass_shape(c_old))
        + 3.0 * log_c_old
        - log_ratio
    )


def _concentration_residual_and_slope(log_c_new, log_c_old, log_ratio):
    """The residual and its derivative in ln c', gamma(c') - 3 (between -3 and -1)."""
    residual = _concentration_residual(log_c_new, log_c_old, log_ratio)
    return residual, _log_mass_slope(jnp.exp(log_c_new)) - 3.0


@jax.jit
def _convert_nfw(mass, concentration, log_ratio):
    """(mass, concentration) of the same NFW halo at an overdensity exp(log_ratio) times higher.

    Internal core of :func:`convert_mass`, taking the precomputed
    ln(Delta_to / Delta_from) so callers that iterate can reuse it.  Jitted so that
    eager (un-jitted) calls do not re-trace the Newton loop each time; inside an
    outer ``jax.jit`` it is simply inlined.
    """
    log_c = jnp.log(concentration)
    log_c_new = newton_root(_concentration_residual_and_slope, log_c, (log_c, log_ratio), _N_NEWTON)
    c_new = jnp.exp(log_c_new)
    mass_new = mass * _nfw_mass_shape(c_new) / _nfw_mass_shape(concentration)
    return mass_new, jnp.broadcast_to(c_new, mass_new.shape)


def convert_mass(
    mass,
    concentration,
    z,
    *,
    from_: str,
    to: str,
    cosmology: Cosmology | None = None,
) -> tuple[jax.Array, jax.Array]:
    r"""Mass and concentration of an NFW halo in another overdensity definition.

    The same NFW density profile (same :math:`\rho_s`, :math:`r_s`) is
    described by :math:`(M_\Delta, c_\Delta = r_\Delta/r_s)` in the old
    definition and :math:`(M_{\Delta'}, c_{\Delta'})` in the new one.  Because
    :math:`M(<r) \propto m(r/r_s)` with :math:`m(x) = \ln(1+x) - x/(1+x)`, the
    new concentration solves

    .. math::

        \frac{m(c_{\Delta'})}{c_{\Delta'}^3}
            = \frac{\Delta'}{\Delta}\,\frac{m(c_\Delta)}{c_\Delta^3},
        \qquad
        M_{\Delta'} = M_\Delta\,\frac{m(c_{\Delta'})}{m(c_\Delta)} .

    The root is found by Newton's method in :math:`\ln c` from the old
    concentration (a fixed number of steps, enough for machine precision for
    :math:`0.3 \le c \le 100` and overdensity ratios up to 20), followed by one
    gradient-carrying step from the converged iterate so that derivatives are
    those of the implicit function theorem, exact and finite.  Works under
    ``jax.jit`` and ``jax.vmap``; inputs broadcast.

    Parameters
    ----------
    mass : float, array or Quantity
        :math:`M_\Delta` in Msun in the definition ``from_``.
    concentration : float or array
        :math:`c_\Delta = r_\Delta / r_s` in the definition ``from_``.
    z : float or array
        Redshift of the halo (both overdensities are taken at this redshift).
    from_, to : str
        Mass definitions (``"200c"``, ``"500c"``, ``"200m"``, ``"vir"``, ...;
        see :func:`overdensity`).  Static strings.
    cosmology : Cosmology, optional
        Defaults to Planck18.

    Returns
    -------
    mass : array
        :math:`M_{\Delta'}` in Msun.
    concentration : array
        :math:`c_{\Delta'}`.

    References
    ----------
    Navarro, J. F., Frenk, C. S. & White, S. D. M. 1997, ApJ, 490, 493 (profile).
    Bryan, G. L. & Norman, M. L. 1998, ApJ, 495, 80, eq. 6 (virial overdensity).

    Examples
    --------
    >>> m_vir, c_vir = convert_mass(1e13, 6.0, 0.5, from_="200c", to="vir")
    """
    _parse_definition(from_)
    _parse_definition(to)
    return _convert_mass(
        as_float64(mass, "Msun"),
        as_float64(concentration),
        as_float64(z),
        resolve_cosmology(cosmology),
        from_=from_,
        to=to,
    )


@functools.partial(jax.jit, static_argnames=("from_", "to"))
def _convert_mass(mass, concentration, z, cosmology: Cosmology, *, from_: str, to: str):
    if from_ == to:
        shape = jnp.broadcast_shapes(mass.shape, concentration.shape, z.shape)
        return jnp.broadcast_to(mass, shape), jnp.broadcast_to(concentration, shape)
    log_ratio = _log_overdensity_ratio(from_, to, z, cosmology)
    return _convert_nfw(mass, concentration, log_ratio)
