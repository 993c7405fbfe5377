"""The dark matter of a halo after the galaxy has formed: the response solve."""

from __future__ import annotations

import dataclasses

import jax
import jax.numpy as jnp
import numpy as np

from lensinfer import _spline
from lensinfer.contraction._radius import overdensity_radius
from lensinfer.contraction.prescriptions import resolve_prescription
from lensinfer.halo import virial_overdensity
from lensinfer.profiles.base import SphericalProfile, as_float, as_profile

__all__ = ["ContractedHalo", "ScaledProfile", "contract_halo"]

#: The response grid: final radii from GRID_LO to GRID_HI times r200c, uniform
#: in ln r.  0.01–10 R_eff of a massive lens lies at ~1e-4–0.1 r200c, deep
#: inside; the tests ``test_grid_convergence`` and ``test_grid_ends_do_not_matter``
#: show that widening the grid or doubling its density changes the masses by
#: < 1e-6 for nu >= 0 (every named prescription) and < 3e-5 for -0.3 <= nu < 0.
GRID_LO = 1.0e-6
GRID_HI = 10.0
GRID_N = 96
_GRID_H = float(np.log(GRID_HI / GRID_LO) / (GRID_N - 1))
# numpy module constants (a jnp array made during a trace would leak it).
_GRID_X = np.log(GRID_LO) + _GRID_H * np.arange(GRID_N)
_SPLINE_S = _spline.second_derivative_operator(GRID_N, _GRID_H)

#: Newton iterations (gradient-stopped) of the per-shell solve before the
#: differentiable implicit step.  From the power-law initial guess, 4 steps
#: reach |F| < 1e-12 on random draws of a broad box (12 < log10 M200c < 14.5,
#: 2 < c < 20, 10.5 < log10 M* < 12, -0.45 < nu < 2, all prescriptions); 6
#: leave a margin, and a test checks the residual on such draws.
N_NEWTON = 6

#: Newton steps (gradient-stopped) of the virial-radius solve before its
#: differentiable step.  From r200c (200 / Delta_vir)^(1/3), 3 steps reach
#: |d ln r| < 2e-14 on 2000 random NFW and generalised-NFW halos (11 < log10
#: M200c < 15.5, 1 < c < 30, 0 < z < 3, inner slope 0-1.9; measured while
#: writing this); 6 leave a margin, and a test checks r_vir against scipy.
#: Cost: ~0.5 us per call jitted on one CPU core (30 steps: ~2 us).
N_VIRIAL_STEPS = 6

#: Gauss–Legendre nodes of the projection of the contraction's mass change,
#: int dM(R cosh t) sech^2 t dt: 32 on [0, 4] (where sech^2 t > 1e-3) and 16
#: from there to the end of the grid.
_T_SPLIT = 4.0
_PX1, _PW1 = np.polynomial.legendre.leggauss(32)
_PX2, _PW2 = np.polynomial.legendre.leggauss(16)


@jax.tree_util.register_dataclass
@dataclasses.dataclass(frozen=True)
class ScaledProfile(SphericalProfile):
    """A profile times a constant factor (the unresponsive halo's dark matter)."""

    profile: SphericalProfile
    factor: jax.Array

    def density(self, r):
        return self.factor * self.profile.density(r)

    def enclosed_mass(self, r):
        return self.factor * self.profile.enclosed_mass(r)

    def surface_density(self, R):
        return self.factor * self.profile.surface_density(R)

    def projected_mass(self, R):
        return self.factor * self.profile.projected_mass(R)


def _orbit_radius(r, r_orbit, a, w):
    r"""Orbit-averaged radius :math:`\bar r = A\,r_{\rm orb}\,(r/r_{\rm orb})^w`.

    Gnedin et al. (2004, ApJ 616, 16, eq. 3 area; from memory) fit the
    orbit-averaged radius of particles now at r in their simulated halos with
    this power law normalised by the halo's virial radius,
    :math:`r_{\rm orb} = r_{\rm vir}` (Bryan & Norman 1998 overdensity), with
    A = 0.85, w = 0.8; Gnedin et al. (2011, arXiv:1108.5736) refit A = 1.6,
    w = 0.8 (from memory).  Returns r itself when A is None (rbar = r).
    """
    if a is None:
        return r
    return a * r_orbit * jnp.exp(w * jnp.log(r / r_orbit))


