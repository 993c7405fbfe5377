"""Shared test cases: a massive early-type lens galaxy (Sérsic stars in an NFW halo).

Stars: M* = 1e11 Msun, R_eff = 5 kpc, n = 4 (light traces the stars); halo:
NFW with rho_s = 1e7 Msun/kpc^3, r_s = 30 kpc (M(<R_eff) about 1e10 Msun, a
dark-matter fraction of ~20 % inside R_eff).  The scipy reference models of
``_reference`` are built once per process (``functools.cache``).
"""

import functools

from lensinfer.dynamics import ConstantAnisotropy, Isotropic, OsipkovMerritt
from lensinfer.profiles import NFW, Sersic

from . import _reference

R_EFF = 5.0
M_STAR = 1.0e11
N_SERSIC = 4.0
RHO_S = 1.0e7
R_S = 30.0

#: name -> (lensinfer anisotropy, reference (kind, value))
ANISOTROPIES = {
    "isotropic": (Isotropic(), ("isotropic", 0.0)),
    "beta=0.3": (ConstantAnisotropy(0.3), ("constant", 0.3)),
    "beta=-0.5": (ConstantAnisotropy(-0.5), ("constant", -0.5)),
    "om r_a=R_eff": (OsipkovMerritt(R_EFF), ("om", R_EFF)),
}


def profiles(n=N_SERSIC):
    """(tracer, total mass) as lensinfer profiles."""
    tracer = Sersic(M_STAR, R_EFF, n)
    return tracer, tracer + NFW(RHO_S, R_S)


@functools.cache
def reference(name, n=N_SERSIC):
    """The scipy JeansModel of the same galaxy for anisotropy ``name``."""
    light = _reference.SersicLight(M_STAR, R_EFF, n)
    return _reference.JeansModel(
        light,
        extra_mass=lambda r: _reference.nfw_mass(r, RHO_S, R_S),
        anisotropy=ANISOTROPIES[name][1],
    )
