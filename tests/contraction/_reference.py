"""An independent halo-response solver: scipy root finding and adaptive quadrature.

Nothing from ``lensinfer.contraction`` is used, and the package's NFW profile
is not either: the initial halo is re-derived here from (M200c, c200c, z) with
astropy's Planck18 critical density (Navarro, Frenk & White 1997, ApJ 490,
493; M(<r) = 4 pi rho_s r_s^3 [ln(1 + x) - x/(1 + x)]).  The galaxy mass is
the Sérsic deprojection evaluated by direct quadrature
(``Sersic(..., deprojection="quadrature")``), independent of the shipped table
that the package's default galaxy uses.

For each final radius r_f, the initial radius r_i is the root (found with
``scipy.optimize.brentq`` in ln r_i, to 1e-15) of the equation stated in
``contract_halo``'s docstring,

    ln r_f - ln r_i - nu ln[M_i(rbar_i) / (M_gal(rbar_f) + (1 - f) M_i(rbar_i))] = 0,

i.e. r_f / r_i = [M_i / M_f]^nu: the adiabatic invariant r M(r) of Blumenthal
et al. (1986, ApJ 301, 27) for nu = 1 and rbar = r; the orbit-averaged radius
rbar = A r_vir (r/r_vir)^w of Gnedin et al. (2004, ApJ 616, 16), normalised by
the halo's virial radius; the continuous response index nu of Dutton et al.
(2007, ApJ 654, 27) (all from memory).  Shells do not cross, so
M_DM(<r_f) = (1 - f) M_i(<r_i), with f = M_gal(<r200c) / M200c.

The virial radius is solved here too, without the package: ``brentq`` on
M_NFW(<r) = (4 pi / 3) Delta_vir rho_c(z) r^3 with the overdensity of Bryan &
Norman (1998, ApJ 495, 80, eq. 6) for a flat universe,
Delta_vir = 18 pi^2 + 82 x - 39 x^2, x = Omega_m(z) - 1, relative to the
critical density, and Omega_m(z) and rho_c(z) from astropy's Planck18.

The logarithmic slope s = dln M_DM / dln r_f follows from the implicit-function
theorem on the same equation (analytic derivatives of the NFW mass and of the
Sérsic mass, whose derivative is 4 pi r^2 rho with rho from its own Abel
quadrature; no finite differences), rho = M s / (4 pi r^3).  The projections
use formulas different from the package's M_2D = int M(R cosh t) sech^2 t dt:

    Sigma(R)  = 2 int_0^inf rho(R cosh t) R cosh t dt             (Abel, r = R cosh t)
    M_2D(<R)  = M(<R) + int_R^inf (dM/dr) [1 - sqrt(1 - R^2/r^2)] dr
              = M(<R) + int_0^inf M s tanh t (1 - tanh t) dt

(each shell of radius r > R has the fraction 1 - sqrt(1 - R^2/r^2) of its mass
inside the cylinder), evaluated with ``scipy.integrate.quad``.
"""

import functools
import math

import jax
import jax.numpy as jnp
from astropy import units as u
from astropy.cosmology import Planck18
from scipy.integrate import quad
from scipy.optimize import brentq

from lensinfer.profiles import Sersic

#: (A, w, nu) of the named prescriptions; A = w = None means rbar = r.  Gnedin et
#: al. (2004, section 3): A = 0.85, w = 0.8; Gnedin et al. (2011,
#: arXiv:1108.5736): A = 1.6, w = 0.8 (from memory).
NAMED = {
    "none": (None, None, 0.0),
    "blumenthal86": (None, None, 1.0),
    "gnedin04": (0.85, 0.8, 1.0),
    "gnedin11": (1.6, 0.8, 1.0),
}

#: Relative accuracy asked of every quadrature (far below the 1e-4 tested).
QUAD_EPSREL = 1e-9


