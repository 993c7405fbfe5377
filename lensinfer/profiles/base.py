"""The common interface of every spherical profile, and sums of profiles."""

from __future__ import annotations

import dataclasses

import jax
import jax.numpy as jnp

from lensinfer.profiles import _quadrature

__all__ = ["Composite", "SphericalProfile"]


class SphericalProfile:
    """Base class: a spherical mass (or light) distribution.

    Subclasses are frozen dataclasses registered as JAX pytrees and implement
    :meth:`density`; the other three quantities fall back to fixed-node
    quadrature (:mod:`lensinfer.profiles._quadrature`) unless a subclass
    overrides them with a closed form.  All radii are in kpc, masses in Msun.

    Methods
    -------
    density(r)
        3-D density at radius r, Msun / kpc^3.
    enclosed_mass(r)
        Mass inside the sphere of radius r, Msun.
    surface_density(R)
        Projected surface density at projected radius R, Msun / kpc^2.
    projected_mass(R)
        Mass inside the cylinder of projected radius R, Msun.
    """

    def density(self, r):
        raise NotImplementedError

    @property
    def quadrature_scale(self):
        """A radius (kpc) that marks where the profile changes slope."""
        raise NotImplementedError

    def enclosed_mass(self, r):
        return _quadrature.enclosed_mass(self.density, r, self.quadrature_scale)

    def surface_density(self, R):
        return _quadrature.surface_density(self.density, R, self.quadrature_scale)

    def projected_mass(self, R):
        return _quadrature.projected_mass(
            self.density, self.enclosed_mass, R, self.quadrature_scale
        )

    def __add__(self, other):
        return Composite(_components(self) + _components(other))


def _components(p) -> tuple:
    if isinstance(p, Composite):
        return p.components
    if isinstance(p, SphericalProfile):
        return (p,)
    raise TypeError(f"cannot add a {type(p).__name__} to a profile")


@jax.tree_util.register_dataclass
@dataclasses.dataclass(frozen=True)
class Composite(SphericalProfile):
    """A sum of spherical profiles: each of the four quantities is the sum.

    Parameters
    ----------
    components : tuple of SphericalProfile
        The profiles to add (e.g. ``(Sersic(...), NFW(...))``).  ``a + b`` on
        two profiles builds the same object.

    Examples
    --------
    >>> from lensinfer.profiles import Hernquist, NFW, Composite
    >>> total = Composite((Hernquist(1e11, 3.0), NFW(1e7, 30.0)))
    >>> float(total.enclosed_mass(10.0)) > 0
    True
    """

    components: tuple

    def __post_init__(self):
        object.__setattr__(self, "components", tuple(self.components))

    def density(self, r):
        return sum(c.density(r) for c in self.components)

    def enclosed_mass(self, r):
        return sum(c.enclosed_mass(r) for c in self.components)

    def surface_density(self, R):
        return sum(c.surface_density(R) for c in self.components)

    def projected_mass(self, R):
        return sum(c.projected_mass(R) for c in self.components)


def as_profile(components) -> SphericalProfile:
    """A profile, a composite, or a list/tuple of profiles, as one profile."""
    if isinstance(components, SphericalProfile):
        return components
    if isinstance(components, (list, tuple)):
        return Composite(tuple(components))
    raise TypeError(
        f"expected a profile, a Composite or a list of profiles; got {type(components).__name__}"
    )


def as_float(x):
    """Broadcast-friendly float64 array of x."""
    return jnp.asarray(x, dtype=jnp.float64)
