r"""Priors on the IMF mass factor and the mass-to-light gradient.

The stellar mass of a lens is :math:`M_* = \alpha_{\rm IMF}\,M_{*,\rm ref}`
with :math:`M_{*,\rm ref}` from SED fitting under a reference IMF (Chabrier
2003 unless stated).  The sampled parameter is
``log10_alpha_imf`` = :math:`\log_{10}\alpha_{\rm IMF}` (dimensionless), with
an optional mass-to-light gradient exponent ``eta_ml`` (dimensionless, see
:func:`lensinfer.stellar.mass_to_light_gradient`).

The objects here are plain descriptions (no numpyro): each one-dimensional
prior gives its log density, its inverse CDF from the unit interval (the
transform nested samplers need) and its median (a safe starting point for
NUTS).  The model layer turns them into numpyro distributions.
"""

from __future__ import annotations

import dataclasses
import math

import jax
import jax.numpy as jnp
from jax.scipy.special import ndtri

from lensinfer.stellar._integrals import as_float
from lensinfer.stellar.gradient import mass_to_light_gradient
from lensinfer.stellar.imf import (
    BrokenPowerLawIMF,
    LognormalPowerLawIMF,
    PowerLawIMF,
    get_imf,
)
from lensinfer.stellar.mass_factor import imf_mass_factor

__all__ = ["PRIOR_KINDS", "MassToLightPrior", "ScalarPrior", "mass_to_light_prior"]

#: The kinds of one-dimensional prior.
PRIOR_KINDS: tuple[str, ...] = ("fixed", "uniform", "normal")

_HALF_LOG_2PI = 0.5 * math.log(2.0 * math.pi)


def _concrete_float(x, what: str):
    """float(x) for validation, or None when x is a tracer (no check then)."""
    try:
        value = float(x)
    except TypeError:  # a JAX tracer (ConcretizationTypeError is a TypeError)
        return None
    if not math.isfinite(value):
        raise ValueError(f"{what} must be a finite number, got {x!r}")
    return value


@jax.tree_util.register_dataclass
@dataclasses.dataclass(frozen=True)
class ScalarPrior:
    r"""A one-dimensional prior: fixed, uniform or normal.

    Parametrised like ``scipy.stats``: ``loc`` and ``scale`` are

    ============ ====================== =======================
    kind         loc                    scale
    ============ ====================== =======================
    ``fixed``    the value              0
    ``uniform``  lower bound            width (upper - lower)
    ``normal``   mean                   standard deviation
    ============ ====================== =======================

    Build with :meth:`fixed`, :meth:`uniform` or :meth:`normal`, which check
    their arguments.  ``kind`` is a static field; ``loc`` and ``scale`` are
    data (pytree leaves).

    Attributes
    ----------
    kind : str
        ``"fixed"``, ``"uniform"`` or ``"normal"``.
    loc, scale : float
        See the table.
    """

    kind: str = dataclasses.field(metadata=dict(static=True))
    loc: jax.Array
    scale: jax.Array

    # ----------------------------------------------------------- builders
    @classmethod
    def fixed(cls, value) -> ScalarPrior:
        """A delta function at ``value``."""
        _concrete_float(value, "a fixed prior's value")
        return cls("fixed", as_float(value), as_float(0.0))

    @classmethod
    def uniform(cls, low, high) -> ScalarPrior:
        """Uniform on [low, high]; needs low < high."""
        lo, hi = _concrete_float(low, "low"), _concrete_float(high, "high")
        if lo is not None and hi is not None and not lo < hi:
            raise ValueError(f"a uniform prior needs low < high, got low={low!r}, high={high!r}")
        return cls("uniform", as_float(low), as_float(high) - as_float(low))

    @classmethod
    def normal(cls, mean, sd) -> ScalarPrior:
        """Normal with the given mean and standard deviation (sd > 0)."""
        _concrete_float(mean, "mean")
        s = _concrete_float(sd, "sd")
        if s is not None and not s > 0.0:
            raise ValueError(f"a normal prior needs sd > 0, got sd={sd!r}")
        return cls("normal", as_float(mean), as_float(sd))

    # ----------------------------------------------------------- queries
    @property
    def is_fixed(self) -> bool:
        """True for a delta-function prior (nothing to sample)."""
        return self.kind == "fixed"

    def log_prob(self, x):
        r"""Log prior density at x.

        ``uniform``: :math:`-\ln(\text{scale})` inside [loc, loc + scale],
        :math:`-\infty` outside; ``normal``:
        :math:`-\tfrac12 z^2 - \ln\sigma - \tfrac12\ln 2\pi`; ``fixed``: 0 at
        exactly the value and :math:`-\infty` elsewhere (a convention: a fixed
        parameter is not sampled, so it adds nothing to the log density).
        """
        x = as_float(x)
        if self.kind == "fixed":
            return jnp.where(x == self.loc, 0.0, -jnp.inf)
        if self.kind == "uniform":
            z = (x - self.loc) / self.scale  # as scipy.stats does: no loc + scale rounding
            return jnp.where((z >= 0.0) & (z <= 1.0), -jnp.log(self.scale), -jnp.inf)
        z = (x - self.loc) / self.scale
        return -0.5 * z * z - jnp.log(self.scale) - _HALF_LOG_2PI

    def from_unit_cube(self, u):
        r"""Inverse CDF: the parameter value whose prior CDF equals u in [0, 1].

        ``uniform``: loc + scale u; ``normal``: loc + scale
        :math:`\Phi^{-1}(u)` (``jax.scipy.special.ndtri``); ``fixed``: the
        value, whatever u.
        """
        u = as_float(u)
        if self.kind == "fixed":
            return jnp.broadcast_to(self.loc, jnp.shape(u))
        if self.kind == "uniform":
            return self.loc + self.scale * u
        return self.loc + self.scale * ndtri(u)

    @property
    def median(self):
        """The prior median (the value itself for ``fixed``)."""
        if self.kind == "uniform":
            return self.loc + 0.5 * self.scale
        return self.loc

    @property
    def support(self):
        """(lower, upper) bounds of the support (infinite for ``normal``)."""
        if self.kind == "fixed":
            return self.loc, self.loc
        if self.kind == "uniform":
            return self.loc, self.loc + self.scale
        return -jnp.inf, jnp.inf


