r"""Stellar initial mass functions (IMFs) as immutable JAX pytrees.

Each IMF is a frozen dataclass registered with
``jax.tree_util.register_dataclass``: every number (slopes, break masses, the
mass range) is a data field, so an IMF can be passed through ``jax.jit``,
differentiated with respect to its parameters and batched with ``jax.vmap``.

Conventions (the same for every class):

- masses are initial stellar masses in Msun;
- the IMF is the number of stars per unit initial mass,
  :math:`\phi(m) = dN/dm`, normalised to **one solar mass of stars formed**
  between ``m_min`` and ``m_max``:

  .. math::

      \int_{m_{\min}}^{m_{\max}} m\,\phi(m)\,dm = 1\ {\rm M_\odot},

  so ``dndm`` is in stars Msun^-1 per Msun formed, ``number`` in stars per
  Msun formed and ``mass`` is a dimensionless mass fraction;
- :math:`\phi` is zero outside [``m_min``, ``m_max``] (0.1-100 Msun unless
  changed) and continuous at every break mass;
- slopes are written as positive numbers x in :math:`\phi \propto m^{-x}`
  (Salpeter's x = 2.35).

All integrals (``number``, ``mass``, ``moment``) are in closed form (power
laws and error functions), exact to float64 rounding.
"""

from __future__ import annotations

import dataclasses
import math

import jax
import jax.numpy as jnp

from lensinfer.stellar._integrals import (
    as_float,
    lognormal_segment_moment,
    power_segment_moment,
)

__all__ = [
    "NAMED_IMFS",
    "BrokenPowerLawIMF",
    "LognormalPowerLawIMF",
    "PowerLawIMF",
    "get_imf",
]

_LN10 = math.log(10.0)


class _IMFMethods:
    """Methods shared by every IMF; subclasses define the unnormalised shape.

    A subclass provides ``_raw_dndm(m)`` (the shape for m inside the range,
    any positive normalisation) and ``_raw_moment(k, m1, m2)`` (its closed-form
    integral of m^k over [m1, m2] intersected with the range).
    """

    m_min: jax.Array
    m_max: jax.Array

    def _raw_dndm(self, m):  # pragma: no cover - abstract
        raise NotImplementedError

    def _raw_moment(self, k, m1, m2):  # pragma: no cover - abstract
        raise NotImplementedError

    def _bounds(self, m1, m2):
        lo = as_float(self.m_min) if m1 is None else as_float(m1)
        hi = as_float(self.m_max) if m2 is None else as_float(m2)
        return lo, hi

    def _normalisation(self):
        """1 / (unnormalised mass formed between m_min and m_max)."""
        return 1.0 / self._raw_moment(1.0, as_float(self.m_min), as_float(self.m_max))

    def dndm(self, m):
        r"""Number of stars per unit initial mass, :math:`\phi(m) = dN/dm`.

        Parameters
        ----------
        m : float or array
            Initial stellar mass in Msun.

        Returns
        -------
        float or array
            Stars per Msun of initial mass, per Msun of stars formed; zero
            outside [``m_min``, ``m_max``].
        """
        m = as_float(m)
        lo, hi = as_float(self.m_min), as_float(self.m_max)
        inside = (m >= lo) & (m <= hi)
        m_safe = jnp.clip(m, lo, hi)
        return jnp.where(inside, self._normalisation() * self._raw_dndm(m_safe), 0.0)

    def moment(self, k, m1=None, m2=None):
        r"""The moment :math:`\int_{m_1}^{m_2} m^k\,\phi(m)\,dm` (closed form).

        Parameters
        ----------
        k : float
            Power of the mass (0 gives numbers, 1 masses, ~4 luminosities).
        m1, m2 : float, optional
            Limits in Msun, clipped to [``m_min``, ``m_max``]; default the
            whole range.  An empty interval (m2 <= m1) gives 0.

        Returns
        -------
        float
            In Msun^k per Msun of stars formed.
        """
        lo, hi = self._bounds(m1, m2)
        return self._normalisation() * self._raw_moment(as_float(k), lo, hi)

    def number(self, m1=None, m2=None):
        """Number of stars born with initial mass in [m1, m2], per Msun formed.

        Parameters
        ----------
        m1, m2 : float, optional
            Limits in Msun (default: the whole mass range).
        """
        return self.moment(0.0, m1, m2)

    def mass(self, m1=None, m2=None):
        """Initial mass in stars born in [m1, m2], per Msun formed (a fraction).

        Parameters
        ----------
        m1, m2 : float, optional
            Limits in Msun (default: the whole mass range, giving exactly 1).
        """
        return self.moment(1.0, m1, m2)


