"""Unit handling at the edge of the stellar sub-package.

Public functions accept either a plain number in the documented unit or an
astropy ``Quantity``; a Quantity is converted once, here, and jitted code only
ever sees plain floats or arrays.
"""

from __future__ import annotations


def strip_unit(value, unit: str):
    """Return ``value`` in ``unit`` as a plain number/array.

    Parameters
    ----------
    value : float, array or astropy.units.Quantity
        A Quantity is converted with ``value.to_value(unit)``; anything else
        (numbers, NumPy or JAX arrays, tracers) is returned unchanged and taken
        to be in ``unit`` already.
    unit : str
        The internal unit, e.g. ``"Gyr"`` or ``"Msun"`` (astropy spelling).
    """
    to_value = getattr(value, "to_value", None)
    if to_value is not None and hasattr(value, "unit"):
        return to_value(unit)
    return value
