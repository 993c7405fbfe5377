r"""Concentration–mass relations of dark-matter-only NFW haloes, with their scatter.

Each relation is the published fit for the median NFW concentration as a function
of halo mass and redshift, evaluated in the mass definition it was fitted in.
:func:`concentration` always takes :math:`M_{200c}` and returns the median
:math:`c_{200c}`; for relations fitted in the virial definition
(Bryan & Norman 1998) it solves for the NFW halo whose virial mass and
concentration lie on the fit and whose :math:`M_{200c}` is the one given.

Relations (static names):

``"duffy08"``
    Duffy et al. (2008), Table 1, NFW, full sample, :math:`0 \le z \le 2`,
    :math:`\Delta = 200` (critical):
    :math:`c = A\,(M / M_{\rm piv})^B (1+z)^C`, A = 5.71, B = -0.084,
    C = -0.47, :math:`M_{\rm piv} = 2\times10^{12}\,h^{-1}` Msun.
``"duffy08_vir"``
    The same table, :math:`\Delta_{\rm vir}` row: A = 7.85, B = -0.081, C = -0.71.
``"dutton14"``
    Dutton & Macciò (2014), eq. 7, NFW, :math:`\Delta = 200` (critical):
    :math:`\log_{10} c = a + b \log_{10}[M / (10^{12} h^{-1} {\rm Msun})]` with
    :math:`b = -0.101 + 0.026 z`,
    :math:`a = 0.520 + (0.905 - 0.520) \exp(-0.617 z^{1.21})`.
``"dutton14_vir"``
    Dutton & Macciò (2014), eq. 8, NFW, virial: :math:`b = -0.097 + 0.024 z`,
    :math:`a = 0.537 + (1.025 - 0.537) \exp(-0.718 z^{1.08})`.

The relations' pivots are in :math:`h^{-1}` Msun; the ``h`` used to convert our
Msun masses is the one of the cosmology passed in (Planck18 by default).  The
fits are otherwise used as published, for the cosmology of the simulations they
came from (each paper's own; Dutton & Macciò's is close to the default Planck18);
outside their fitted mass and redshift ranges (Duffy et al.: 1e11-1e15 h^-1 Msun,
z <= 2; Dutton & Macciò: z <= 5) they are extrapolations.
"""

from __future__ import annotations

import dataclasses
import functools
import math
from collections.abc import Callable

import jax
import jax.numpy as jnp

from lensinfer.cosmology import Cosmology
from lensinfer.halo._common import as_float64, normal_logpdf, resolve_cosmology
from lensinfer.halo.mass_definition import (
    _log_mass_slope,
    _log_overdensity_ratio,
    _nfw_mass_shape,
)

__all__ = [
    "CONCENTRATION_RELATIONS",
    "concentration",
    "concentration_log_prior",
    "concentration_scatter_dex",
]

_LN10 = math.log(10.0)

# Joint Newton steps in (ln c200c, ln c_fit) for relations fitted in another
# definition.  The system is nearly linear (the relations are shallow power laws):
# from the starting guess below one step already agreed with six to 1e-15 for
# 1e10-1e16 Msun and z = 0-5 (measured while writing this module); four leave a
# wide margin.  One more, gradient-carrying, step follows.
_N_NEWTON_FIT = 4


@dataclasses.dataclass(frozen=True)
class _ConcentrationFit:
    """A published c(M, z) fit: its definition, scatters and median log10 c.

    ``scatter_all_dex`` is the scatter of all haloes at fixed mass,
    ``scatter_relaxed_dex`` that of relaxed ones.

    ``log10_median(log10_mass_h, z)`` takes log10 of the mass in h^-1 Msun in the
    fit's own definition and returns log10 of the median concentration in it.
    """

    name: str
    definition: str
    scatter_all_dex: float
    scatter_relaxed_dex: float
    log10_median: Callable[[jax.Array, jax.Array], jax.Array]


# ---------------------------------------------------------------- Duffy et al. 2008
# Duffy, Schaye, Kay & Dalla Vecchia 2008, MNRAS 390, L64, Table 1, rows "NFW,
# z = 0-2, Full": Delta_200 A = 5.71, B = -0.084, C = -0.47; Delta_vir A = 7.85,
# B = -0.081, C = -0.71; pivot 2e12 h^-1 Msun.  Coefficients from memory of the
# table (they are the widely reproduced values); the 200c row is the one the
# project brief also quotes.  Scatter: sigma(log10 c) = 0.15 for the full sample
# (0.11 for relaxed haloes), from memory of their section 3.
_DUFFY_LOG10_PIVOT = math.log10(2.0e12)


