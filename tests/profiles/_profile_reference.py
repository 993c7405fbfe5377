"""Independent references for the profile tests (comparison to outside truth).

Nothing here imports lensinfer: the published closed forms are re-typed from the
papers in plain numpy / ``math``, and every integral is done by scipy's adaptive
``quad`` (QUADPACK) with a tight relative tolerance, on sub-intervals chosen so
that each piece is smooth and the pieces sum to better than the tolerances the
tests assert.

Accuracy of the quadrature references (checked by ``test_consistency.py::
test_reference_quadrature_reproduces_textbook_closed_forms`` against the
singular isothermal sphere, the Hernquist sphere and the NFW halo, whose three
integrals are known in closed form, and by ``test_sersic.py::
test_reference_deprojection_reproduces_the_exact_cases`` for the Abel
deprojection): better than 1e-12 relative (asserted; ~1e-14 measured), a
factor >= 10 below the 1e-11 the closed-form consistency tests assert and four
orders of magnitude below the documented 1e-8 / 1e-7 of lensinfer's own
quadratures.  The mpmath helper ``wright_brainerd_mp`` is imported lazily.
"""

import itertools
import math

import numpy as np
from scipy import integrate, special

#: Relative tolerance requested from every quad call (absolute tolerance 0).
#: All integrands are of one sign, so the summed pieces keep this relative error.
EPSREL = 1e-13

# ---------------------------------------------------------------- quadrature


def quad(f, a, b, epsrel=EPSREL):
    """scipy quad with a pure relative tolerance; returns the value only."""
    value, _ = integrate.quad(f, a, b, epsabs=0.0, epsrel=epsrel, limit=400)
    return value


def quad_pieces(f, edges, epsrel=EPSREL):
    """Sum of quad over consecutive intervals [edges[i], edges[i+1]] (math.fsum)."""
    return math.fsum(quad(f, a, b, epsrel) for a, b in itertools.pairwise(edges))


def _log_edges(top, depth, width=1.0):
    """Edges from top - depth up to top in steps of ``width`` (log-radius grid)."""
    n = max(math.ceil(depth / width), 1)
    return list(np.linspace(top - depth, top, n + 1))


def volume_mass(rho, r, depth=80.0):
    """M(<r) = 4 pi int_0^r rho(s) s^2 ds, integrated in u = ln s.

    The integrand rho(e^u) e^{3u} falls at least as e^{u} below the centre for
    an inner slope <= 2, so stopping ``depth`` = 80 e-folds below r leaves
    e^{-80} ~ 2e-35 of the mass out.  Unit-length pieces in u keep every piece
    smooth (the profiles change slope over about one e-fold).
    """
    edges = _log_edges(math.log(r), depth)
    return 4.0 * math.pi * quad_pieces(lambda u: rho(math.exp(u)) * math.exp(3.0 * u), edges)


def area_mass(sigma, R, depth=80.0):
    """M_2D(<R) = 2 pi int_0^R Sigma(R') R' dR', integrated in u = ln R'."""
    edges = _log_edges(math.log(R), depth)
    return 2.0 * math.pi * quad_pieces(lambda u: sigma(math.exp(u)) * math.exp(2.0 * u), edges)


def area_mass_vectorised(sigma, R, depth):
    """M_2D(<R_i) = 2 pi int_0^R_i Sigma R' dR' for an array of R_i at once.

    With R' = R_i e^{-v}: 2 pi R_i^2 int_0^depth Sigma(R_i e^{-v}) e^{-2v} dv, so one
    call of the vectorised ``sigma`` per quadrature node serves every R_i
    (scipy.integrate.quad_vec, the vector-valued adaptive Gauss-Kronrod rule,
    with break points at every unit of v).  ``sigma`` may be any callable on
    arrays (a jitted lensinfer method).  The integrand falls as
    e^{-(3 - inner slope) v}: ``depth`` must make that negligible.  Each
    component is normalised by its own value at v = 0 so that the max-norm
    tolerance of quad_vec is a relative tolerance for every R_i.
    """
    R = np.asarray(R, dtype=float)
    norm = np.asarray(sigma(R), dtype=float) * R**2

    def f(v):
        return np.asarray(sigma(R * math.exp(-v)), dtype=float) * R**2 * math.exp(-2.0 * v) / norm

    value, _ = integrate.quad_vec(
        f, 0.0, depth, epsabs=0.0, epsrel=1e-12, points=list(np.arange(1.0, depth)), limit=2000
    )
    return 2.0 * math.pi * value * norm