def _orbit_radius_from_log(x, log_r_orbit, a, w):
    """rbar for r = exp(x), with a single exp (no pow: pow costs ~5 exps on CPU)."""
    if a is None:
        return jnp.exp(x)
    return jnp.exp(jnp.log(a) + log_r_orbit + w * (x - log_r_orbit))


def _virial_radius(halo, z, cosmology, r200c):
    r"""The halo's virial radius r_vir in kpc (Bryan & Norman 1998 overdensity).

    .. math::

        M(<r_{\rm vir}) = \frac{4\pi}{3}\,\Delta_{\rm vir}(z)\,\rho_c(z)\,
            r_{\rm vir}^3,

    with :math:`\Delta_{\rm vir}` relative to the critical density from Bryan &
    Norman (1998, ApJ 495, 80, eq. 6), :func:`lensinfer.halo.virial_overdensity`.
    Newton in ln r from :math:`r_{200c}\,(200/\Delta_{\rm vir})^{1/3}` (the
    root if no mass lay beyond r200c), ``N_VIRIAL_STEPS`` gradient-stopped
    steps, then one differentiable step
    (:func:`~lensinfer.contraction._radius.overdensity_radius`).
    """
    delta = virial_overdensity(z, cosmology)
    threshold = delta * cosmology.critical_density(z)
    r_guess = r200c * jnp.cbrt(200.0 / delta)
    return overdensity_radius(halo, threshold, r_guess, n_steps=N_VIRIAL_STEPS)


def _solve_initial_radii(r_f, m_gal_f, halo, r_orbit, f_gal, a, w, nu):
    r"""ln r_i for each final radius r_f (vectorised over the grid).

    Solves, for x = ln r_i,

    .. math::

        F(x) = \ln r_f - x + \nu \ln\left[\frac{M_{gal}(\bar r_f)}{M_i(\bar r_i)}
               + 1 - f\right] = 0,

    which is strictly decreasing in x for nu > -1/2 (unique root); see
    :func:`contract_halo` for the validated range nu >= -0.3.  Newton
    steps run on gradient-stopped inputs, then one Newton step on the live
    inputs gives the exact implicit derivative with respect to every halo,
    galaxy and response parameter.
    """
    log_r_f = jnp.log(r_f)

    def resid(x, halo, m_gal_f, f_gal, nu, log_r_orbit):
        m_i = halo.enclosed_mass(_orbit_radius_from_log(x, log_r_orbit, a, w))
        return log_r_f - x + nu * jnp.log(m_gal_f / m_i + 1.0 - f_gal)

    args = (halo, m_gal_f, f_gal, nu, jnp.log(r_orbit))
    args_sg = jax.lax.stop_gradient(args)

    def dresid(x, args):
        return jax.jvp(lambda v: resid(v, *args), (x,), (jnp.ones_like(x),))

    # Start from r_i = r_f (M_f / M_i)^nu with M_i a local power law of slope
    # s = dlnM_i/dlnr at r_f: x0 = ln r_f + nu ln(M_f / M_i(r_f)) / (1 + nu s).
    # From there Newton reaches |F| < 1e-12 in 4 steps over the tested box.
    halo_sg, m_gal_sg, f_sg, nu_sg, log_r_orbit_sg = args_sg

    def log_m_i(v):
        return jnp.log(halo_sg.enclosed_mass(_orbit_radius_from_log(v, log_r_orbit_sg, a, w)))

    lm_i0, s0 = jax.jvp(log_m_i, (log_r_f,), (jnp.ones_like(r_f),))
    x = log_r_f + nu_sg * jnp.log(m_gal_sg / jnp.exp(lm_i0) + 1.0 - f_sg) / (1.0 + nu_sg * s0)
    x = jax.lax.stop_gradient(x)

    # Unrolled (a Python loop): XLA fuses the iterations, ~5x faster than fori_loop.
    for _ in range(N_NEWTON):
        val, slope = dresid(x, args_sg)
        x = x - jnp.clip(val / slope, -3.0, 3.0)
    x = jax.lax.stop_gradient(x)
    val, slope = dresid(x, args)
    return x - val / jax.lax.stop_gradient(slope)


