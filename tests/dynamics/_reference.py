"""An independent scipy computation of Jeans velocity dispersions (no lensinfer at all).

Nothing here imports lensinfer: the profiles are re-derived in numpy/scipy and
every integral is an adaptive ``scipy.integrate.quad`` (QUADPACK), done in the
original order of the physics rather than with the single-integral kernels
the package uses:

1. Sérsic (1963) light and stellar mass: b_n from ``scipy.special.gammaincinv``
   (gamma(2n, b_n) = Gamma(2n)/2), the exact surface density
   Sigma(R) = Sigma_e exp(-b_n [(R/R_eff)^(1/n) - 1]),
   Sigma_e = M b_n^(2n) e^(-b_n) / (2 pi n R_eff^2 Gamma(2n)) (Graham & Driver
   2005, PASA 22, 118, eqs. 1 and 4; from memory), the 3-D density by the
   Abel integral nu(r) = -(1/pi) int_0^inf Sigma'(r cosh t) dt (Binney &
   Tremaine 2008, eq. B.72) and the 3-D mass M(<r) = 4 pi int nu r^2 dr.
   NFW (Navarro, Frenk & White 1997) mass in closed form; the Hernquist
   (1990) sphere in closed form (eqs. 2, 3).
2. The Jeans solution nu sigma_r^2(r) = (1/f) int_r^inf f nu G M / s^2 ds,
   f = r^(2 beta) (constant beta) or 1 + r^2/r_a^2 (Osipkov–Merritt)
   (Binney & Tremaine 2008, eqs. 4.215-4.216).
3. The projection Sigma sigma_los^2(R) = 2 int_R^inf (1 - beta R^2/r^2)
   nu sigma_r^2 r dr / sqrt(r^2 - R^2) (Binney & Mamon 1982, eq. 3).
4. Aperture averages with the seeing weight of a circle from the
   non-central chi-square distribution, w(R) = P(chi'^2_2(R^2/s^2) < A^2/s^2)
   (``scipy.stats.ncx2``; the Rice distribution of the blurred position), and
   for a slit the 2-D Cartesian integral of Sigma sigma^2 times the separable
   Gaussian-blurred slit transmission (``scipy.integrate.dblquad``).

The radial functions (nu, M, nu sigma_r^2, Sigma sigma_los^2) are tabulated by
quad on a fine grid uniform in ln r (step 0.03) and interpolated by cubic
splines of their logarithms, whose interpolation error (~h^4/384 times the
fourth log-derivative) is below 1e-8 (checked against the closed-form
Hernquist dispersions in test_hernquist); the tolerances it is used with are
1e-7 and above.
"""

import functools
import math

import numpy as np
from scipy import integrate, interpolate, special, stats

#: G in kpc (km/s)^2 / Msun: G = 6.67430e-11 m^3 kg^-1 s^-2 (CODATA 2018),
#: Msun = 1.98840987e30 kg (IAU 2015 nominal GM_sun / G), kpc = 3.0856775814913673e19 m.
G = 6.67430e-11 * 1.98840987e30 / 3.0856775814913673e19 / 1e6

EPSREL = 1e-11


def quad(f, a, b, points=None, epsrel=EPSREL):
    """scipy quad with a relative tolerance only (the integrands are positive)."""
    value, _ = integrate.quad(f, a, b, points=points, epsabs=0.0, epsrel=epsrel, limit=500)
    return value


# ------------------------------------------------------------------ profiles