@jax.tree_util.register_dataclass
@dataclasses.dataclass(frozen=True)
class MassToLightPrior:
    r"""Prior on the stellar mass normalisation and its radial gradient.

    The stellar mass-to-light ratio at projected radius R is

    .. math::

        \Upsilon_*(R) = 10^{\,\log_{10}\alpha_{\rm IMF}}\;\Upsilon_{*,\rm ref}
                        \left(\frac{R}{R_{\rm eff}}\right)^{-\eta},

    with :math:`\Upsilon_{*,\rm ref}` from SED fitting under ``reference``.

    Attributes
    ----------
    log10_alpha : ScalarPrior
        Prior on ``log10_alpha_imf`` (dimensionless).
    eta : ScalarPrior
        Prior on ``eta_ml`` (dimensionless; fixed at 0 for no gradient).
    reference : str
        Name of the SED-fitting IMF the factor is relative to (static).
    label : str
        A short human-readable description, e.g. ``"normal(salpeter55, 0.05)"``
        (static).
    """

    log10_alpha: ScalarPrior
    eta: ScalarPrior
    reference: str = dataclasses.field(default="chabrier03", metadata=dict(static=True))
    label: str = dataclasses.field(default="", metadata=dict(static=True))

    #: Names of the parameters, in the order of :meth:`from_unit_cube`.
    PARAMETER_NAMES = ("log10_alpha_imf", "eta_ml")

    @property
    def free_parameters(self) -> tuple[str, ...]:
        """Names of the parameters that are sampled (not fixed)."""
        priors = (self.log10_alpha, self.eta)
        return tuple(n for n, p in zip(self.PARAMETER_NAMES, priors, strict=True) if not p.is_fixed)

    def log_prob(self, log10_alpha, eta=0.0):
        """Joint log prior density of (log10_alpha_imf, eta_ml) (independent)."""
        return self.log10_alpha.log_prob(log10_alpha) + self.eta.log_prob(eta)

    def from_unit_cube(self, u_log10_alpha, u_eta=0.5):
        """Inverse-CDF transform: (u1, u2) in [0, 1]^2 -> (log10_alpha_imf, eta_ml)."""
        return self.log10_alpha.from_unit_cube(u_log10_alpha), self.eta.from_unit_cube(u_eta)

    @staticmethod
    def stellar_mass(log10_alpha, mstar_ref_msun):
        r"""Stellar mass :math:`M_* = 10^{\log_{10}\alpha}\,M_{*,\rm ref}` in Msun."""
        return 10.0 ** as_float(log10_alpha) * as_float(mstar_ref_msun)

    @staticmethod
    def mass_to_light_profile(R, r_eff, eta):
        """(R / R_eff)^-eta; see :func:`lensinfer.stellar.mass_to_light_gradient`."""
        return mass_to_light_gradient(R, r_eff, eta)


_IMF_TYPES = (PowerLawIMF, BrokenPowerLawIMF, LognormalPowerLawIMF)


def _is_imf_like(x) -> bool:
    return isinstance(x, str) or isinstance(x, _IMF_TYPES)


def _imf_label(x) -> str:
    return x.strip().lower() if isinstance(x, str) else type(x).__name__