@jax.tree_util.register_dataclass
@dataclasses.dataclass(frozen=True)
class PowerLawIMF(_IMFMethods):
    r"""A single power-law IMF, :math:`\phi(m) \propto m^{-x}`.

    With x = 2.35 on 0.1-100 Msun this is the Salpeter (1955) IMF
    (``get_imf("salpeter55")``).

    Parameters
    ----------
    slope : float
        x, the (positive) power-law index of dN/dm; Salpeter's value is 2.35.
    m_min, m_max : float
        Mass range in Msun (default 0.1 and 100).

    References
    ----------
    Salpeter, E. E. 1955, ApJ, 121, 161 (x = 1.35 for dN/d ln m, i.e. 2.35
    for dN/dm, fitted between about 0.4 and 10 Msun and conventionally
    extrapolated to 0.1-100 Msun).
    """

    slope: jax.Array = 2.35
    m_min: jax.Array = 0.1
    m_max: jax.Array = 100.0

    def _raw_dndm(self, m):
        return as_float(m) ** (-as_float(self.slope))

    def _raw_moment(self, k, m1, m2):
        return power_segment_moment(
            k, 1.0, as_float(self.slope), 1.0, as_float(self.m_min), as_float(self.m_max), m1, m2
        )


@jax.tree_util.register_dataclass
@dataclasses.dataclass(frozen=True)
class BrokenPowerLawIMF(_IMFMethods):
    r"""A two-segment power law with a free low-mass slope.

    .. math::

        \phi(m) \propto
        \begin{cases}
          (m/m_b)^{-x_{\rm low}}  & m_{\min} \le m < m_b, \\
          (m/m_b)^{-x_{\rm high}} & m_b \le m \le m_{\max},
        \end{cases}

    continuous at the break mass :math:`m_b`.  With x_low = 1.3, x_high = 2.3
    and m_b = 0.5 Msun it is the Kroupa (2001) IMF above 0.1 Msun
    (``get_imf("kroupa01")``); x_low > 2.3 gives the "bottom-heavy" IMFs
    (more low-mass dwarfs per turn-off star) discussed for massive early-type
    galaxies, and x_low = x_high = 2.35 recovers Salpeter's.

    Parameters
    ----------
    low_mass_slope : float
        x_low, the slope below the break (differentiable).
    high_mass_slope : float
        x_high, the slope above the break (default 2.3, Kroupa's value).
    break_mass : float
        m_b in Msun (default 0.5, Kroupa's value).
    m_min, m_max : float
        Mass range in Msun (default 0.1 and 100).

    References
    ----------
    Kroupa, P. 2001, MNRAS, 322, 231, eq. 2 (alpha_1 = 1.3 for
    0.08-0.5 Msun, alpha_2 = 2.3 above 0.5 Msun; from memory of the paper).
    """

    low_mass_slope: jax.Array
    high_mass_slope: jax.Array = 2.3
    break_mass: jax.Array = 0.5
    m_min: jax.Array = 0.1
    m_max: jax.Array = 100.0

    def _raw_dndm(self, m):
        m = as_float(m)
        mb = as_float(self.break_mass)
        slope = jnp.where(m < mb, as_float(self.low_mass_slope), as_float(self.high_mass_slope))
        return (m / mb) ** (-slope)

    def _raw_moment(self, k, m1, m2):
        mb = as_float(self.break_mass)
        lo, hi = as_float(self.m_min), as_float(self.m_max)
        mb_in = jnp.clip(mb, lo, hi)
        low = power_segment_moment(k, 1.0, as_float(self.low_mass_slope), mb, lo, mb_in, m1, m2)
        high = power_segment_moment(k, 1.0, as_float(self.high_mass_slope), mb, mb_in, hi, m1, m2)
        return low + high