def line_of_sight(rho, R, scale, outer_slope):
    """Sigma(R) = 2 int_0^inf rho(sqrt(R^2 + z^2)) dz with z = R sinh t.

    2 R int_0^inf rho(R cosh t) cosh t dt.  The integrand is flat in t until
    R cosh t ~ scale, then falls as e^{-(outer_slope - 1) t}; the pieces are one
    unit of t wide out to ``t_scale + 45 / (outer_slope - 1)``, beyond which a
    fraction below e^{-45} ~ 3e-20 of the integral is left out.
    """
    t_scale = math.acosh(max(scale / R, 1.0))
    t_end = t_scale + 45.0 / (outer_slope - 1.0)
    edges = list(np.linspace(0.0, t_end, math.ceil(t_end) + 1))

    def f(t):
        return rho(R * math.cosh(t)) * math.cosh(t)

    return 2.0 * R * quad_pieces(f, edges)


def cylinder_mass_from_density(rho, R, scale, outer_slope):
    """M_2D(<R) = 4 pi int_0^inf rho(r) r^2 w(r) dr, w = 1 (r < R), 1 - sqrt(1 - R^2/r^2) (r > R).

    w is the fraction of the shell of radius r that lies inside the cylinder of
    radius R (elementary geometry: the two polar caps of half-angle
    arcsin(R/r)).  It is an independent route to the area integral of Sigma
    for profiles without a closed-form Sigma.  Beyond R we use r = R cosh t,
    with 1 - tanh t = 2/(e^{2t} + 1) to avoid cancellation.
    """
    inner = volume_mass(rho, R)
    t_scale = math.acosh(max(scale / R, 1.0))
    t_end = t_scale + 45.0 / (outer_slope - 1.0)
    edges = list(np.linspace(0.0, t_end, math.ceil(t_end) + 1))

    def f(t):
        ch = math.cosh(t)
        return rho(R * ch) * ch**2 * math.sinh(t) * 2.0 / (math.exp(2.0 * t) + 1.0)

    outer = quad_pieces(f, edges)
    return inner + 4.0 * math.pi * R**3 * outer


# ------------------------------------------------------- published closed forms


def nfw_density(r, rho_s, r_s):
    """Navarro, Frenk & White (1997, ApJ 490, 493), eq. 3 (from memory)."""
    x = r / r_s
    return rho_s / (x * (1.0 + x) ** 2)


def nfw_mass(r, rho_s, r_s):
    """NFW (1997) enclosed mass 4 pi rho_s r_s^3 [ln(1+x) - x/(1+x)] (textbook; from memory)."""
    x = r / r_s
    return 4.0 * math.pi * rho_s * r_s**3 * (math.log1p(x) - x / (1.0 + x))


def wright_brainerd_sigma(R, rho_s, r_s):
    """Wright & Brainerd (2000, ApJ 534, 34), eq. 11 (from memory; rho_s = delta_c rho_c).

    Sigma = 2 r_s rho_s / (x^2 - 1) [1 - 2/sqrt(1-x^2) artanh sqrt((1-x)/(1+x))]   x < 1
          = 2 r_s rho_s / 3                                                      x = 1
          = 2 r_s rho_s / (x^2 - 1) [1 - 2/sqrt(x^2-1) arctan sqrt((x-1)/(1+x))]   x > 1
    """
    x = R / r_s
    if x < 1.0:
        f = 1.0 - 2.0 / math.sqrt(1.0 - x**2) * math.atanh(math.sqrt((1.0 - x) / (1.0 + x)))
        return 2.0 * r_s * rho_s / (x**2 - 1.0) * f
    if x == 1.0:
        return 2.0 * r_s * rho_s / 3.0
    f = 1.0 - 2.0 / math.sqrt(x**2 - 1.0) * math.atan(math.sqrt((x - 1.0) / (1.0 + x)))
    return 2.0 * r_s * rho_s / (x**2 - 1.0) * f


def wright_brainerd_cylinder_mass(R, rho_s, r_s):
    """Cylinder mass of the NFW halo, Wright & Brainerd (2000), from their eq. 13 (from memory).

    Their mean surface density inside x times pi R^2:
    M_2D = 4 pi rho_s r_s^3 [ln(x/2) + 2/sqrt(1-x^2) artanh sqrt((1-x)/(1+x))]   x < 1
         = 4 pi rho_s r_s^3 [1 + ln(1/2)]                                       x = 1
         = 4 pi rho_s r_s^3 [ln(x/2) + 2/sqrt(x^2-1) arctan sqrt((x-1)/(1+x))]   x > 1
    """
    x = R / r_s
    pre = 4.0 * math.pi * rho_s * r_s**3
    if x < 1.0:
        return pre * (
            math.log(x / 2.0)
            + 2.0 / math.sqrt(1.0 - x**2) * math.atanh(math.sqrt((1.0 - x) / (1.0 + x)))
        )
    if x == 1.0:
        return pre * (1.0 + math.log(0.5))
    return pre * (
        math.log(x / 2.0)
        + 2.0 / math.sqrt(x**2 - 1.0) * math.atan(math.sqrt((x - 1.0) / (1.0 + x)))
    )


