"""The package under test, wrapped as one jitted batch function per prescription.

Every contraction test that needs an NFW halo around a Sérsic galaxy goes
through :func:`batch`: for one prescription it maps a (BATCH, 9) array of
parameter rows (columns ``PARAMS``) to the logarithms of the four public
quantities of the contracted dark matter at ``RADII_FACTORS`` x R_eff, plus a
few by-products (the solved grid, the masses at the fixed shell).  One compiled
function per prescription, which also returns forward-mode derivatives, is
shared by the reference, limit, prior-box and gradient tests: each compile costs
seconds on a 2-core machine, so sharing them keeps the suite inside its time
budget.

The rows run through ``lax.map`` (a loop) rather than ``vmap``: the vmapped
XLA program took about three times longer to compile.  ``vmap`` itself is
tested in ``test_contracted.py``.
"""

import functools

import jax
import jax.numpy as jnp
import numpy as np

from lensinfer.contraction import contract_halo
from lensinfer.cosmology import Cosmology
from lensinfer.halo import convert_mass
from lensinfer.profiles import NFW, Sersic

COSMO = Cosmology.default()

#: Columns of a parameter row.  nu is read by "power" only, A and w by
#: "orbit_averaged" only; the other prescriptions ignore them.
PARAMS = (
    "log10_m200c",
    "c200c",
    "z",
    "log10_mstar",
    "r_eff",
    "n",
    "nu",
    "orbit_scale",
    "orbit_exponent",
)
COLUMN = {name: i for i, name in enumerate(PARAMS)}

#: The prescriptions (all of ``lensinfer.contraction.PRESCRIPTIONS``).
PRESCRIPTIONS = ("none", "blumenthal86", "gnedin04", "gnedin11", "orbit_averaged", "power")

#: (A, w) of the named orbit-averaged radius rbar = A r_vir (r/r_vir)^w (r_vir:
#: the virial radius, Bryan & Norman 1998): Gnedin et al. (2004, ApJ 616, 16,
#: section 3) A = 0.85, w = 0.8; Gnedin et al. (2011, arXiv:1108.5736) A = 1.6,
#: w = 0.8 (both from memory).
ORBIT = {"gnedin04": (0.85, 0.8), "gnedin11": (1.6, 0.8)}

#: The response grid as ``contract_halo``'s docstring states it (final radii
#: 1e-6 to 10 r200c, 96 knots uniform in ln r).  Written out, not imported, so
#: that a change of the package's grid shows up in the residual test.
GRID_LO, GRID_HI, GRID_N = 1.0e-6, 10.0, 96
GRID_H = float(np.log(GRID_HI / GRID_LO) / (GRID_N - 1))

#: Radii of the comparisons, in units of R_eff: 0.01 to 10 R_eff (the issue's range).
RADII_FACTORS = np.geomspace(0.01, 10.0, 10)
QUANTITIES = ("enclosed_mass", "projected_mass", "density", "surface_density")

#: Rows per call; :func:`evaluate` pads, so each prescription compiles once.
BATCH = 32

#: What normalises the orbit-averaged radius: "vir" (contract_halo's default,
#: r_vir solved from z and the cosmology) or "200c" (``r_orbit=r200c`` passed).
ORBIT_RADII = ("vir", "200c")


def row(log10_m200c, c200c, z, log10_mstar, r_eff, n, nu=1.0, orbit_scale=1.0, orbit_exponent=1.0):
    """A parameter row, ordered as PARAMS."""
    return np.array(
        [log10_m200c, c200c, z, log10_mstar, r_eff, n, nu, orbit_scale, orbit_exponent], float
    )


def orbit_parameters(prescription, p):
    """(A, w, nu) of a prescription for row p; A = w = None means rbar = r."""
    a, w = ORBIT.get(prescription, (None, None))
    nu = 1.0
    if prescription == "orbit_averaged":
        a, w = p[COLUMN["orbit_scale"]], p[COLUMN["orbit_exponent"]]
    elif prescription == "power":
        nu = p[COLUMN["nu"]]
    elif prescription == "none":
        nu = 0.0
    return a, w, nu