@jax.tree_util.register_dataclass
@dataclasses.dataclass(frozen=True)
class ContractedHalo(SphericalProfile):
    r"""Dark matter after the halo's response to the galaxy (a spherical profile).

    Built by :func:`contract_halo`; holds the final enclosed dark-matter mass
    on a grid of final radii (uniform in ln r from 1e-6 to 10 r200c, 96 knots)
    as a not-a-knot cubic spline of ln M in ln r.

    - ``enclosed_mass(r)``: the spline; below the grid a power law with the
      end slope, above it the unresponsive halo (1 - f) M_i(r) scaled to match.
    - ``density(r)``: :math:`\rho = \frac{M}{4\pi r^3}\frac{d\ln M}{d\ln r}` from the
      spline derivative.
    - ``projected_mass(R)``: :math:`M_{2D}(<R) = \int_0^\infty M(R\cosh t)\,
      {\rm sech}^2 t\, dt` (the 3-D mass integrated against the fraction of
      each shell inside the cylinder, after an integration by parts; no
      density needed).  The unresponsive halo scaled to the outer join is
      projected by its own (closed-form for NFW) method, and only the
      compact mass change dM, zero beyond the grid, by 48 Gauss–Legendre
      nodes in t.
    - ``surface_density(R)``: :math:`\frac{1}{2\pi R}\frac{dM_{2D}}{dR}`.
    """

    log_r0: jax.Array
    log_mass: jax.Array
    log_mass_d2: jax.Array
    halo: SphericalProfile
    remaining_fraction: jax.Array
    outer_ratio: jax.Array

    def _log_enclosed(self, u):
        """ln M(<e^u) and d ln M / d ln r."""
        u_lo = self.log_r0
        u_hi = self.log_r0 + _GRID_H * (GRID_N - 1)
        uc = jnp.clip(u, u_lo, u_hi)
        # One-hot spline picks, not a gather: the reverse pass of a gather is a
        # scatter-add, slow on XLA's CPU backend (the Jeans grid's 61 radii:
        # measured in benchmarks/bench_dynamics.py).
        val, der = _spline.evaluate_many(
            uc, u_lo, _GRID_H, self.log_mass, self.log_mass_d2, derivative=True
        )
        # Inner: power law with the end slope.
        inner_val = val + der * (u - uc)
        # Outer: the unresponsive halo, scaled to join at the last knot.
        u_out = jnp.maximum(u, u_hi)
        outer_mass = (
            self.outer_ratio * self.remaining_fraction * self.halo.enclosed_mass(jnp.exp(u_out))
        )
        outer_val = jnp.log(outer_mass)
        outer_der = jax.jvp(
            lambda v: jnp.log(self.halo.enclosed_mass(jnp.exp(v))), (u_out,), (jnp.ones_like(u),)
        )[1]
        val = jnp.where(u > u_hi, outer_val, jnp.where(u < u_lo, inner_val, val))
        der = jnp.where(u > u_hi, outer_der, der)
        return val, der

    def enclosed_mass(self, r):
        return jnp.exp(self._log_enclosed(jnp.log(as_float(r)))[0])

    def density(self, r):
        r = as_float(r)
        val, der = self._log_enclosed(jnp.log(r))
        return jnp.exp(val) * der / (4.0 * jnp.pi * r**3)

    def projected_mass(self, R):
        R = as_float(R)
        # The unresponsive halo, scaled to the outer join, projects in closed
        # form (NFW) or by its own quadrature; only the compact difference
        # dM(r) = M(r) - q (1 - f) M_i(r), zero beyond the grid, is projected
        # numerically: M_2D = q (1 - f) M_2D,i(R) + int_0^T dM(R cosh t) sech^2 t dt.
        q = self.outer_ratio * self.remaining_fraction
        base = q * self.halo.projected_mass(R)
        r_hi = jnp.exp(self.log_r0 + _GRID_H * (GRID_N - 1))
        t_hi = jnp.arccosh(jnp.maximum(r_hi / R, 1.0 + 1e-9))
        t_mid = jnp.minimum(_T_SPLIT, t_hi)
        t1 = 0.5 * t_mid[..., None] * (_PX1 + 1.0)
        w1 = 0.5 * t_mid[..., None] * _PW1
        t2 = t_mid[..., None] + 0.5 * (t_hi - t_mid)[..., None] * (_PX2 + 1.0)
        w2 = 0.5 * (t_hi - t_mid)[..., None] * _PW2
        t = jnp.concatenate([t1, t2], axis=-1)
        w = jnp.concatenate([w1, w2], axis=-1)
        r = R[..., None] * jnp.cosh(t)
        # Every node lies on the grid (t <= t_hi) or below it (the inner power
        # law, r < 1e-6 r200c: negligible mass), so the spline alone is used.
        u = jnp.maximum(jnp.log(r), self.log_r0)
        m_spline = jnp.exp(
            _spline.evaluate_many(u, self.log_r0, _GRID_H, self.log_mass, self.log_mass_d2)
        )
        dm = m_spline - q * self.halo.enclosed_mass(r)
        return base + jnp.sum(w * dm / jnp.cosh(t) ** 2, axis=-1)

    def surface_density(self, R):
        R = as_float(R)
        dm = jax.jvp(self.projected_mass, (R,), (jnp.ones_like(R),))[1]
        return dm / (2.0 * jnp.pi * R)