def wright_brainerd_mp(x, dps=40):
    """Wright & Brainerd (2000) eqs. 11 and 13 brackets in mpmath (float64 out).

    Returns (Sigma / (2 rho_s r_s), M_2D / (4 pi rho_s r_s^3)), the same
    artanh / arctan branches as the numpy versions above, evaluated with
    ``dps`` digits so that the x -> 0 cancellation of the cylinder mass
    (ln(x/2) + artanh term ~ x^2 ln x) and the 0/0 near x = 1 cost nothing.
    x = 1 uses the paper's x = 1 values (1/3 and 1 - ln 2).
    """
    import mpmath

    with mpmath.workdps(dps):
        x = mpmath.mpf(x)
        if x == 1:
            return 1.0 / 3.0, float(1 - mpmath.log(2))
        if x < 1:
            q = mpmath.sqrt(1 - x**2)
            g = 2 / q * mpmath.atanh(mpmath.sqrt((1 - x) / (1 + x)))
        else:
            q = mpmath.sqrt(x**2 - 1)
            g = 2 / q * mpmath.atan(mpmath.sqrt((x - 1) / (1 + x)))
        return float((1 - g) / (x**2 - 1)), float(mpmath.log(x / 2) + g)


def hernquist_x(s):
    """Hernquist (1990, ApJ 356, 359), eq. 33: X(s) (from memory).

    X = (1 - s^2)^(-1/2) sech^-1(s) for s <= 1, (s^2 - 1)^(-1/2) sec^-1(s) for s >= 1,
    written here as ln[(1 + sqrt(1 - s^2)) / s] and arctan(sqrt(s^2 - 1)).
    """
    if s < 1.0:
        q = math.sqrt(1.0 - s**2)
        return math.log((1.0 + q) / s) / q
    if s == 1.0:
        return 1.0
    q = math.sqrt(s**2 - 1.0)
    return math.atan(q) / q


def hernquist_density(r, mass, a):
    """Hernquist (1990), eq. 2: rho = M a / (2 pi r (r + a)^3)."""
    return mass * a / (2.0 * math.pi * r * (r + a) ** 3)


def hernquist_mass(r, mass, a):
    """Hernquist (1990), eq. 3: M(r) = M r^2 / (r + a)^2."""
    return mass * r**2 / (r + a) ** 2


def hernquist_sigma(R, mass, a):
    """Hernquist (1990), eq. 32: Sigma = M / (2 pi a^2 (1 - s^2)^2) [(2 + s^2) X(s) - 3]."""
    s = R / a
    return mass / (2.0 * math.pi * a**2 * (1.0 - s**2) ** 2) * ((2.0 + s**2) * hernquist_x(s) - 3.0)


def hernquist_cylinder_mass(R, mass, a):
    """Hernquist (1990), eq. 37: M_p(s) = M s^2 [X(s) - 1] / (1 - s^2)."""
    s = R / a
    return mass * s**2 * (hernquist_x(s) - 1.0) / (1.0 - s**2)


def jaffe_density(r, mass, a):
    """Jaffe (1983, MNRAS 202, 995), eq. 1 (from memory): rho = M a / (4 pi r^2 (r + a)^2)."""
    return mass * a / (4.0 * math.pi * r**2 * (r + a) ** 2)


def jaffe_mass(r, mass, a):
    """Jaffe (1983), eq. 2/3 (from memory): M(r) = M r / (r + a)."""
    return mass * r / (r + a)


def gnfw_density(r, rho_s, r_s, gamma):
    """Zhao (1996, MNRAS 278, 488) (alpha, beta, gamma) = (1, 3, gamma) profile."""
    x = r / r_s
    return rho_s / (x**gamma * (1.0 + x) ** (3.0 - gamma))


def sis_density(r, sigma, G):
    """Singular isothermal sphere, sigma^2 / (2 pi G r^2) (Binney & Tremaine 2008, eq. 4.103)."""
    return sigma**2 / (2.0 * math.pi * G * r**2)


def cored_isothermal_density(r, sigma, rc, G):
    """Keeton (2001, astro-ph/0102341), sect. 3.1, softened isothermal sphere.

    rho = sigma^2 / (2 pi G (r^2 + rc^2)).
    """
    return sigma**2 / (2.0 * math.pi * G * (r**2 + rc**2))