@jax.tree_util.register_dataclass
@dataclasses.dataclass(frozen=True)
class LognormalPowerLawIMF(_IMFMethods):
    r"""A lognormal below a transition mass joined to a power law above it.

    Per decade of mass, :math:`\xi(\log_{10} m) = dN/d\log_{10} m
    = m \ln 10\,\phi(m)`:

    .. math::

        \xi(\log m) \propto
        \begin{cases}
          \exp\!\left[-\dfrac{(\log m - \log m_c)^2}{2\sigma^2}\right]
              & m \le m_t, \\[1ex]
          \xi(\log m_t)\,(m/m_t)^{-(x - 1)} & m > m_t,
        \end{cases}

    i.e. :math:`\phi \propto m^{-x}` above :math:`m_t`, with the high-mass
    amplitude fixed by continuity at :math:`m_t`.  The defaults
    (m_c = 0.079 Msun, sigma = 0.69, m_t = 1 Msun, x = 2.3) are the Chabrier
    (2003) single-star IMF (``get_imf("chabrier03")``).

    Parameters
    ----------
    characteristic_mass : float
        m_c in Msun (default 0.079).
    sigma_log10 : float
        sigma, the width of the lognormal in dex (default 0.69).
    transition_mass : float
        m_t in Msun (default 1.0).
    high_mass_slope : float
        x above m_t (default 2.3, i.e. dN/dlog m ∝ m^-1.3).
    m_min, m_max : float
        Mass range in Msun (default 0.1 and 100).

    Notes
    -----
    Chabrier (2003) quotes the two amplitudes separately, 0.158 for the
    lognormal and 4.43e-2 for the power law (per log m per pc^3).  Continuity
    at 1 Msun implies 0.158 exp[-(log 0.079)^2 / (2 x 0.69^2)] = 4.41e-2; the
    0.5 per cent difference is the rounding of the published three-digit
    numbers, and this class uses the continuous form.

    References
    ----------
    Chabrier, G. 2003, PASP, 115, 763, Table 1 (single objects:
    m_c = 0.079, sigma = 0.69 for m <= 1 Msun; x = 1.3 in dN/dlog m above
    1 Msun), eq. 17.  Values from memory of the paper.
    """

    characteristic_mass: jax.Array = 0.079
    sigma_log10: jax.Array = 0.69
    transition_mass: jax.Array = 1.0
    high_mass_slope: jax.Array = 2.3
    m_min: jax.Array = 0.1
    m_max: jax.Array = 100.0

    def _lognormal_dndm(self, m):
        m = as_float(m)
        sigma = as_float(self.sigma_log10)
        y = jnp.log10(m) - jnp.log10(as_float(self.characteristic_mass))
        return jnp.exp(-0.5 * (y / sigma) ** 2) / (m * _LN10)

    def _raw_dndm(self, m):
        m = as_float(m)
        mt = as_float(self.transition_mass)
        below = m <= mt
        m_low = jnp.where(below, m, mt)
        high = self._lognormal_dndm(mt) * (m / mt) ** (-as_float(self.high_mass_slope))
        return jnp.where(below, self._lognormal_dndm(m_low), high)

    def _raw_moment(self, k, m1, m2):
        mt = as_float(self.transition_mass)
        lo, hi = as_float(self.m_min), as_float(self.m_max)
        mt_in = jnp.clip(mt, lo, hi)
        low = lognormal_segment_moment(
            k,
            1.0,
            jnp.log10(as_float(self.characteristic_mass)),
            as_float(self.sigma_log10),
            lo,
            mt_in,
            m1,
            m2,
        )
        high = power_segment_moment(
            k,
            self._lognormal_dndm(mt),
            as_float(self.high_mass_slope),
            mt,
            mt_in,
            hi,
            m1,
            m2,
        )
        return low + high


IMF = PowerLawIMF | BrokenPowerLawIMF | LognormalPowerLawIMF

#: The IMFs that can be asked for by name, with the paper each follows.
NAMED_IMFS: dict[str, str] = {
    "salpeter55": "Salpeter (1955): dN/dm ∝ m^-2.35 on 0.1-100 Msun",
    "kroupa01": "Kroupa (2001): slopes 1.3 / 2.3 broken at 0.5 Msun, on 0.1-100 Msun",
    "chabrier03": "Chabrier (2003) single-star: lognormal below 1 Msun, m^-2.3 above, 0.1-100 Msun",
}


def get_imf(imf) -> IMF:
    """Return an IMF given its name, or pass an IMF object through unchanged.

    Parameters
    ----------
    imf : str or IMF object
        One of ``"salpeter55"``, ``"kroupa01"``, ``"chabrier03"`` (see
        :data:`NAMED_IMFS`), or an instance of :class:`PowerLawIMF`,
        :class:`BrokenPowerLawIMF` or :class:`LognormalPowerLawIMF`.

    Returns
    -------
    PowerLawIMF, BrokenPowerLawIMF or LognormalPowerLawIMF
        Named IMFs are on 0.1-100 Msun.

    Raises
    ------
    ValueError
        For an unknown name (the message lists the accepted ones).
    TypeError
        For anything that is neither a name nor an IMF object.

    Examples
    --------
    >>> from lensinfer.stellar import get_imf
    >>> float(get_imf("salpeter55").mass())
    1.0
    """
    if isinstance(imf, PowerLawIMF | BrokenPowerLawIMF | LognormalPowerLawIMF):
        return imf
    if isinstance(imf, str):
        key = imf.strip().lower()
        if key == "salpeter55":
            return PowerLawIMF(slope=2.35)
        if key == "kroupa01":
            return BrokenPowerLawIMF(low_mass_slope=1.3, high_mass_slope=2.3, break_mass=0.5)
        if key == "chabrier03":
            return LognormalPowerLawIMF()
        raise ValueError(
            f"unknown IMF name {imf!r}; accepted names are {', '.join(map(repr, NAMED_IMFS))}, "
            f"or pass a PowerLawIMF / BrokenPowerLawIMF / LognormalPowerLawIMF object"
        )
    raise TypeError(
        f"expected an IMF name (str) or an IMF object, got {type(imf).__name__}: {imf!r}"
    )