def build(p, prescription, orbit_radius="vir"):
    """(contracted dark matter, NFW halo, Sérsic galaxy) for one parameter row p.

    The halo comes from M200c, c200c and z, and ``contract_halo`` solves r200c
    (and, for ``orbit_radius="vir"``, the virial radius that normalises the
    orbit-averaged radius) itself from z and the cosmology.  With
    ``orbit_radius="200c"`` it is given ``r_orbit=r200c``.  The galaxy uses
    the default (tabulated) deprojection, as a model does.
    """
    lm, c, z, lms, r_eff, n = (p[i] for i in range(6))
    halo = NFW.from_m200c(10.0**lm, c, z, COSMO)
    galaxy = Sersic(10.0**lms, r_eff, n)
    a, w, nu = orbit_parameters(prescription, p)
    kwargs = {}
    if prescription == "power":
        kwargs = dict(response_index=nu)
    elif prescription == "orbit_averaged":
        kwargs = dict(orbit_scale=a, orbit_exponent=w)
    if orbit_radius == "200c":
        kwargs["r_orbit"] = r200c(p)
    dm = contract_halo(halo, galaxy, prescription, z=z, cosmology=COSMO, **kwargs)
    return dm, halo, galaxy


def r200c(p):
    """r200c (kpc) in closed form: (3 M200c / (4 pi 200 rho_c(z)))^(1/3)."""
    m200 = 10.0 ** p[COLUMN["log10_m200c"]]
    rho_c = COSMO.critical_density(p[COLUMN["z"]])
    return (3.0 * m200 / (4.0 * jnp.pi * 200.0 * rho_c)) ** (1.0 / 3.0)


def virial_radius(p):
    """r_vir (kpc) of the row's NFW halo (Bryan & Norman 1998 overdensity).

    From ``lensinfer.halo.convert_mass`` (its own Newton solve in the
    concentration, not the contraction module's): r_vir = c_vir r_s with
    r_s = r200c / c200c.  Checked against scipy in test_reference_solver.py.
    """
    lm, c, z = p[COLUMN["log10_m200c"]], p[COLUMN["c200c"]], p[COLUMN["z"]]
    _, c_vir = convert_mass(10.0**lm, c, z, from_="200c", to="vir", cosmology=COSMO)
    return c_vir * r200c(p) / c


def log_quantities(p, prescription, with_extras=True, orbit_radius="vir"):
    """ln |M(<r)|, |M_2D(<R)|, |rho(r)|, |Sigma(R)| at r = R = RADII_FACTORS R_eff, (4, 10).

    With ``with_extras`` also a dict: the sign of the density; the halo's rho_s,
    r_s; the solved grid (log_r0, log_mass, remaining = 1 - f) and the galaxy mass at the
    orbit-averaged radius of each knot (for the residual check; zeros for
    "none"); and the masses at the shell that must not move (see
    ``test_prescriptions.py``).
    """
    dm, halo, galaxy = build(p, prescription, orbit_radius)
    radii = p[COLUMN["r_eff"]] * jnp.asarray(RADII_FACTORS)
    # ln |q|: a negative density (crossed shells) stays finite here and is
    # tested on its own (test_prescriptions.py).
    values = [getattr(dm, q)(radii) for q in QUANTITIES]
    logq = jnp.stack([jnp.log(jnp.abs(v)) for v in values])
    if not with_extras:
        return logq
    a, w, _ = orbit_parameters(prescription, p)
    r200 = r200c(p)
    r_orb = virial_radius(p) if orbit_radius == "vir" else r200
    # The shell that stays: rbar(r*) = A r_orb (r*/r_orb)^w = r200c, i.e.
    # r* = r_orb (r200c / (A r_orb))^(1/w) (r200c when rbar = r).
    r_star = r200 if a is None else r_orb * (r200 / (a * r_orb)) ** (1.0 / w)
    extras = dict(
        density_sign=jnp.sign(values[2]),
        rho_s=halo.rho_s,
        r_s=halo.r_s,
        r200c=r200,
        r_orbit=r_orb,
        m200c=halo.enclosed_mass(r200),
        galaxy_mass_r200c=galaxy.enclosed_mass(r200),
        r_star=r_star,
        dm_mass_r_star=dm.enclosed_mass(r_star),
        halo_mass_r_star=halo.enclosed_mass(r_star),
    )
    if prescription == "none":
        zeros = jnp.zeros(GRID_N)
        extras.update(log_r0=0.0, log_mass=zeros, remaining=dm.factor, galaxy_mass=zeros)
        return logq, extras
    r_f = jnp.exp(dm.log_r0 + GRID_H * jnp.arange(GRID_N))
    rbar = r_f if a is None else a * r_orb * (r_f / r_orb) ** w
    extras.update(
        log_r0=dm.log_r0,
        log_mass=dm.log_mass,
        remaining=dm.remaining_fraction,
        galaxy_mass=galaxy.enclosed_mass(rbar),
    )
    return logq, extras