def power_law_density(r, rho0, r0, gamma):
    """rho = rho0 (r / r0)^-gamma."""
    return rho0 * (r / r0) ** (-gamma)


# ------------------------------------------------------------------- Sersic


def sersic_b_exact(n):
    """b_n from gamma(2n, b) = Gamma(2n) / 2, by scipy's inverse regularised gamma."""
    return float(special.gammaincinv(2.0 * n, 0.5))


def ciotti_bertin_b(n):
    """Ciotti & Bertin (1999, A&A 352, 447), eq. 18, asymptotic b_n (re-typed from the paper).

    b = 2n - 1/3 + 4/(405 n) + 46/(25515 n^2) + 131/(1148175 n^3) - 2194697/(30690717750 n^4)
    """
    return (
        2.0 * n
        - 1.0 / 3.0
        + 4.0 / 405.0 / n
        + 46.0 / 25515.0 / n**2
        + 131.0 / 1148175.0 / n**3
        - 2194697.0 / 30690717750.0 / n**4
    )


class SersicReference:
    """The analytic projected Sersic profile and its scipy Abel deprojection.

    Sigma(R) = Sigma_e exp(-b [(R/R_e)^(1/n) - 1]) with
    Sigma_e = M b^(2n) / (2 pi n R_e^2 e^b Gamma(2n)) (Graham & Driver 2005, PASA 22,
    118, eqs. 1 and 4, from memory); the deprojection is Binney & Tremaine (2008,
    eq. B.72): rho(r) = -(1/pi) int_r^inf Sigma'(R) / sqrt(R^2 - r^2) dR, with
    R = r cosh t so that dR / sqrt(R^2 - r^2) = dt and the end-point singularity
    disappears.
    """

    def __init__(self, mass, r_eff, n):
        self.mass, self.r_eff, self.n = float(mass), float(r_eff), float(n)
        self.b = sersic_b_exact(n)
        n, b = self.n, self.b
        self.log_sigma_e = (
            math.log(mass)
            + 2.0 * n * math.log(b)
            - b
            - math.lgamma(2.0 * n)
            - math.log(2.0 * math.pi * n * r_eff**2)
        )

    def sigma(self, R):
        q = (R / self.r_eff) ** (1.0 / self.n)
        return math.exp(self.log_sigma_e - self.b * (q - 1.0))

    def dsigma(self, R):
        """dSigma/dR = -Sigma b q / (n R), q = (R/R_e)^(1/n)."""
        q = (R / self.r_eff) ** (1.0 / self.n)
        return -math.exp(self.log_sigma_e - self.b * (q - 1.0)) * self.b * q / (self.n * R)

    def cylinder_mass(self, R):
        """M gamma(2n, b (R/R_e)^(1/n)) / Gamma(2n) (Graham & Driver 2005, eq. 2)."""
        return self.mass * float(
            special.gammainc(2.0 * self.n, self.b * (R / self.r_eff) ** (1.0 / self.n))
        )

    def _t_end(self, r):
        # Sigma' has fallen by e^-45 (relative to its value at r) where
        # b (R/R_e)^(1/n) has grown by 45.
        q = self.b * (r / self.r_eff) ** (1.0 / self.n)
        r_far = self.r_eff * ((q + 45.0) / self.b) ** self.n
        return math.acosh(r_far / r)

    def density(self, r, epsrel=EPSREL):
        """Abel deprojection, -(1/pi) int_0^T Sigma'(r cosh t) dt, in unit pieces of t."""
        t_end = self._t_end(r)
        edges = list(np.linspace(0.0, t_end, math.ceil(t_end) + 1))
        return -quad_pieces(lambda t: self.dsigma(r * math.cosh(t)), edges, epsrel) / math.pi

    def enclosed_mass(self, r, depth=None):
        """4 pi int_0^r rho s^2 ds by quad of the Abel density (nested quadrature).

        rho s^3 falls at least as s^2 towards the centre, so 22 e-folds in ln s
        below r (a fraction e^-44 of the mass) is ample.  Both levels use
        epsrel = 1e-11 (the nested integral is the slowest reference; its
        accuracy, ~1e-12, is checked against the exact n = 1/2 case).
        """
        edges = _log_edges(math.log(r), 22.0 if depth is None else depth, width=2.0)

        def f(u):
            return self.density(math.exp(u), 1e-11) * math.exp(3.0 * u)

        return 4.0 * math.pi * quad_pieces(f, edges, 1e-11)
