r"""Stellar-to-halo mass relations of central galaxies, with their scatter.

**Which stellar mass.**  These relations come from abundance matching against
stellar mass functions whose masses were derived from SEDs with a Chabrier-like
reference IMF (Chabrier 2003).  They therefore predict the *reference-IMF*
stellar mass :math:`M_{*,\rm ref}` that an SED fit returns, not the true
stellar mass :math:`M_* = \alpha_{\rm IMF} M_{*,\rm ref}` of a galaxy whose IMF
may differ.  A prior built from them constrains :math:`M_{*,\rm ref}` given the
halo; :math:`\alpha_{\rm IMF}` stays free, to be measured by lensing and
dynamics (see :func:`stellar_mass_log_prior`).  If the SED masses use another
reference IMF, bring them to the Chabrier scale first.

Relations (static names):

``"moster13"``
    Moster, Naab & White (2013), eq. 2 with the redshift evolution of
    eqs. 11–14 and the best-fitting parameters of Table 1; halo masses
    :math:`M_{200c}`; scatter 0.15 dex in :math:`\log_{10} M_*` at fixed halo
    mass.
``"behroozi13"``
    Behroozi, Wechsler & Conroy (2013), eqs. 3–4 with the best-fitting
    parameters of their section 5; halo masses are virial (Bryan & Norman
    1998), so :math:`M_{200c}` is converted to :math:`M_{\rm vir}` for an NFW
    halo (:func:`~lensinfer.halo.convert_mass`) with a concentration from a
    concentration–mass relation unless one is given; scatter
    :math:`\xi(a) = 0.218 - 0.023 (a - 1)` dex.

Masses are in Msun as published, for the authors' own cosmologies (h = 0.704
for Moster et al., 0.7 for Behroozi et al.; from memory); the relations are not
rescaled to another cosmology.
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
from lensinfer.halo.concentration_mass import _lookup as _lookup_concentration
from lensinfer.halo.concentration_mass import concentration
from lensinfer.halo.mass_definition import convert_mass

__all__ = [
    "STELLAR_HALO_RELATIONS",
    "stellar_mass_from_halo",
    "stellar_mass_log_prior",
]

_LN10 = math.log(10.0)


@dataclasses.dataclass(frozen=True)
class _StellarHaloFit:
    """A published M*(M_halo, z) fit in its own halo mass definition.

    ``log10_mstar(log10_mhalo, z)`` maps log10 of the halo mass (Msun, in
    ``definition``) to log10 of the median reference-IMF stellar mass (Msun);
    ``scatter_dex(z)`` is the scatter in log10 M* at fixed halo mass.
    """

    name: str
    definition: str
    log10_mstar: Callable[[jax.Array, jax.Array], jax.Array]
    scatter_dex: Callable[[jax.Array], jax.Array]


# ---------------------------------------------------------- Moster, Naab & White 2013
# MNRAS 428, 3121.  Eq. 2: m/M = 2N [(M/M1)^-beta + (M/M1)^gamma]^-1; eqs. 11-14:
# X(z) = X10 + X11 z/(1+z) for log10 M1, N, beta, gamma; Table 1 best fit:
# log10 M10 = 11.590, M11 = 1.195, N10 = 0.0351, N11 = -0.0247, beta10 = 1.376,
# beta11 = -0.826, gamma10 = 0.608, gamma11 = 0.329.  Values from memory (they
# also match the project brief); the abstract's peak efficiency and peak halo mass
# at z = 0 and 4 follow from them (tests/halo/test_stellar_halo.py).  Halo mass:
# M200 with respect to the critical density; scatter 0.15 dex (from memory).
_MNW13 = dict(
    log10_m1=(11.590, 1.195),
    norm=(0.0351, -0.0247),
    beta=(1.376, -0.826),
    gamma=(0.608, 0.329),
)
_MNW13_SCATTER_DEX = 0.15


def _moster13_log10_mstar(log10_mhalo, z):
    w = z / (1.0 + z)
    log10_m1 = _MNW13["log10_m1"][0] + _MNW13["log10_m1"][1] * w
    norm = _MNW13["norm"][0] + _MNW13["norm"][1] * w
    beta = _MNW13["beta"][0] + _MNW13["beta"][1] * w
    gamma = _MNW13["gamma"][0] + _MNW13["gamma"][1] * w
    ln_x = _LN10 * (log10_mhalo - log10_m1)
    # ln[(M/M1)^-beta + (M/M1)^gamma] without overflow.
    ln_denominator = jnp.logaddexp(-beta * ln_x, gamma * ln_x)
    return log10_mhalo + jnp.log10(2.0 * norm) - ln_denominator / _LN10


def _moster13_scatter(z):
    return jnp.full_like(z, _MNW13_SCATTER_DEX)


# ------------------------------------------------------ Behroozi, Wechsler & Conroy 2013
# ApJ 770, 57.  Eq. 3: log10 M* = log10(eps M1) + f(log10(Mh/M1)) - f(0),
# f(x) = -log10(10^(alpha x) + 1) + delta [log10(1 + e^x)]^gamma / (1 + exp(10^-x)).
# Eq. 4, with a = 1/(1+z) and nu = exp(-4 a^2):
#   log10 M1 = M1_0 + (M1_a (a-1) + M1_z z) nu
#   log10 eps = eps_0 + (eps_a (a-1) + eps_z z) nu + eps_a2 (a-1)
#   alpha = alpha_0 + alpha_a (a-1) nu
#   delta = delta_0 + (delta_a (a-1) + delta_z z) nu
#   gamma = gamma_0 + (gamma_a (a-1) + gamma_z z) nu
# Best fit (section 5), from memory: M1 = (11.514, -1.793, -0.251);
# eps = (-1.777, -0.006, 0.000, -0.119); alpha = (-1.412, 0.731);
# delta = (3.508, 2.608, -0.043); gamma = (0.316, 1.319, 0.279); scatter
# xi = 0.218 - 0.023 (a - 1).  Halo masses: virial, Bryan & Norman (1998).
_BWC13 = dict(
    m1=(11.514, -1.793, -0.251),
    eps=(-1.777, -0.006, 0.000, -0.119),
    alpha=(-1.412, 0.731),
    delta=(3.508, 2.608, -0.043),
    gamma=(0.316, 1.319, 0.279),
    xi=(0.218, -0.023),
)


def _behroozi13_f(x, alpha, delta, gamma):
    # log10(10^(alpha x) + 1) and log10(1 + e^x) via logaddexp; 1/(1 + exp(10^-x))
    # as a sigmoid, so very low masses give 0 rather than inf/inf in gradients.
    first = -jnp.logaddexp(alpha * x * _LN10, 0.0) / _LN10
    softplus10 = jnp.logaddexp(x, 0.0) / _LN10
    second = delta * softplus10**gamma * jax.nn.sigmoid(-(10.0 ** (-x)))
    return first + second


def _behroozi13_log10_mstar(log10_mhalo, z):
    p = _BWC13
    a = 1.0 / (1.0 + z)
    nu = jnp.exp(-4.0 * a**2)
    log10_m1 = p["m1"][0] + (p["m1"][1] * (a - 1.0) + p["m1"][2] * z) * nu
    log10_eps = (
        p["eps"][0] + (p["eps"][1] * (a - 1.0) + p["eps"][2] * z) * nu + p["eps"][3] * (a - 1.0)
    )
    alpha = p["alpha"][0] + p["alpha"][1] * (a - 1.0) * nu
    delta = p["delta"][0] + (p["delta"][1] * (a - 1.0) + p["delta"][2] * z) * nu
    gamma = p["gamma"][0] + (p["gamma"][1] * (a - 1.0) + p["gamma"][2] * z) * nu
    x = log10_mhalo - log10_m1
    return (
        log10_eps
        + log10_m1
        + _behroozi13_f(x, alpha, delta, gamma)
        - _behroozi13_f(jnp.zeros_like(x), alpha, delta, gamma)
    )


def _behroozi13_scatter(z):
    a = 1.0 / (1.0 + z)
    return _BWC13["xi"][0] + _BWC13["xi"][1] * (a - 1.0)


_FITS: dict[str, _StellarHaloFit] = {
    fit.name: fit
    for fit in (
        _StellarHaloFit("moster13", "200c", _moster13_log10_mstar, _moster13_scatter),
        _StellarHaloFit("behroozi13", "vir", _behroozi13_log10_mstar, _behroozi13_scatter),
    )
}

#: Names accepted by ``relation=`` in :func:`stellar_mass_from_halo`.
STELLAR_HALO_RELATIONS: tuple[str, ...] = tuple(_FITS)


def _lookup(relation: str) -> _StellarHaloFit:
    try:
        return _FITS[relation]
    except (KeyError, TypeError):
        raise ValueError(
            f"unknown stellar-to-halo mass relation {relation!r}; accepted: "
            + ", ".join(repr(name) for name in STELLAR_HALO_RELATIONS)
        ) from None


def _log10_mstar_ref_and_scatter(m200c, z, relation, cosmology, c200c, concentration_relation):
    """Validate names and units eagerly, then call the jitted core."""
    _lookup(relation)
    _lookup_concentration(concentration_relation)
    return _log10_mstar_ref_and_scatter_jit(
        as_float64(m200c, "Msun"),
        as_float64(z),
        resolve_cosmology(cosmology),
        None if c200c is None else as_float64(c200c),
        relation=relation,
        concentration_relation=concentration_relation,
    )


@functools.partial(jax.jit, static_argnames=("relation", "concentration_relation"))
def _log10_mstar_ref_and_scatter_jit(
    m200c, z, cosmology: Cosmology, c200c, *, relation: str, concentration_relation: str
):
    fit = _lookup(relation)
    if fit.definition == "200c":
        m_halo = m200c
    else:
        if c200c is None:
            c200c = concentration(m200c, z, concentration_relation, cosmology)
        m_halo, _ = convert_mass(
            m200c, c200c, z, from_="200c", to=fit.definition, cosmology=cosmology
        )
    log10_mstar = fit.log10_mstar(jnp.log10(m_halo), z)
    scatter = jnp.broadcast_to(fit.scatter_dex(z), log10_mstar.shape)
    return log10_mstar, scatter


def stellar_mass_from_halo(
    m200c,
    z,
    relation: str = "moster13",
    cosmology: Cosmology | None = None,
    *,
    c200c=None,
    concentration_relation: str = "dutton14",
) -> tuple[jax.Array, jax.Array]:
    r"""Median reference-IMF stellar mass of a central galaxy given its halo, and the scatter.

    The relations were calibrated with Chabrier-like (reference-IMF) SED
    stellar masses, so the result is :math:`M_{*,\rm ref}`, the mass an SED fit
    with the reference IMF would give — **not** :math:`\alpha_{\rm IMF}
    M_{*,\rm ref}`.  Use it to constrain :math:`M_{*,\rm ref}`; leave the IMF
    factor to the lensing and dynamics.

    ``"moster13"`` (Moster, Naab & White 2013, eq. 2):

    .. math::

        \frac{M_*}{M_{200c}} = 2N(z)\left[\left(\frac{M_{200c}}{M_1(z)}\right)^{-\beta(z)}
            + \left(\frac{M_{200c}}{M_1(z)}\right)^{\gamma(z)}\right]^{-1},
        \quad X(z) = X_{10} + X_{11}\,\frac{z}{1+z} .

    ``"behroozi13"`` (Behroozi, Wechsler & Conroy 2013, eq. 3), in the virial
    mass:

    .. math::

        \log_{10} M_* = \log_{10}(\epsilon M_1)
            + f\!\left[\log_{10}(M_{\rm vir}/M_1)\right] - f(0),
        \quad
        f(x) = -\log_{10}(10^{\alpha x} + 1)
            + \delta\,\frac{[\log_{10}(1 + e^x)]^\gamma}{1 + \exp(10^{-x})} .

    Parameters
    ----------
    m200c : float, array or Quantity
        :math:`M_{200c}` in Msun.
    z : float or array
        Redshift (the lens redshift).
    relation : str, default "moster13"
        One of :data:`STELLAR_HALO_RELATIONS`: ``"moster13"``, ``"behroozi13"``.
        Static.
    cosmology : Cosmology, optional
        Defaults to Planck18; used only to convert to the virial mass.
    c200c : float or array, optional
        Concentration used for that conversion (for example a sampled one);
        by default the median of ``concentration_relation``.
    concentration_relation : str, default "dutton14"
        See :func:`~lensinfer.halo.concentration`.

    Returns
    -------
    mstar_ref : array
        Median :math:`M_{*,\rm ref}` in Msun (Chabrier-like IMF).
    scatter_dex : array
        Scatter in :math:`\log_{10} M_{*,\rm ref}` at fixed halo mass, in dex
        (same shape as ``mstar_ref``).

    Raises
    ------
    ValueError
        For an unknown relation name.

    References
    ----------
    Moster, B. P., Naab, T. & White, S. D. M. 2013, MNRAS, 428, 3121, eqs. 2 and
    11–14, Table 1.
    Behroozi, P. S., Wechsler, R. H. & Conroy, C. 2013, ApJ, 770, 57, eqs. 3–4.
    Chabrier, G. 2003, PASP, 115, 763 (reference IMF).
    """
    log10_mstar, scatter = _log10_mstar_ref_and_scatter(
        m200c, z, relation, cosmology, c200c, concentration_relation
    )
    return 10.0**log10_mstar, scatter


def stellar_mass_log_prior(
    log10_mstar_ref,
    m200c,
    z,
    relation: str = "moster13",
    cosmology: Cosmology | None = None,
    *,
    c200c=None,
    concentration_relation: str = "dutton14",
):
    r"""Log prior density of the reference-IMF stellar mass given the halo.

    .. math::

        \ln p(\log_{10} M_{*,\rm ref} \mid M_{200c}, z)
            = -\frac{[\log_{10} M_{*,\rm ref} - \mu(M_{200c}, z)]^2}{2\sigma^2}
            - \ln(\sigma\sqrt{2\pi}),

    with the median :math:`\mu` and scatter :math:`\sigma` of
    :func:`stellar_mass_from_halo`.  The argument is the reference-IMF mass
    :math:`\log_{10} M_{*,\rm ref}` (Chabrier-like), because that is what the
    relations were calibrated on; the true stellar mass
    :math:`\alpha_{\rm IMF} M_{*,\rm ref}` must not be passed here.

    Parameters
    ----------
    log10_mstar_ref : float or array
        :math:`\log_{10}(M_{*,\rm ref} / {\rm Msun})`.
    m200c, z, relation, cosmology, c200c, concentration_relation
        As in :func:`stellar_mass_from_halo`.

    Returns
    -------
    array
        Log density per dex of :math:`M_{*,\rm ref}`.
    """
    mean, sigma = _log10_mstar_ref_and_scatter(
        m200c, z, relation, cosmology, c200c, concentration_relation
    )
    return normal_logpdf(as_float64(log10_mstar_ref), mean, sigma)