class SersicLight:
    """Sérsic light (or stellar mass) of total M, effective radius r_eff, index n."""

    def __init__(self, mass, r_eff, n):
        self.mass, self.r_eff, self.n = float(mass), float(r_eff), float(n)
        self.b = float(special.gammaincinv(2.0 * n, 0.5))
        self.sigma_e = (
            mass
            * math.exp(2.0 * n * math.log(self.b) - self.b - special.gammaln(2.0 * n))
            / (2.0 * math.pi * n * r_eff**2)
        )

    def surface_density(self, R):
        return self.sigma_e * math.exp(-self.b * ((R / self.r_eff) ** (1.0 / self.n) - 1.0))

    def log_density(self, r):
        """ln nu(r) by the Abel integral, with exp(-b q_r) factored out."""
        b, n = self.b, self.n
        q_r = (r / self.r_eff) ** (1.0 / n)

        def integrand(t):
            R = r * math.cosh(t)
            q = (R / self.r_eff) ** (1.0 / n)
            return math.exp(-b * (q - q_r)) * b * q / (n * R)

        # The integrand falls by e^-60 once b (q - q_r) = 60.
        R_far = self.r_eff * ((q_r + 60.0 / b) ** n)
        t_max = math.acosh(max(R_far / r, 1.0 + 1e-12))
        pts = [t for t in (0.1, 0.5, 1.0, 2.0, 4.0, 8.0) if t < t_max]
        value = quad(integrand, 0.0, t_max, points=pts or None)
        return math.log(self.sigma_e / math.pi) - b * (q_r - 1.0) + math.log(value)


class HernquistSphere:
    """Hernquist (1990) sphere: rho = M a / (2 pi r (r + a)^3), M(<r) = M r^2 / (r + a)^2."""

    def __init__(self, mass, a):
        self.mass, self.a = float(mass), float(a)

    def log_density(self, r):
        return math.log(self.mass * self.a / (2.0 * math.pi * r * (r + self.a) ** 3))

    def enclosed_mass(self, r):
        return self.mass * r**2 / (r + self.a) ** 2

    def surface_density(self, R):
        s = R / self.a
        if s < 1.0:
            X = math.acosh(1.0 / s) / math.sqrt(1.0 - s * s)
        elif s > 1.0:
            X = math.acos(1.0 / s) / math.sqrt(s * s - 1.0)
        else:
            return self.mass / (2.0 * math.pi * self.a**2) * 4.0 / 15.0
        return (
            self.mass / (2.0 * math.pi * self.a**2) * ((2.0 + s * s) * X - 3.0) / (1.0 - s * s) ** 2
        )


def nfw_mass(r, rho_s, r_s):
    """M(<r) = 4 pi rho_s r_s^3 [ln(1 + x) - x / (1 + x)], with a series for small x."""
    x = r / r_s
    if x < 1e-3:
        m = sum((-1) ** k * (k - 1) / k * x**k for k in range(2, 10))
    else:
        m = math.log1p(x) - x / (1.0 + x)
    return 4.0 * math.pi * rho_s * r_s**3 * m


# ------------------------------------------------------------------ anisotropy


def anisotropy_functions(kind, value):
    """(beta(r), ln f(r)) for 'isotropic', 'constant' (beta) or 'om' (r_a)."""
    if kind == "isotropic":
        return (lambda r: 0.0), (lambda r: 0.0)
    if kind == "constant":
        return (lambda r: value), (lambda r: 2.0 * value * math.log(r))
    if kind == "om":
        return (lambda r: r * r / (r * r + value * value)), (lambda r: math.log1p((r / value) ** 2))
    raise ValueError(kind)


# ------------------------------------------------------------------ the model


