"""Conversion of constructor arguments to the internal units (kpc, Msun, km/s)."""

import astropy.units as u

__all__: list[str] = []


def to_internal(value, unit):
    """Strip an astropy Quantity to a float array in ``unit``; pass anything else through.

    Anything that is not a Quantity (a float, a JAX array, a tracer, or the
    placeholder objects JAX uses while rebuilding pytrees) is returned untouched,
    so the conversion can run in ``__post_init__`` of a pytree dataclass.
    """
    if isinstance(value, u.Quantity):
        return value.to_value(unit)
    return value


KPC = u.kpc
MSUN = u.Msun
KMS = u.km / u.s
MSUN_PER_KPC3 = u.Msun / u.kpc**3
