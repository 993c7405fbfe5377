r"""A radial power-law gradient of the stellar mass-to-light ratio.

.. math::

    \Upsilon_*(R) = \Upsilon_*(R_{\rm eff})\,\left(\frac{R}{R_{\rm eff}}\right)^{-\eta} ,

so :math:`\eta > 0` makes the centre heavier per unit light (as a
bottom-heavier IMF or older, more metal-rich stars would), :math:`\eta = 0`
is a constant M/L and :math:`\eta < 0` a lighter centre.
"""

from __future__ import annotations

from lensinfer.stellar._integrals import as_float
from lensinfer.stellar._units import strip_unit

__all__ = ["mass_to_light_gradient"]


def mass_to_light_gradient(R, r_eff, eta):
    r"""Mass-to-light ratio at projected radius R relative to its value at R_eff.

    .. math::

        g(R) = \frac{\Upsilon_*(R)}{\Upsilon_*(R_{\rm eff})}
             = \left(\frac{R}{R_{\rm eff}}\right)^{-\eta} .

    Parameters
    ----------
    R : float or array
        Projected radius in kpc (or an astropy length Quantity); must be > 0
        when eta != 0.
    r_eff : float
        Effective (half-light) radius in kpc (or a Quantity).
    eta : float
        Gradient exponent (dimensionless; differentiable).

    Returns
    -------
    float or array
        Dimensionless, equal to 1 at R = R_eff for every eta.

    Notes
    -----
    Normalisation choice: the factor is 1 at R_eff, so with a gradient the
    stellar surface density is :math:`\Sigma_*(R) = \alpha_{\rm IMF}
    \Upsilon_{\rm ref} I(R)\,g(R)` and :math:`\alpha_{\rm IMF}` refers to the
    mass-to-light ratio at the effective radius.  The total stellar mass then
    differs from :math:`\alpha_{\rm IMF} M_{*,\rm ref}` by the light-weighted
    mean of g, which a model that wants to conserve the SED mass divides out
    (it needs the light profile, which lives in :mod:`lensinfer.profiles`).
    The power law diverges at R = 0 for eta > 0 (its enclosed mass stays finite
    for eta < 2 and a light profile finite at the centre).
    """
    R = as_float(strip_unit(R, "kpc"))
    r_eff = as_float(strip_unit(r_eff, "kpc"))
    return (R / r_eff) ** (-as_float(eta))