def nfw_m(x):
    """m(x) = ln(1 + x) - x / (1 + x), accurate to ~1e-16 relative for all x.

    Below x = 0.01, where the difference cancels, the Taylor series
    sum_k (-1)^k (k - 1) x^k / k, truncated at x^16 (error < 1e-28 relative).
    """
    if x < 1e-2:
        return sum((-1) ** k * (k - 1) / k * x**k for k in range(2, 17))
    return math.log1p(x) - x / (1.0 + x)


def nfw_slope(x):
    """d ln m / d ln x = x^2 / (1 + x)^2 / m(x)."""
    return x * x / (1.0 + x) ** 2 / nfw_m(x)


@jax.jit
def _galaxy_mass_and_log_density(mstar, r_eff, n, r):
    # One compiled call for both: the direct deprojection costs ~0.4 ms per radius.
    gal = Sersic(mstar, r_eff, n, deprojection="quadrature")
    return jnp.stack([gal.enclosed_mass(r), gal.log_density_quadrature(r)])


def _quad(fn, a, b):
    # full_output: quad reports trouble in its return value instead of a warning
    # (warnings are errors in this suite); check the error estimate ourselves.
    value, abserr, *_ = quad(fn, a, b, epsabs=0.0, epsrel=QUAD_EPSREL, limit=400, full_output=1)
    if not abserr <= 10 * QUAD_EPSREL * abs(value):
        raise RuntimeError(f"reference quadrature did not converge: {value} +- {abserr}")
    return value


def bryan_norman_overdensity(z):
    """Delta_vir(z) relative to rho_c(z): Bryan & Norman (1998, ApJ 495, 80), eq. 6.

    Delta_vir = 18 pi^2 + 82 x - 39 x^2 with x = Omega_m(z) - 1 (flat universe
    with a cosmological constant), Omega_m(z) from astropy's Planck18.
    """
    x = float(Planck18.Om(z)) - 1.0
    return 18.0 * math.pi**2 + 82.0 * x - 39.0 * x**2