def make_batch(prescription, with_extras=True, with_derivatives=True, orbit_radius="vir"):
    """A fresh jit(g)(s, rows, directions) -> (logq, extras, dlogq), row by row.

    ``logq`` and ``extras`` are :func:`log_quantities` at rows + s[:, None] *
    directions; ``dlogq`` is the derivative of logq with respect to s, i.e. each
    row's forward-mode (``jax.jvp``) derivative along its own direction (a single
    parameter, or a random one).  Values and forward derivatives come from one
    compiled program, which halves the compile time of the suite; the gradient
    tests compare dlogq with finite differences of logq in s.  Fresh (uncached)
    so that a test that patches the package's grid traces it under the patch.
    Without extras it returns (logq, dlogq); without derivatives, logq (and extras).
    ``orbit_radius`` is passed to :func:`build`.
    """

    def one(args):
        p, s, d = args

        def at(t):
            return log_quantities(p + t * d, prescription, with_extras, orbit_radius)

        if not with_derivatives:
            return at(s)
        if not with_extras:
            return jax.jvp(at, (s,), (jnp.ones_like(s),))
        logq, dlogq, extras = jax.jvp(at, (s,), (jnp.ones_like(s),), has_aux=True)
        return logq, extras, dlogq

    def g(s, rows, directions):
        return jax.lax.map(one, (rows, s, directions))

    return jax.jit(g)


def batch(prescription, orbit_radius="vir"):
    """The shared (cached) :func:`make_batch` of a prescription."""
    # One cache key per (prescription, orbit_radius), however they are passed.
    return _batch(prescription, orbit_radius)


@functools.cache
def _batch(prescription, orbit_radius):
    return make_batch(prescription, orbit_radius=orbit_radius)


def pad(rows):
    """rows (n <= BATCH) padded to BATCH by repeating the first one; and n."""
    rows = np.atleast_2d(np.asarray(rows, dtype=float))
    n = rows.shape[0]
    if n > BATCH:
        raise ValueError(f"at most {BATCH} rows per call, got {n}")
    return np.concatenate([rows, np.repeat(rows[:1], BATCH - n, axis=0)]), n


def run(prescription, rows, fn=None, orbit_radius="vir"):
    """(|quantities|, extras) for each row: quantities (n, 4, 10) in Msun, kpc (not logs)."""
    padded, n = pad(rows)
    fn = batch(prescription, orbit_radius) if fn is None else fn
    logq, extras, _ = fn(np.zeros(BATCH), padded, np.zeros_like(padded))
    return np.exp(np.asarray(logq))[:n], {k: np.asarray(v)[:n] for k, v in extras.items()}


def evaluate(prescription, rows, orbit_radius="vir"):
    """The quantities only, (n, 4, 10)."""
    return run(prescription, rows, orbit_radius=orbit_radius)[0]
