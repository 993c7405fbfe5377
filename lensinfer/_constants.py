"""Physical constants in lensinfer's internal units (kpc, Msun, km/s).

The values are taken once, at import, from :mod:`astropy.constants` (CODATA 2018
and IAU 2015 nominal values), so lensinfer agrees with astropy to the last digit.
Jitted code only ever sees the resulting Python floats.
"""

import math

import astropy.constants as _const
import astropy.units as _u

#: Speed of light in km/s.
C_KMS: float = float(_const.c.to_value(_u.km / _u.s))

#: Newton's constant in kpc (km/s)^2 / Msun.
G_KPC_KMS2_PER_MSUN: float = float(_const.G.to_value(_u.kpc * _u.km**2 / _u.s**2 / _u.Msun))

#: c^2 / (4 pi G) in Msun / kpc, the prefactor of the critical surface density.
SIGMA_CRIT_PREFACTOR_MSUN_PER_KPC: float = C_KMS**2 / (4.0 * math.pi * G_KPC_KMS2_PER_MSUN)

#: One arcsecond in radians.
ARCSEC_RAD: float = math.pi / (180.0 * 3600.0)

#: kpc per Mpc.
KPC_PER_MPC: float = 1.0e3