class ReferenceResponse:
    """The dark matter of an NFW halo after a Sérsic galaxy formed inside it.

    Parameters
    ----------
    log10_m200c, c200c, z : float
        The dark-matter-only halo (M200c in Msun) and its redshift.
    log10_mstar, r_eff, n : float
        The Sérsic galaxy (total mass in Msun, R_eff in kpc, index).
    a, w : float or None
        Orbit-averaged radius rbar = a r_orb (r/r_orb)^w; None for rbar = r.
    nu : float
        Response index (1: adiabatic invariant; 0: no response).
    orbit_radius : {"vir", "200c"}
        r_orb: the halo's virial radius (Bryan & Norman 1998; the default, as
        in Gnedin et al. 2004) or r200c (the package's ``r_orbit=r200c``).
    """

    def __init__(
        self,
        log10_m200c,
        c200c,
        z,
        log10_mstar,
        r_eff,
        n,
        a=None,
        w=None,
        nu=1.0,
        orbit_radius="vir",
    ):
        self.m200 = 10.0**log10_m200c
        rho_c = Planck18.critical_density(z).to_value(u.Msun / u.kpc**3)
        self.r200 = (3.0 * self.m200 / (4.0 * math.pi * 200.0 * rho_c)) ** (1.0 / 3.0)
        self.r_s = self.r200 / c200c
        self.m_norm = self.m200 / nfw_m(c200c)
        self.r_vir = self._virial_radius(bryan_norman_overdensity(z) * rho_c)
        self.r_orbit = {"vir": self.r_vir, "200c": self.r200}[orbit_radius]
        self.a, self.w, self.nu = a, w, nu
        self._galaxy_args = (10.0**log10_mstar, float(r_eff), float(n))
        self.galaxy = functools.lru_cache(maxsize=None)(self._galaxy)
        self.f = self.galaxy(self.r200)[0] / self.m200

    # -- ingredients --------------------------------------------------------
    def halo_mass(self, r):
        return self.m_norm * nfw_m(r / self.r_s)

    def _galaxy(self, r):
        """M_gal(<r) and d ln M_gal / d ln r = 4 pi r^3 rho / M."""
        mass, log_rho = (float(v) for v in _galaxy_mass_and_log_density(*self._galaxy_args, r))
        return mass, 4.0 * math.pi * r**3 * math.exp(log_rho) / mass

    def _virial_radius(self, rho_vir):
        """r where M_NFW(<r) = (4 pi / 3) rho_vir r^3 (mean density falls with r:
        one root, bracketed by r200c / 10 and 10 r200c for Delta_vir < 200)."""

        def excess(log_r):
            r = math.exp(log_r)
            return math.log(self.halo_mass(r) / (4.0 / 3.0 * math.pi * rho_vir * r**3))

        lo, hi = math.log(0.1 * self.r200), math.log(10.0 * self.r200)
        return math.exp(brentq(excess, lo, hi, xtol=1e-15, rtol=1e-15))

    def orbit(self, r):
        if self.a is None:
            return r
        return self.a * self.r_orbit * (r / self.r_orbit) ** self.w

    # -- the response -------------------------------------------------------
    def _residual(self, x, log_rf, m_gal):
        m_i = self.halo_mass(self.orbit(math.exp(x)))
        return log_rf - x - self.nu * math.log(m_i / (m_gal + (1.0 - self.f) * m_i))

    def initial_radius(self, r_f):
        """r_i of the shell that ends at r_f (the residual decreases in ln r_i)."""
        log_rf = math.log(r_f)
        m_gal = self.galaxy(self.orbit(r_f))[0]
        lo, hi = log_rf - 1.0, log_rf + 1.0
        while self._residual(lo, log_rf, m_gal) < 0.0:
            lo -= 2.0
        while self._residual(hi, log_rf, m_gal) > 0.0:
            hi += 2.0
        x = brentq(self._residual, lo, hi, args=(log_rf, m_gal), xtol=1e-15, rtol=1e-15)
        return math.exp(x)

    def mass_and_slope(self, r_f):
        """M_DM(<r_f) and d ln M_DM / d ln r_f (implicit-function theorem)."""
        r_i = self.initial_radius(r_f)
        rb_i, rb_f = self.orbit(r_i), self.orbit(r_f)
        dw = 1.0 if self.a is None else self.w  # d ln rbar / d ln r
        m_i, s_i = self.halo_mass(rb_i), nfw_slope(rb_i / self.r_s) * dw
        m_g, s_g = self.galaxy(rb_f)
        s_g *= dw
        denom = m_g + (1.0 - self.f) * m_i
        # F = ln r_f - x_i - nu [ln M_i(rbar_i) - ln D]:  dF/dx_i = -1 - nu s_i m_g / D,
        # dF/dln r_f = 1 + nu s_g m_g / D, so dx_i/dln r_f is their ratio (sign flipped).
        dx_i = (1.0 + self.nu * m_g * s_g / denom) / (1.0 + self.nu * m_g * s_i / denom)
        mass = (1.0 - self.f) * self.halo_mass(r_i)
        return mass, nfw_slope(r_i / self.r_s) * dx_i

    def enclosed_mass(self, r):
        return self.mass_and_slope(r)[0]

    def density(self, r):
        mass, slope = self.mass_and_slope(r)
        return mass * slope / (4.0 * math.pi * r**3)

    def _t_max(self, R):
        # Out to r = 1e4 r200: both integrands fall as e^{-2t} times M s (which
        # grows only logarithmically), so the rest is ~(R / 1e4 r200)^2 < 1e-10.
        return math.acosh(1.0e4 * self.r200 / R)

    def surface_density(self, R):
        def integrand(t):
            r = R * math.cosh(t)
            return self.density(r) * r

        return 2.0 * _quad(integrand, 0.0, self._t_max(R))

    def projected_mass(self, R):
        def integrand(t):
            mass, slope = self.mass_and_slope(R * math.cosh(t))
            th = math.tanh(t)
            return mass * slope * th * (1.0 - th)

        return self.enclosed_mass(R) + _quad(integrand, 0.0, self._t_max(R))
