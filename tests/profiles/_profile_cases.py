"""The catalogue of profiles the parametrised tests run over, and shared jitted methods.

Each :class:`Case` knows how to build its lensinfer profile from a tuple of
parameters, the profile's scale radius, and an independent numpy density
re-typed from the paper (from :mod:`_profile_reference`).  The four methods are
jitted once at module level with the profile as a pytree argument, so every
parameter value of one profile class reuses one compiled function (jit caches
on the pytree structure and the array shapes).
"""

import dataclasses
from collections.abc import Callable

import _profile_reference as ref
import jax
import jax.numpy as jnp
import numpy as np

from lensinfer._constants import G_KPC_KMS2_PER_MSUN as G
from lensinfer.profiles import (
    NFW,
    CoredIsothermal,
    GeneralizedNFW,
    Hernquist,
    Jaffe,
    PowerLaw,
    Sersic,
    SingularIsothermal,
)

METHODS = ("density", "enclosed_mass", "surface_density", "projected_mass")


def _values(profile, r):
    return {m: getattr(profile, m)(r) for m in METHODS}


def _evaluate(profile, r):
    """The four quantities and the radial derivatives of the two masses."""
    out = _values(profile, r)
    ones = jnp.ones_like(r)
    out["d_enclosed_mass"] = jax.jvp(profile.enclosed_mass, (r,), (ones,))[1]
    out["d_projected_mass"] = jax.jvp(profile.projected_mass, (r,), (ones,))[1]
    return out


#: Everything the parametrised tests need from one profile at an array of
#: radii, compiled once per profile class and radius-array shape (the profile
#: is a pytree argument, so parameter values do not trigger recompilation).
EVALUATE = jax.jit(_evaluate)

#: vmap over a batch of profiles (stacked leaves) of vmap over scalar radii.
BATCHED = jax.jit(jax.vmap(jax.vmap(_values, in_axes=(None, 0)), in_axes=(0, None)))


@dataclasses.dataclass(frozen=True)
class Case:
    """A profile under test.

    Attributes
    ----------
    name : str
        Test id.
    family : str
        Cases of one family share ``build`` (which takes every parameter as an
        argument), so compiled gradient checks are reused across the family.
    build : callable
        params -> lensinfer profile.
    params : tuple of float
        Fiducial parameters (internal units).
    log_params : tuple of bool
        True for positive dimensional parameters (perturbed in log space by the
        gradient checks), False for slopes / indices (perturbed additively).
    scale : float
        Scale radius, kpc: the radii tested are multiples of it.
    rho : callable or None
        Independent numpy density r -> rho (None: Sersic, whose density is an
        Abel deprojection, tested in test_sersic.py).
    outer_slope : float
        Large-radius logarithmic slope of rho (sets the line-of-sight range).
    inner_slope : float
        Small-radius logarithmic slope of rho (sets the depth of the
        enclosed-mass and area integrals, whose integrands fall as
        e^{(3 - inner_slope) ln r}).
    closed_form : bool
        True when all four methods are closed forms (tolerance 1e-11 against
        quad), False when lensinfer integrates numerically (tolerance = the
        accuracy lensinfer documents).
    """

    name: str
    family: str
    build: Callable
    params: tuple
    log_params: tuple
    scale: float
    rho: Callable | None
    outer_slope: float
    inner_slope: float
    closed_form: bool

    def profile(self):
        return self.build(*self.params)


def _gnfw_case(gamma):
    return Case(
        name=f"gnfw-{gamma}",
        family="gnfw",
        build=lambda rho_s, r_s, g: GeneralizedNFW(rho_s, r_s, g),
        params=(1.0e7, 20.0, gamma),
        log_params=(True, True, False),
        scale=20.0,
        rho=lambda r: ref.gnfw_density(r, 1.0e7, 20.0, gamma),
        outer_slope=3.0,
        inner_slope=gamma,
        closed_form=False,
    )


def _power_law_case(gamma):
    return Case(
        name=f"power_law-{gamma}",
        family="power_law",
        build=lambda rho0, r0, g: PowerLaw(rho0, r0, g),
        params=(1.0e8, 2.0, gamma),
        log_params=(True, True, False),
        scale=2.0,
        rho=lambda r: ref.power_law_density(r, 1.0e8, 2.0, gamma),
        outer_slope=gamma,
        inner_slope=gamma,
        closed_form=True,
    )