def _duffy(a: float, b: float, c: float):
    def log10_median(log10_mass_h, z):
        return math.log10(a) + b * (log10_mass_h - _DUFFY_LOG10_PIVOT) + c * jnp.log10(1.0 + z)

    return log10_median


# ------------------------------------------------------------ Dutton & Maccio 2014
# Dutton & Macciò 2014, MNRAS 441, 3359, eqs. 7 (NFW, 200c) and 8 (NFW, virial),
# fitted to relaxed haloes for 0 <= z <= 5 in a cosmology close to Planck18.  The 200c
# coefficients agree with the project brief; the virial ones are from memory.
# Scatter: about 0.11 dex in log10 c at fixed mass (relaxed haloes), from memory.
# They fit relaxed haloes only; for all haloes we take the full-sample scatter of
# Duffy et al. (2008), 0.15 dex, whose relaxed value (0.11) agrees with theirs.
def _dutton(a_inf: float, a_0: float, a_rate: float, a_power: float, b_0: float, b_z: float):
    def log10_median(log10_mass_h, z):
        a = a_inf + (a_0 - a_inf) * jnp.exp(-a_rate * z**a_power)
        b = b_0 + b_z * z
        return a + b * (log10_mass_h - 12.0)

    return log10_median


_FITS: dict[str, _ConcentrationFit] = {
    fit.name: fit
    for fit in (
        _ConcentrationFit("duffy08", "200c", 0.15, 0.11, _duffy(5.71, -0.084, -0.47)),
        _ConcentrationFit("duffy08_vir", "vir", 0.15, 0.11, _duffy(7.85, -0.081, -0.71)),
        _ConcentrationFit(
            "dutton14", "200c", 0.15, 0.11, _dutton(0.520, 0.905, 0.617, 1.21, -0.101, 0.026)
        ),
        _ConcentrationFit(
            "dutton14_vir", "vir", 0.15, 0.11, _dutton(0.537, 1.025, 0.718, 1.08, -0.097, 0.024)
        ),
    )
}

#: Names accepted by ``relation=`` in :func:`concentration`.
CONCENTRATION_RELATIONS: tuple[str, ...] = tuple(_FITS)


def _lookup(relation: str) -> _ConcentrationFit:
    try:
        return _FITS[relation]
    except (KeyError, TypeError):
        raise ValueError(
            f"unknown concentration-mass relation {relation!r}; accepted: "
            + ", ".join(repr(name) for name in CONCENTRATION_RELATIONS)
        ) from None


def _joint_residual_and_jacobian(log_c200c, log_c_fit, log10_m200c_h, z, log_ratio, log10_median):
    r"""Residuals of the two conditions on (ln c200c, ln c_fit) and their Jacobian.

    :math:`E_1 = \ln[m(c_{\rm fit})/c_{\rm fit}^3] - \ln[m(c_{200c})/c_{200c}^3]
    - \ln(\Delta_{\rm fit}/200)` (same NFW halo) and
    :math:`E_2 = \ln c_{\rm fit} - \ln 10\,\log_{10}\bar c(M_{\rm fit})` with
    :math:`\log_{10} M_{\rm fit} = \log_{10} M_{200c} + \log_{10}[m(c_{\rm fit})/m(c_{200c})]`
    (on the fit).  With :math:`\gamma = d\ln m/d\ln x`, :math:`s = 3 - \gamma` and the
    relation's local slope :math:`\beta = d\log_{10}\bar c/d\log_{10} M`:

    .. math::

        J = \begin{pmatrix} s(c_{200c}) & -s(c_{\rm fit}) \
            \beta\,\gamma(c_{200c}) & 1 - \beta\,\gamma(c_{\rm fit}) \end{pmatrix} .
    """
    c200c = jnp.exp(log_c200c)
    c_fit = jnp.exp(log_c_fit)
    ln_m_200c = jnp.log(_nfw_mass_shape(c200c))
    ln_m_fit = jnp.log(_nfw_mass_shape(c_fit))
    e1 = ln_m_fit - 3.0 * log_c_fit - ln_m_200c + 3.0 * log_c200c - log_ratio
    log10_m_fit_h = log10_m200c_h + (ln_m_fit - ln_m_200c) / _LN10
    log10_c_median, beta = jax.jvp(
        lambda lm: log10_median(lm, z), (log10_m_fit_h,), (jnp.ones_like(log10_m_fit_h),)
    )
    e2 = log_c_fit - _LN10 * log10_c_median
    gamma_200c = _log_mass_slope(c200c)
    gamma_fit = _log_mass_slope(c_fit)
    jacobian = (3.0 - gamma_200c, gamma_fit - 3.0, beta * gamma_200c, 1.0 - beta * gamma_fit)
    return (e1, e2), jacobian


