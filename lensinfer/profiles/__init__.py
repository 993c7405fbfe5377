"""Spherical mass and light profiles (kpc, Msun).

Every profile is an immutable JAX pytree with ``density(r)``,
``enclosed_mass(r)``, ``surface_density(R)`` and ``projected_mass(R)``;
profiles add up with ``+`` or :class:`Composite`.
"""

from lensinfer.profiles.base import Composite, SphericalProfile, as_profile
from lensinfer.profiles.gnfw import GeneralizedNFW
from lensinfer.profiles.hernquist import Hernquist
from lensinfer.profiles.isothermal import CoredIsothermal, SingularIsothermal
from lensinfer.profiles.jaffe import Jaffe
from lensinfer.profiles.nfw import NFW, nfw_mass_function
from lensinfer.profiles.point_mass import PointMass
from lensinfer.profiles.power_law import PowerLaw
from lensinfer.profiles.sersic import Sersic, sersic_b

__all__ = [
    "NFW",
    "Composite",
    "CoredIsothermal",
    "GeneralizedNFW",
    "Hernquist",
    "Jaffe",
    "PointMass",
    "PowerLaw",
    "Sersic",
    "SingularIsothermal",
    "SphericalProfile",
    "as_profile",
    "nfw_mass_function",
    "sersic_b",
]