#: Profiles with an independent numpy density (everything except Sersic and
#: the point mass, which has no density to integrate).
DENSITY_CASES = (
    Case(
        name="nfw",
        family="nfw",
        build=lambda rho_s, r_s: NFW(rho_s, r_s),
        params=(1.0e7, 20.0),
        log_params=(True, True),
        scale=20.0,
        rho=lambda r: ref.nfw_density(r, 1.0e7, 20.0),
        outer_slope=3.0,
        inner_slope=1.0,
        closed_form=True,
    ),
    *(_gnfw_case(g) for g in (0.5, 1.0, 1.5, 2.0)),
    Case(
        name="hernquist",
        family="hernquist",
        build=lambda m, a: Hernquist(m, a),
        params=(1.0e11, 3.0),
        log_params=(True, True),
        scale=3.0,
        rho=lambda r: ref.hernquist_density(r, 1.0e11, 3.0),
        outer_slope=4.0,
        inner_slope=1.0,
        closed_form=True,
    ),
    Case(
        name="jaffe",
        family="jaffe",
        build=lambda m, a: Jaffe(m, a),
        params=(1.0e11, 3.0),
        log_params=(True, True),
        scale=3.0,
        rho=lambda r: ref.jaffe_density(r, 1.0e11, 3.0),
        outer_slope=4.0,
        inner_slope=2.0,
        closed_form=True,
    ),
    Case(
        name="sis",
        family="sis",
        build=lambda s: SingularIsothermal(s),
        params=(220.0,),
        log_params=(True,),
        scale=1.0,
        rho=lambda r: ref.sis_density(r, 220.0, G),
        outer_slope=2.0,
        inner_slope=2.0,
        closed_form=True,
    ),
    Case(
        name="cored_isothermal",
        family="cored_isothermal",
        build=lambda s, rc: CoredIsothermal(s, rc),
        params=(220.0, 0.5),
        log_params=(True, True),
        scale=0.5,
        rho=lambda r: ref.cored_isothermal_density(r, 220.0, 0.5, G),
        outer_slope=2.0,
        inner_slope=0.0,
        closed_form=True,
    ),
    *(_power_law_case(g) for g in (1.5, 2.0, 2.5)),
)


def _sersic_case(n, mode):
    return Case(
        name=f"sersic-{mode}-{n}",
        family=f"sersic-{mode}",
        build=lambda m, re, nn: Sersic(m, re, nn, deprojection=mode),
        params=(1.0e11, 5.0, n),
        log_params=(True, True, False),
        scale=5.0,
        rho=None,
        outer_slope=np.inf,
        inner_slope=1.0,  # rho ~ r^(1/n - 1) at the centre: at most 1 for n <= 10
        closed_form=False,
    )


SERSIC_INDICES = (0.5, 1.0, 2.5, 4.0, 8.0, 10.0)
#: The default (tabulated) deprojection at every index the issue names, and the
#: direct quadrature at two of them.
SERSIC_CASES = tuple(_sersic_case(n, "table") for n in SERSIC_INDICES) + tuple(
    _sersic_case(n, "quadrature") for n in (1.0, 4.0)
)

#: Every profile with parameters to differentiate (the point mass is tested in
#: test_point_mass.py).
ALL_CASES = DENSITY_CASES + SERSIC_CASES


#: Profile families in catalogue order (cases of a family share compiled code,
#: so the expensive per-family tests take a family, not a case, as parameter:
#: pytest-xdist then compiles each family in one worker only).
FAMILIES = tuple(dict.fromkeys(c.family for c in ALL_CASES))


def cases_of(family):
    return [c for c in ALL_CASES if c.family == family]


def check_each(cases, check):
    """Run ``check(case)`` for every case; report all failing cases together."""
    failures = []
    for case in cases:
        try:
            check(case)
        except AssertionError as err:
            failures.append(f"[{case.name}] {err}")
    if failures:
        raise AssertionError("\n".join(failures))


#: Light jitted surface density (for scipy integrands that call lensinfer).
SURFACE_DENSITY = jax.jit(lambda p, r: p.surface_density(r))


def ids(cases):
    return [c.name for c in cases]