def _newton_step_2x2(residual, jacobian):
    """Newton correction (du, dv) = -J^-1 E for elementwise 2x2 systems (Cramer's rule)."""
    (e1, e2), (j11, j12, j21, j22) = residual, jacobian
    det = j11 * j22 - j12 * j21
    return (-(e1 * j22 - e2 * j12) / det, -(e2 * j11 - e1 * j21) / det)


def _c200c_from_other_definition(m200c, z, h, log_ratio, *, relation):
    r"""Median c200c for a relation fitted in another definition.

    Solves the two conditions of :func:`_joint_residual_and_jacobian` for
    (ln c200c, ln c_fit) together by Newton's method - one loop, no nested root
    find - then takes one gradient-carrying step from the gradient-stopped root
    with the Jacobian held fixed, so derivatives are the implicit function
    theorem's, :math:`-J^{-1}\partial_\theta E`.  ``log_ratio`` is
    ln(Delta_fit / Delta_200c) at z.
    """
    log10_median = _FITS[relation].log10_median
    log10_m200c_h = jnp.log10(m200c * h)
    params = (log10_m200c_h, z, log_ratio)
    shape = jnp.broadcast_shapes(*(jnp.shape(p) for p in params))
    stopped = tuple(jax.lax.stop_gradient(jnp.broadcast_to(p, shape)) for p in params)

    def system(u, v, args):
        return _joint_residual_and_jacobian(u, v, *args, log10_median)

    # Start: the fit's concentration at M_fit = M200c, and c200c from one Newton
    # step of the same-halo condition alone (E1 with ln c_fit held).
    v0 = _LN10 * log10_median(stopped[0], stopped[1])
    u0 = v0 + stopped[2] / (3.0 - _log_mass_slope(jnp.exp(v0)))

    def step(_, uv):
        du, dv = _newton_step_2x2(*system(uv[0], uv[1], stopped))
        return (uv[0] + du, uv[1] + dv)

    u_star, v_star = jax.lax.stop_gradient(jax.lax.fori_loop(0, _N_NEWTON_FIT, step, (u0, v0)))
    residual, jacobian = system(u_star, v_star, params)
    du, _ = _newton_step_2x2(residual, jax.lax.stop_gradient(jacobian))
    return jnp.exp(u_star + du)


def concentration(
    m200c,
    z,
    relation: str = "dutton14",
    cosmology: Cosmology | None = None,
):
    r"""Median NFW concentration :math:`c_{200c}` at fixed :math:`M_{200c}` and redshift.

    For a relation fitted in the 200c definition this is the published fit
    itself (module docstring).  For one fitted in the virial definition the
    returned :math:`c_{200c}` is the root of

    .. math::

        c_{\rm vir}(M_{200c}, c_{200c}) =
            c_{\rm fit}\!\left[M_{\rm vir}(M_{200c}, c_{200c}), z\right],

    where :math:`(M_{\rm vir}, c_{\rm vir})` describe the same NFW halo
    (:func:`~lensinfer.halo.convert_mass`), so the halo lies exactly on the
    published relation in the definition it was fitted in.
    :math:`(\ln c_{200c}, \ln c_{\rm vir})` are found together by Newton's
    method (a fixed number of steps, no nested root find), with exact implicit
    gradients.

    Parameters
    ----------
    m200c : float, array or Quantity
        :math:`M_{200c}` in Msun.
    z : float or array
        Redshift of the halo (the lens redshift).
    relation : str, default "dutton14"
        One of :data:`CONCENTRATION_RELATIONS`: ``"dutton14"``,
        ``"dutton14_vir"``, ``"duffy08"``, ``"duffy08_vir"``.  Static.
    cosmology : Cosmology, optional
        Defaults to Planck18.  Supplies h for the :math:`h^{-1}` Msun pivots
        and the overdensities for the virial relations.

    Returns
    -------
    array
        Median :math:`c_{200c}`.  The log-normal scatter about it is
        :func:`concentration_scatter_dex`.

    Raises
    ------
    ValueError
        For an unknown relation name.

    References
    ----------
    Duffy, A. R., Schaye, J., Kay, S. T. & Dalla Vecchia, C. 2008, MNRAS, 390,
    L64, Table 1.
    Dutton, A. A. & Macciò, A. V. 2014, MNRAS, 441, 3359, eqs. 7 and 8.
    Bryan, G. L. & Norman, M. L. 1998, ApJ, 495, 80, eq. 6.
    """
    _lookup(relation)
    return _concentration(
        as_float64(m200c, "Msun"), as_float64(z), resolve_cosmology(cosmology), relation=relation
    )


