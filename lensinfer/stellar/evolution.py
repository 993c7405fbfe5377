r"""Main-sequence lifetimes, turn-off masses and main-sequence luminosities.

Three published fitting relations, in JAX (float64, differentiable, scalar in
and scalar out, broadcasting over arrays):

- the main-sequence lifetime of a star of initial mass m and metallicity Z,
  Raiteri, Villata & Navarro (1996), and its inverse, the turn-off mass of a
  population of a given age;
- the rate at which the turn-off mass falls with age, which sets how many
  stars leave the main sequence per unit time (the "evolutionary flux" of the
  fuel-consumption theorem);
- a piecewise power-law main-sequence mass–luminosity relation.

Units: masses in Msun, ages and lifetimes in Gyr, luminosities in Lsun,
metallicity Z as a mass fraction (solar ≈ 0.02 in the calibration used).
"""

from __future__ import annotations

import jax.numpy as jnp

from lensinfer.stellar._integrals import as_float
from lensinfer.stellar._units import strip_unit

__all__ = [
    "LUMINOSITY_SEGMENTS",
    "main_sequence_lifetime_gyr",
    "main_sequence_luminosity",
    "turnoff_mass",
    "turnoff_mass_rate",
]


def _lifetime_coefficients(metallicity):
    """a0, a1, a2 of Raiteri, Villata & Navarro (1996), eq. 3, for t in years."""
    lz = jnp.log10(as_float(metallicity))
    a0 = 10.13 + 0.07547 * lz - 0.008084 * lz**2
    a1 = -4.424 - 0.7939 * lz - 0.1187 * lz**2
    a2 = 1.262 + 0.3385 * lz + 0.05417 * lz**2
    return a0, a1, a2


def main_sequence_lifetime_gyr(mass_msun, metallicity=0.02):
    r"""Main-sequence lifetime of a star of given initial mass, in Gyr.

    .. math::

        \log_{10}(t_{\rm MS}/{\rm yr}) = a_0(Z) + a_1(Z)\,\log_{10} m
                                        + a_2(Z)\,(\log_{10} m)^2 ,

    with :math:`a_0 = 10.13 + 0.07547 \log Z - 0.008084 (\log Z)^2`,
    :math:`a_1 = -4.424 - 0.7939 \log Z - 0.1187 (\log Z)^2` and
    :math:`a_2 = 1.262 + 0.3385 \log Z + 0.05417 (\log Z)^2`.

    Parameters
    ----------
    mass_msun : float or array
        Initial mass in Msun (the fit covers 0.6-120 Msun).
    metallicity : float
        Metal mass fraction Z (the fit covers 7e-5 to 0.03; default 0.02).

    Returns
    -------
    float or array
        Hydrogen-burning lifetime in Gyr.

    Notes
    -----
    At Z = 0.02 this gives 9.5 Gyr for 1 Msun and a local slope
    d ln t / d ln m ≈ -3.4 near 1 Msun, steeper than the textbook
    t ∝ m^-2.5 scaling (which is the average slope over ~1-10 Msun).

    References
    ----------
    Raiteri, C. M., Villata, M., & Navarro, J. F. 1996, A&A, 315, 105, eq. 3
    (a fit to the Padova stellar tracks; coefficients quoted from memory of the
    paper).
    """
    mass = as_float(strip_unit(mass_msun, "Msun"))
    a0, a1, a2 = _lifetime_coefficients(metallicity)
    x = jnp.log10(mass)
    return 10.0 ** (a0 + a1 * x + a2 * x * x - 9.0)


