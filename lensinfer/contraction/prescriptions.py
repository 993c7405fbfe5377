"""The named halo-response prescriptions and their parameters."""

import dataclasses

__all__ = ["PRESCRIPTIONS", "Prescription", "resolve_prescription"]


@dataclasses.dataclass(frozen=True)
class Prescription:
    """Parameters of one response prescription (see :func:`contract_halo`).

    Attributes
    ----------
    name : str
        The prescription's name.
    orbit_scale, orbit_exponent : float or None
        A and w of the orbit-averaged radius rbar = A r_vir (r / r_vir)^w, with
        r_vir the halo's virial radius (mean density Delta_vir rho_c, Delta_vir
        of Bryan & Norman 1998, ApJ 495, 80, eq. 6), as in Gnedin et al. (2004,
        ApJ 616, 16, eq. 3 area; from memory); None means rbar = r (no orbit
        averaging).
    response_index : float or None
        nu of r_f / r_i = (M_i / M_f)^nu; 1 for the adiabatic-invariant
        prescriptions, None when the caller must give it ("power").
    reference : str
        The publication the prescription comes from.
    """

    name: str
    orbit_scale: float | None
    orbit_exponent: float | None
    response_index: float | None
    reference: str


PRESCRIPTIONS = {
    "none": Prescription("none", None, None, 0.0, "no response: the halo times (1 - f_gal)"),
    "blumenthal86": Prescription(
        "blumenthal86", None, None, 1.0, "Blumenthal, Faber, Flores & Primack 1986, ApJ 301, 27"
    ),
    "gnedin04": Prescription(
        "gnedin04", 0.85, 0.8, 1.0, "Gnedin, Kravtsov, Klypin & Nagai 2004, ApJ 616, 16"
    ),
    "gnedin11": Prescription(
        "gnedin11", 1.6, 0.8, 1.0, "Gnedin, Ceverino, Gnedin et al. 2011, arXiv:1108.5736"
    ),
    "orbit_averaged": Prescription(
        "orbit_averaged", None, None, 1.0, "Gnedin et al. 2004 form with user A and w"
    ),
    "power": Prescription(
        "power", None, None, None, "Dutton, van den Bosch, Dekel & Courteau 2007, ApJ 654, 27"
    ),
}


def resolve_prescription(name, orbit_scale=None, orbit_exponent=None, response_index=None):
    """(A, w, nu) for a named prescription, with user values where it needs them.

    Returns A = w = None for rbar = r.  Raises ValueError naming what is
    accepted for an unknown name or a missing/extra parameter.
    """
    if name not in PRESCRIPTIONS:
        raise ValueError(
            f"unknown halo-response prescription {name!r}; accepted: {', '.join(PRESCRIPTIONS)}"
        )
    p = PRESCRIPTIONS[name]
    if name == "orbit_averaged":
        if orbit_scale is None or orbit_exponent is None:
            raise ValueError(
                "prescription 'orbit_averaged' needs orbit_scale (A) and orbit_exponent (w)"
            )
        return orbit_scale, orbit_exponent, 1.0
    if orbit_scale is not None or orbit_exponent is not None:
        raise ValueError(
            f"orbit_scale/orbit_exponent apply only to 'orbit_averaged', not to {name!r}"
        )
    if name == "power":
        if response_index is None:
            raise ValueError("prescription 'power' needs response_index (nu)")
        return None, None, response_index
    if response_index is not None:
        raise ValueError(f"response_index applies only to 'power', not to {name!r}")
    return p.orbit_scale, p.orbit_exponent, p.response_index