def contract_halo(
    halo,
    galaxy,
    prescription,
    galaxy_fraction=None,
    *,
    r200c=None,
    z=None,
    cosmology=None,
    response_index=None,
    orbit_scale=None,
    orbit_exponent=None,
    r_orbit=None,
):
    r"""The dark matter of ``halo`` after the galaxy has formed inside it.

    The initial (dark-matter-only) total mass profile is the halo's,
    :math:`M_i(r)`.  A fraction :math:`f = M_{gal}/M_{200c}` of it ends in the
    galaxy, the rest keeps following the dark matter, and each shell moves
    from :math:`r_i` to :math:`r_f` such that

    .. math::

        \frac{r_f}{r_i} = \left[\frac{M_i(\bar r_i)}
            {M_{gal}(\bar r_f) + (1 - f)\,M_i(\bar r_i)}\right]^{\nu},
        \qquad M_{DM}(<r_f) = (1 - f)\,M_i(<r_i),

    which for nu = 1 is the adiabatic invariant :math:`r M(\bar r) = {\rm const}`.

    ====================  ==============================  =====================
    prescription          orbit-averaged radius rbar      nu
    ====================  ==============================  =====================
    ``"none"``            —                               0 (halo × (1 − f))
    ``"blumenthal86"``    r                               1
    ``"gnedin04"``        0.85 r_vir (r/r_vir)^0.8        1
    ``"gnedin11"``        1.6 r_vir (r/r_vir)^0.8         1
    ``"orbit_averaged"``  A r_vir (r/r_vir)^w             1
    ``"power"``           r                               ``response_index``
    ====================  ==============================  =====================

    For the Gnedin forms the dark-matter mass inside the orbit-averaged radius
    is taken as conserved, :math:`M_{DM,f}(\bar r_f) = (1 - f)M_i(\bar r_i)`
    (Gnedin et al. 2004, eq. 2 and section 3), and the orbit-averaged radius
    is normalised, as in their fit (eq. 3 area; from memory), by the halo's
    virial radius :math:`r_{\rm vir}`, inside which the mean density is
    :math:`\Delta_{\rm vir}(z)\,\rho_c(z)` with :math:`\Delta_{\rm vir}` of
    Bryan & Norman (1998, eq. 6):

    .. math::

        \bar r = A\,r_{\rm vir}\left(\frac{r}{r_{\rm vir}}\right)^{w},
        \qquad M_i(<r_{\rm vir}) = \frac{4\pi}{3}\,\Delta_{\rm vir}(z)\,
            \rho_c(z)\,r_{\rm vir}^3 .

    Only this normalisation uses r_vir; f, the response grid and the outer join
    are tied to r200c.  nu = 0 is no response, nu = 1
    is Blumenthal et al. (1986), nu < 0 expands the halo (Dutton et al. 2007,
    section 2.3).  The validated range is nu >= -0.3: below about -0.4 the
    shells cross at the centre of a concentrated Sérsic galaxy (the dark-matter
    density turns negative), and the solution is no longer a physical halo.
    The response is applied at all radii; beyond r200c, where the enclosed
    initial mass exceeds M200c, it is a slight expansion.

    Parameters
    ----------
    halo : NFW or GeneralizedNFW (any SphericalProfile)
        The dark-matter-only halo; its mass inside r200c is M200c.
    galaxy : profile, Composite or list of profiles
        The final baryonic galaxy (Sérsic stars, a gas disk as a sphere, a
        central point mass, ...).
    prescription : str
        One of the names above.
    galaxy_fraction : float, optional
        f = M_gal / M200c; defaults to galaxy.enclosed_mass(r200c) / M200c
        (the galaxy's mass inside r200c, i.e. its total for any compact galaxy).
    r200c : float, optional
        r200c of the halo in kpc.  If omitted, ``z`` and ``cosmology`` are
        needed and r200c is solved from the halo's profile.
    z, cosmology : float, Cosmology
        The halo's redshift and the cosmology: needed when r200c is omitted,
        and for ``"gnedin04"``, ``"gnedin11"`` and ``"orbit_averaged"`` when
        ``r_orbit`` is omitted (to solve for r_vir).  Otherwise unused.
    response_index : float
        nu, for ``"power"`` (traceable: NUTS can sample it).
    orbit_scale, orbit_exponent : float
        A and w, for ``"orbit_averaged"`` (traceable: NUTS can sample them).
    r_orbit : float, optional
        The radius that normalises the orbit-averaged radius, kpc:
        :math:`\bar r = A\,r_{\rm orb}(r/r_{\rm orb})^w`.  Defaults to the
        halo's virial radius r_vir, solved from the halo's profile, ``z`` and
        ``cosmology`` (a differentiable Newton root).  Pass it to reuse a known
        r_vir, or ``r_orbit=r200c`` for the r200c-normalised variant.  Ignored
        by the prescriptions without orbit averaging (``"none"``,
        ``"blumenthal86"``, ``"power"``).

    Returns
    -------
    SphericalProfile
        A :class:`ScaledProfile` for ``"none"``, else a :class:`ContractedHalo`;
        both have density, enclosed_mass, surface_density and projected_mass
        in kpc and Msun.

    Raises
    ------
    ValueError
        For an unknown prescription or a missing/extra response parameter; when
        neither r200c nor both z and cosmology are given; and for an
        orbit-averaged prescription when neither r_orbit nor both z and
        cosmology are given.

    References
    ----------
    Blumenthal G. R., Faber S. M., Flores R., Primack J. R., 1986, ApJ 301, 27.
    Bryan G. L., Norman M. L., 1998, ApJ 495, 80 (eq. 6: Delta_vir).
    Gnedin O. Y., Kravtsov A. V., Klypin A. A., Nagai D., 2004, ApJ 616, 16.
    Gnedin O. Y. et al., 2011, arXiv:1108.5736 (A = 1.6, w = 0.8; from memory).
    Dutton A. A., van den Bosch F. C., Dekel A., Courteau S., 2007, ApJ 654, 27.
    """
    a, w, nu = resolve_prescription(prescription, orbit_scale, orbit_exponent, response_index)
    galaxy = as_profile(galaxy)
    if r200c is None:
        if z is None or cosmology is None:
            raise ValueError("contract_halo needs r200c, or both z and cosmology to solve for it")
        threshold = 200.0 * cosmology.critical_density(z)
        r200c = overdensity_radius(halo, threshold, 300.0)
    r200c = as_float(r200c)
    if a is not None and r_orbit is None and (z is None or cosmology is None):
        raise ValueError(
            f"prescription {prescription!r} normalises the orbit-averaged radius by the "
            "halo's virial radius: contract_halo needs r_orbit (the halo's virial radius, "
            "kpc), or both z and cosmology to solve for it"
        )
    m200c = halo.enclosed_mass(r200c)
    if galaxy_fraction is None:
        galaxy_fraction = galaxy.enclosed_mass(r200c) / m200c
    f_gal = as_float(galaxy_fraction)
    if prescription == "none":
        return ScaledProfile(halo, 1.0 - f_gal)

    nu = as_float(nu)
    if a is None:
        r_orbit = r200c  # unused: rbar = r
    elif r_orbit is None:
        r_orbit = _virial_radius(halo, z, cosmology, r200c)
    r_orbit = as_float(r_orbit)
    log_r0 = jnp.log(r200c) + _GRID_X[0]
    r_f = jnp.exp(jnp.log(r200c) + _GRID_X)
    m_gal_f = galaxy.enclosed_mass(_orbit_radius(r_f, r_orbit, a, w))
    x_i = _solve_initial_radii(r_f, m_gal_f, halo, r_orbit, f_gal, a, w, nu)
    log_m = jnp.log(1.0 - f_gal) + jnp.log(halo.enclosed_mass(jnp.exp(x_i)))
    d2 = jnp.dot(_SPLINE_S, log_m)
    outer_ratio = jnp.exp(log_m[-1]) / ((1.0 - f_gal) * halo.enclosed_mass(r_f[-1]))
    return ContractedHalo(
        log_r0=log_r0,
        log_mass=log_m,
        log_mass_d2=d2,
        halo=halo,
        remaining_fraction=1.0 - f_gal,
        outer_ratio=outer_ratio,
    )