def turnoff_mass(age_gyr, metallicity=0.02):
    r"""Main-sequence turn-off mass of a single-age population, in Msun.

    The inverse of :func:`main_sequence_lifetime_gyr`: the root of the
    quadratic in :math:`x = \log_{10} m` on its decreasing branch,

    .. math::

        x_{\rm TO} = \frac{-a_1 - \sqrt{a_1^2 - 4 a_2 (a_0 - \log_{10} t)}}{2 a_2},

    so it is exact, closed form and differentiable in age and metallicity.

    Parameters
    ----------
    age_gyr : float or array
        Age of the population in Gyr (or an astropy time Quantity).  Must be
        older than the shortest lifetime of the fit, about 3 Myr at Z = 0.02;
        younger ages are clipped there.
    metallicity : float
        Metal mass fraction Z (default 0.02).

    Returns
    -------
    float or array
        Initial mass in Msun of the stars now leaving the main sequence
        (0.99 Msun at 10 Gyr, 1.21 Msun at 5 Gyr, 0.91 Msun at 13 Gyr, Z = 0.02).

    References
    ----------
    Raiteri, C. M., Villata, M., & Navarro, J. F. 1996, A&A, 315, 105, eq. 3.
    """
    age = as_float(strip_unit(age_gyr, "Gyr"))
    a0, a1, a2 = _lifetime_coefficients(metallicity)
    log_t = jnp.log10(age) + 9.0
    disc = jnp.maximum(a1 * a1 - 4.0 * a2 * (a0 - log_t), 0.0)
    x = (-a1 - jnp.sqrt(disc)) / (2.0 * a2)
    return 10.0**x


def turnoff_mass_rate(age_gyr, metallicity=0.02):
    r"""Rate at which the turn-off mass decreases, :math:`-dm_{\rm TO}/dt`, in Msun/Gyr.

    From the lifetime fit,

    .. math::

        -\frac{dm_{\rm TO}}{dt} = \frac{m_{\rm TO}}{t\,|a_1 + 2 a_2 \log_{10} m_{\rm TO}|} .

    Multiplied by the IMF at the turn-off this is the number of stars leaving
    the main sequence per Gyr (the evolutionary flux of Renzini & Buzzoni
    1986).

    Parameters
    ----------
    age_gyr : float or array
        Age in Gyr.
    metallicity : float
        Metal mass fraction Z (default 0.02).

    Returns
    -------
    float or array
        Positive, in Msun per Gyr (0.029 at 10 Gyr, Z = 0.02).
    """
    age = as_float(strip_unit(age_gyr, "Gyr"))
    _, a1, a2 = _lifetime_coefficients(metallicity)
    m_to = turnoff_mass(age, metallicity)
    slope = a1 + 2.0 * a2 * jnp.log10(m_to)
    return m_to / (age * jnp.abs(slope))


#: Piecewise main-sequence mass–luminosity relation, L = c m^p on [lo, hi):
#: tuples (c [Lsun], p, lo [Msun], hi [Msun]).  Duric (2004), from memory.
LUMINOSITY_SEGMENTS: tuple[tuple[float, float, float, float], ...] = (
    (0.23, 2.3, 0.0, 0.43),
    (1.0, 4.0, 0.43, 2.0),
    (1.4, 3.5, 2.0, 55.0),
    (3.2e4, 1.0, 55.0, float("inf")),
)


def main_sequence_luminosity(mass_msun):
    r"""Bolometric luminosity of a main-sequence star, in Lsun.

    .. math::

        L/L_\odot =
        \begin{cases}
          0.23\,m^{2.3} & m < 0.43, \\
          m^{4}         & 0.43 \le m < 2, \\
          1.4\,m^{3.5}  & 2 \le m < 55, \\
          3.2\times10^4\,m & m \ge 55,
        \end{cases}

    with m in Msun.

    Parameters
    ----------
    mass_msun : float or array
        Stellar mass in Msun.

    Returns
    -------
    float or array
        Luminosity in Lsun.

    Notes
    -----
    A mean main-sequence relation: it ignores the brightening of a star during
    its main-sequence life (up to about a factor 2 just before the turn-off)
    and the metallicity dependence.  The pieces join to within 4 per cent.

    References
    ----------
    Duric, N. 2004, Advanced Astrophysics (Cambridge University Press), the
    piecewise mass–luminosity relation (quoted from memory).
    """
    m = as_float(strip_unit(mass_msun, "Msun"))
    out = jnp.zeros_like(m)
    for coef, power, lo, hi in LUMINOSITY_SEGMENTS:
        out = jnp.where((m >= lo) & (m < hi), coef * m**power, out)
    return out