class JeansModel:
    """Jeans dispersions of a spherical tracer in a spherical mass, by quad.

    Parameters
    ----------
    tracer : SersicLight or HernquistSphere
        The tracer (its log_density and surface_density).
    extra_mass : callable r -> M(<r), optional
        Mass added to the stellar mass (e.g. an NFW halo).
    stellar : SersicLight or HernquistSphere, optional
        The stellar mass (defaults to the tracer, i.e. light traces stars).
    anisotropy : (kind, value)
    r_lo, r_hi : float
        The tabulation range (kpc); below r_lo nu and M are power laws.  For a
        Sérsic tracer r_hi is lowered to where b_n (r/R_eff)^(1/n) = 400.
    """

    H = 0.03

    def __init__(
        self,
        tracer,
        extra_mass=None,
        stellar=None,
        anisotropy=("isotropic", 0.0),
        r_lo=1e-5,
        r_hi=1e5,
    ):
        if isinstance(tracer, SersicLight):
            # Stop where the light has fallen by e^-400 (nu sigma^2 would underflow).
            r_hi = min(r_hi, tracer.r_eff * (400.0 / tracer.b) ** tracer.n)
        self.tracer = tracer
        self.stellar = tracer if stellar is None else stellar
        self.extra_mass = extra_mass
        self.beta, self.log_f = anisotropy_functions(*anisotropy)
        n = round(math.log(r_hi / r_lo) / self.H) + 1
        self.x = np.linspace(math.log(r_lo), math.log(r_hi), n)
        r = np.exp(self.x)
        self.log_nu = np.array([tracer.log_density(v) for v in r])
        self._nu_spline = interpolate.CubicSpline(self.x, self.log_nu)
        self.log_mass = np.log(self._stellar_mass(r) + self._extra(r))
        self._mass_spline = interpolate.CubicSpline(self.x, self.log_mass)
        self._tabulate_pressure()

    # -- helpers
    def nu(self, r):
        return math.exp(float(self._nu_spline(math.log(r))))

    def mass(self, r):
        return math.exp(float(self._mass_spline(math.log(r))))

    def _extra(self, r):
        if self.extra_mass is None:
            return np.zeros_like(r)
        return np.array([self.extra_mass(v) for v in r])

    def _stellar_mass(self, r):
        if hasattr(self.stellar, "enclosed_mass"):
            return np.array([self.stellar.enclosed_mass(v) for v in r])
        if self.stellar is self.tracer:
            spline = self._nu_spline
            log_nu0 = self.log_nu[0]
            slope0 = float(spline(self.x[0], 1))
        else:
            log_nu = np.array([self.stellar.log_density(v) for v in np.exp(self.x)])
            spline = interpolate.CubicSpline(self.x, log_nu)
            log_nu0, slope0 = log_nu[0], float(spline(self.x[0], 1))
        pieces = [
            quad(lambda u: 4.0 * math.pi * math.exp(float(spline(u)) + 3.0 * u), a, b)
            for a, b in zip(self.x[:-1], self.x[1:], strict=True)
        ]
        inner = 4.0 * math.pi * math.exp(log_nu0 + 3.0 * self.x[0]) / (3.0 + slope0)
        return inner + np.concatenate([[0.0], np.cumsum(pieces)])

    def _tabulate_pressure(self):
        """ln y, y = f nu sigma_r^2 = int_r^inf f nu G M / s^2 ds, on the grid."""

        def log_g(u):
            r = math.exp(u)
            return (
                self.log_f(r)
                + float(self._nu_spline(u))
                + float(self._mass_spline(u))
                + math.log(G)
                - u
            )

        pieces = [
            quad(lambda u: math.exp(log_g(u)), a, b)
            for a, b in zip(self.x[:-1], self.x[1:], strict=True)
        ]
        end = log_g(self.x[-1])
        slope = (end - log_g(self.x[-1] - self.H)) / self.H
        tail = math.exp(end) / max(-slope, 0.1)
        y = tail + np.concatenate([np.cumsum(pieces[::-1])[::-1], [0.0]])
        self._log_p = interpolate.CubicSpline(
            self.x, np.log(y) - np.array([self.log_f(v) for v in np.exp(self.x)])
        )

    # -- public quantities
    def pressure(self, r):
        """nu sigma_r^2 at r."""
        return math.exp(float(self._log_p(math.log(r))))

    def sigma_r(self, r):
        return math.sqrt(self.pressure(r) / self.nu(r))

    def los_moment(self, R):
        """Sigma sigma_los^2 at R (r = R cosh t, so dr / sqrt(r^2 - R^2) = dt)."""

        def integrand(t):
            c = math.cosh(t)
            r = R * c
            return (1.0 - self.beta(r) / (c * c)) * self.pressure(r) * r

        t_max = math.acosh(math.exp(self.x[-1]) / R)
        pts = [t for t in (0.05, 0.2, 0.5, 1.0, 2.0, 3.0, 4.0, 6.0, 8.0) if t < t_max]
        return 2.0 * quad(integrand, 0.0, t_max, points=pts)

    def sigma_los(self, R):
        return math.sqrt(self.los_moment(R) / self.tracer.surface_density(R))

    @functools.cached_property
    def _moment_spline(self):
        x = np.linspace(math.log(1e-4 * self.tracer_scale), math.log(60.0 * self.tracer_scale), 400)
        return interpolate.CubicSpline(x, np.log([self.los_moment(math.exp(v)) for v in x]))

    @property
    def tracer_scale(self):
        return getattr(self.tracer, "r_eff", getattr(self.tracer, "a", 1.0))

    def moment_interp(self, R):
        """Sigma sigma_los^2 from a spline of ln(moment) in ln R (1e-4 to 60 scale radii)."""
        return math.exp(float(self._moment_spline(math.log(R))))

    def _averaged(self, weight, r_max, points):
        num = quad(lambda R: self.moment_interp(R) * weight(R) * R, 0.0, r_max, points=points)
        den = quad(
            lambda R: self.tracer.surface_density(R) * weight(R) * R, 0.0, r_max, points=points
        )
        return math.sqrt(num / den)

    def aperture(self, radius, seeing_fwhm):
        """Luminosity-weighted sigma inside a circle of radius A after Gaussian seeing."""
        s = seeing_fwhm / math.sqrt(8.0 * math.log(2.0))
        if s == 0.0:
            return self._averaged(lambda R: 1.0, radius, [1e-3 * radius, 0.1 * radius])

        def weight(R):
            return stats.ncx2.cdf((radius / s) ** 2, 2, (R / s) ** 2)

        r_max = radius + 9.0 * s
        pts = sorted(
            {
                1e-3 * radius,
                0.1 * radius,
                max(radius - 3 * s, 0.05 * radius),
                radius,
                radius + 3 * s,
            }
        )
        return self._averaged(weight, r_max, [p for p in pts if p < r_max])

    def central_seeing_limit(self, seeing_fwhm):
        """lim A -> 0: Sigma sigma^2 and Sigma weighted by the PSF exp(-R^2 / 2 s^2)."""
        s = seeing_fwhm / math.sqrt(8.0 * math.log(2.0))
        return self._averaged(
            lambda R: math.exp(-0.5 * (R / s) ** 2), 10.0 * s, [0.01 * s, s, 3 * s]
        )

    def slit(self, half_width, half_length, seeing_fwhm):
        """Luminosity-weighted sigma in a centred slit: 2-D Cartesian integrals (one quadrant)."""
        s = seeing_fwhm / math.sqrt(8.0 * math.log(2.0))
        if s == 0.0:

            def trans(x, y):
                return 1.0

            xm, ym = half_width, half_length
        else:

            def p(x, h):
                return 0.5 * (
                    special.erf((h - x) / (math.sqrt(2) * s))
                    + special.erf((h + x) / (math.sqrt(2) * s))
                )

            def trans(x, y):
                return p(x, half_width) * p(y, half_length)

            xm, ym = half_width + 9.0 * s, half_length + 9.0 * s

        def radial(x, y):
            return max(math.hypot(x, y), 1e-6 * self.tracer_scale)

        opts = dict(epsabs=0.0, epsrel=1e-9)
        num = integrate.dblquad(
            lambda y, x: self.moment_interp(radial(x, y)) * trans(x, y), 0.0, xm, 0.0, ym, **opts
        )[0]
        den = integrate.dblquad(
            lambda y, x: self.tracer.surface_density(radial(x, y)) * trans(x, y),
            0.0,
            xm,
            0.0,
            ym,
            **opts,
        )[0]
        return math.sqrt(num / den)

    def virial_total(self):
        """sigma^2 averaged over all the light: (1/3) int nu G M / r dV / int nu dV.

        For any anisotropy, int Sigma sigma_los^2 dA = (1/3) int nu <v^2> dV and
        the virial theorem of a tracer in a static potential gives
        int nu <v^2> dV = int nu G M(r) / r dV (Binney & Tremaine 2008, eq. 4.249).
        """
        num = quad(
            lambda u: math.exp(float(self._nu_spline(u)) + float(self._mass_spline(u)) + 2.0 * u),
            self.x[0],
            self.x[-1],
            points=np.arange(-8, 10, 1.0),
        )
        den = quad(
            lambda u: math.exp(float(self._nu_spline(u)) + 3.0 * u),
            self.x[0],
            self.x[-1],
            points=np.arange(-8, 10, 1.0),
        )
        return math.sqrt(G * num / (3.0 * den))