# Jitted core (validation and unit conversion stay outside): an un-jitted call
# compiles once per input shape instead of dispatching every operation.
@functools.partial(jax.jit, static_argnames="relation")
def _concentration(m200c, z, cosmology: Cosmology, *, relation: str):
    fit = _lookup(relation)
    h = cosmology.h0 / 100.0
    if fit.definition == "200c":
        return 10.0 ** fit.log10_median(jnp.log10(m200c * h), z)
    log_ratio = _log_overdensity_ratio("200c", fit.definition, z, cosmology)
    return _c200c_from_other_definition(m200c, z, h, log_ratio, relation=relation)


#: Halo populations whose scatter :func:`concentration_scatter_dex` knows.
HALO_POPULATIONS = ("all", "relaxed")


def concentration_scatter_dex(relation: str = "dutton14", population: str = "all") -> float:
    r"""Published scatter :math:`\sigma(\log_{10} c)` of a relation at fixed mass, in dex.

    ``population="all"`` (the default: a lens galaxy is not selected for a
    relaxed halo): 0.15 for every relation — Duffy et al. (2008, full sample);
    Dutton & Macciò (2014) fitted relaxed haloes only, so their all-halo
    scatter is taken from Duffy et al., whose relaxed value agrees with theirs.
    ``population="relaxed"``: 0.11 (Duffy et al. 2008 relaxed sample; Dutton &
    Macciò 2014).  Values from memory.  For the virial relations the same scatter is used for
    :math:`\log_{10} c_{200c}`: at fixed mass the conversion changes
    :math:`\log c` by a nearly constant amount, so the width carries over.

    Raises
    ------
    ValueError
        For an unknown relation name or population.
    """
    fit = _lookup(relation)
    if population == "all":
        return fit.scatter_all_dex
    if population == "relaxed":
        return fit.scatter_relaxed_dex
    raise ValueError(
        f"unknown halo population {population!r}; accepted: {', '.join(HALO_POPULATIONS)}"
    )


def concentration_log_prior(
    log10_c200c,
    m200c,
    z,
    relation: str = "dutton14",
    cosmology: Cosmology | None = None,
    population: str = "all",
):
    r"""Log-normal prior density of :math:`\log_{10} c_{200c}` given the halo mass.

    .. math::

        \ln p(\log_{10} c) = -\frac{(\log_{10} c - \log_{10} \bar c)^2}{2\sigma^2}
            - \ln(\sigma\sqrt{2\pi}),

    with the median :math:`\bar c` of :func:`concentration` and the scatter
    :math:`\sigma` of :func:`concentration_scatter_dex`.

    Parameters
    ----------
    log10_c200c : float or array
        :math:`\log_{10} c_{200c}`.
    m200c : float, array or Quantity
        :math:`M_{200c}` in Msun.
    z : float or array
        Redshift.
    relation : str, default "dutton14"
        See :func:`concentration`.
    cosmology : Cosmology, optional
        Defaults to Planck18.
    population : {"all", "relaxed"}
        Which haloes' scatter (see :func:`concentration_scatter_dex`).

    Returns
    -------
    array
        Log density per dex of concentration.
    """
    sigma = concentration_scatter_dex(relation, population)
    mean = jnp.log10(concentration(m200c, z, relation, cosmology))
    return normal_logpdf(as_float64(log10_c200c), mean, sigma)