def mass_to_light_prior(
    kind="uniform",
    *,
    value=None,
    low=None,
    high=None,
    mean=None,
    sd=None,
    imf=None,
    eta=None,
    reference="chabrier03",
    age_gyr=10.0,
    mass_factor_options=None,
) -> MassToLightPrior:
    r"""Build the prior on :math:`\log_{10}\alpha_{\rm IMF}` (and the M/L gradient).

    Named IMFs stand for their mass factor relative to ``reference``,
    :math:`\log_{10}` :func:`~lensinfer.stellar.imf_mass_factor` at
    ``age_gyr``, so "Salpeter-like" or "Chabrier-like" can be asked for by
    name:

    - ``kind="fixed"``: ``value=`` a number, or ``imf=`` a name/IMF object;
    - ``kind="normal"``: ``sd=`` and either ``mean=`` or ``imf=`` (centred on
      that IMF);
    - ``kind="uniform"``: ``low=`` and ``high=``, each a number or an IMF
      name/object (e.g. ``low="chabrier03", high="salpeter55"``).

    Parameters
    ----------
    kind : {"fixed", "uniform", "normal"}
        Prior family for ``log10_alpha_imf``.
    value, low, high, mean, sd : float or str, optional
        As above (dex).  ``low``/``high`` may also be IMF names or objects.
    imf : str or IMF object, optional
        For ``fixed`` and ``normal``: the IMF whose factor is used.
    eta : None, float or ScalarPrior, optional
        The M/L gradient exponent: None (default) for no gradient (fixed at
        0), a number to fix it, or a :class:`ScalarPrior` to sample it.
    reference : str
        The IMF of the SED fit (default ``"chabrier03"``).
    age_gyr : float
        Age used to turn IMF names into factors (default 10 Gyr).
    mass_factor_options : dict, optional
        Extra keyword arguments for :func:`~lensinfer.stellar.imf_mass_factor`
        (``metallicity``, ``remnants``, ``post_ms_fuel_msun``, ...).

    Returns
    -------
    MassToLightPrior

    Raises
    ------
    ValueError
        For an unknown kind, a missing or conflicting argument, or invalid
        bounds; the message names the argument, its value and what is
        accepted.

    Examples
    --------
    >>> from lensinfer.stellar import mass_to_light_prior
    >>> p = mass_to_light_prior("fixed", imf="salpeter55")
    >>> round(float(p.log10_alpha.loc), 3)
    0.224
    >>> p = mass_to_light_prior("uniform", low="chabrier03", high="salpeter55")
    >>> p.label
    'uniform(chabrier03, salpeter55)'
    """
    if kind not in PRIOR_KINDS:
        raise ValueError(f"kind={kind!r} is not a prior kind; accepted: {', '.join(PRIOR_KINDS)}")
    try:
        ref = get_imf(reference)
    except ValueError as err:
        raise ValueError(f"reference={reference!r}: {err}") from None
    ref_name = reference if isinstance(reference, str) else type(ref).__name__
    options = dict(mass_factor_options or {})

    def to_dex(x, what):
        if _is_imf_like(x):
            try:
                target = get_imf(x)
            except ValueError as err:
                raise ValueError(f"{what}={x!r}: {err}") from None
            return jnp.log10(imf_mass_factor(target, ref, age_gyr, **options)), _imf_label(x)
        if isinstance(x, bool) or x is None:
            raise ValueError(f"{what}={x!r} must be a number (dex) or an IMF name/object")
        return as_float(x), f"{float(x):g}" if _concrete_float(x, what) is not None else what

    def forbid(names):
        given = [n for n, v in names.items() if v is not None]
        if given:
            raise ValueError(f"kind={kind!r} does not take {', '.join(given)}")

    if kind == "fixed":
        forbid(dict(low=low, high=high, mean=mean, sd=sd))
        if (value is None) == (imf is None):
            raise ValueError("kind='fixed' needs exactly one of value= (dex) or imf= (a name/IMF)")
        x, tag = to_dex(imf if imf is not None else value, "imf" if imf is not None else "value")
        alpha_prior, label = ScalarPrior.fixed(x), f"fixed({tag})"
    elif kind == "normal":
        forbid(dict(value=value, low=low, high=high))
        if (mean is None) == (imf is None):
            raise ValueError("kind='normal' needs exactly one of mean= (dex) or imf= (a name/IMF)")
        if sd is None:
            raise ValueError("kind='normal' needs sd= (dex, > 0)")
        x, tag = to_dex(imf if imf is not None else mean, "imf" if imf is not None else "mean")
        alpha_prior = ScalarPrior.normal(x, sd)
        label = f"normal({tag}, {float(sd):g})"
    else:
        forbid(dict(value=value, mean=mean, sd=sd, imf=imf))
        if low is None or high is None:
            raise ValueError(
                "kind='uniform' needs low= and high= (numbers in dex or IMF names/objects)"
            )
        lo, lo_tag = to_dex(low, "low")
        hi, hi_tag = to_dex(high, "high")
        alpha_prior = ScalarPrior.uniform(lo, hi)
        label = f"uniform({lo_tag}, {hi_tag})"

    if eta is None:
        eta_prior = ScalarPrior.fixed(0.0)
    elif isinstance(eta, ScalarPrior):
        eta_prior = eta
        label += f"; eta {eta.kind}"
    else:
        eta_prior = ScalarPrior.fixed(eta)
        label += f"; eta={float(eta):g}"
    return MassToLightPrior(log10_alpha=alpha_prior, eta=eta_prior, reference=ref_name, label=label)
