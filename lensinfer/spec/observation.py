"""The observation file: one lens system, every value with its unit in its key."""

from __future__ import annotations

import dataclasses
import os

from lensinfer.spec._reader import Table, load_toml, read_text
from lensinfer.spec.errors import SpecError

__all__ = ["Kinematics", "Measurement", "Observation", "parse_observation", "read_observation"]

LIGHT_PROFILES = ("sersic", "hernquist")
REFERENCE_IMFS = ("chabrier03", "kroupa01", "salpeter55")


@dataclasses.dataclass(frozen=True)
class Measurement:
    """A measured value with a Gaussian 1-sigma error (sd = 0: taken as exact)."""

    value: float
    sd: float

    @property
    def fixed(self) -> bool:
        return self.sd == 0.0


@dataclasses.dataclass(frozen=True)
class Kinematics:
    """A luminosity-weighted stellar velocity dispersion in a circular aperture."""

    sigma_kms: Measurement
    aperture_radius_arcsec: float
    seeing_fwhm_arcsec: float


@dataclasses.dataclass(frozen=True)
class Observation:
    """A validated observation of one lens system (read with :func:`read_observation`).

    Attributes
    ----------
    name : str
    z_lens : float
    z_source : Measurement
        sd > 0 for a photometric source redshift (marginalised over).
    einstein_radius_arcsec : Measurement
    light_profile : str
        "sersic" or "hernquist" (circularised light).
    r_eff_arcsec : Measurement
    sersic_index : Measurement
        (value 4 and fixed for a Hernquist light profile.)
    log10_mstar_msun : Measurement
        SED stellar mass under ``reference_imf``.
    reference_imf : str
    kinematics : Kinematics or None
    cosmology : str
        Name of an astropy cosmology realisation ("Planck18" by default).
    text : str
        The file's text, kept for provenance.
    path : str
    """

    name: str
    z_lens: float
    z_source: Measurement
    einstein_radius_arcsec: Measurement
    light_profile: str
    r_eff_arcsec: Measurement
    sersic_index: Measurement
    log10_mstar_msun: Measurement
    reference_imf: str
    kinematics: Kinematics | None
    cosmology: str
    text: str
    path: str


def _measurement(table: Table, name: str, *, positive=True, allow_fixed=True, low=None, high=None):
    """``{ value = x, sd = s }`` (s > 0), or a plain number for an exact value."""
    raw = table.raw(name)
    key = table.key(name)
    if isinstance(raw, dict):
        sub = Table(raw, table.path, key)
        value = sub.number("value", positive=positive, low=low, high=high)
        sd = sub.number("sd", positive=True, expected="a positive number (the 1-sigma error)")
        sub.finish(["value", "sd"])
        return Measurement(value, sd)
    if allow_fixed and isinstance(raw, (int, float)) and not isinstance(raw, bool):
        value = table.number(name, positive=positive, low=low, high=high)
        return Measurement(value, 0.0)
    expected = "{ value = <number>, sd = <positive number> }"
    if allow_fixed:
        expected += " or a number"
    raise SpecError(table.path, key, raw, expected)


def cosmology_name(table: Table) -> str:
    name = table.string("cosmology", default="Planck18")
    from astropy.cosmology import realizations

    available = tuple(realizations.available)
    if name not in available:
        raise SpecError(table.path, table.key("cosmology"), name, f"one of {', '.join(available)}")
    return name


def parse_observation(text: str, path: str = "<string>") -> Observation:
    """Validate the text of an observation file; raises :class:`SpecError`."""
    data = load_toml(text, path)
    top = Table(data, path)

    system = top.table("system")
    name = system.string("name", default=os.path.splitext(os.path.basename(path))[0])
    z_lens = system.number(
        "z_lens", positive=True, high=20.0, expected="a redshift > 0 and up to 20"
    )
    z_source_raw = system.raw("z_source")
    if isinstance(z_source_raw, dict):
        sub = Table(z_source_raw, path, "system.z_source")
        z_s = sub.number("mean", positive=True, expected="a redshift > 0")
        sd = sub.number("sd", positive=True, expected="a positive number (the 1-sigma error)")
        sub.finish(["mean", "sd"])
        z_source = Measurement(z_s, sd)
    else:
        z_source = Measurement(
            system.number(
                "z_source",
                positive=True,
                expected="a redshift > 0, or { mean = <z>, sd = <positive number> }",
            ),
            0.0,
        )
    if z_source.value <= z_lens:
        raise SpecError(
            path,
            "system.z_source",
            z_source.value,
            f"a source redshift larger than z_lens = {z_lens}",
        )
    cosmology = cosmology_name(system)
    system.finish(["name", "z_lens", "z_source", "cosmology"])

    ring = top.table("ring")
    theta_e = _measurement(ring, "einstein_radius_arcsec", allow_fixed=False)
    ring.finish(["einstein_radius_arcsec"])

    light = top.table("light")
    profile = light.string("profile", choices=LIGHT_PROFILES)
    r_eff = _measurement(light, "r_eff_arcsec")
    if profile == "sersic":
        n = _measurement(light, "sersic_index", low=0.5, high=10.0)
        light.finish(["profile", "r_eff_arcsec", "sersic_index"])
    else:
        n = Measurement(4.0, 0.0)
        light.finish(["profile", "r_eff_arcsec"])

    mstar = top.table("stellar_mass")
    log_m = _measurement(mstar, "log10_mstar_msun", allow_fixed=False, low=6.0, high=13.5)
    ref_imf = mstar.string("reference_imf", choices=REFERENCE_IMFS, default="chabrier03")
    mstar.finish(["log10_mstar_msun", "reference_imf"])

    kin = top.table("kinematics", required=False)
    kinematics = None
    if kin is not None:
        sigma = _measurement(kin, "sigma_kms", allow_fixed=False)
        aperture = kin.number("aperture_radius_arcsec", positive=True)
        seeing = kin.number("seeing_fwhm_arcsec", low=0.0, expected="a number >= 0")
        kin.finish(["sigma_kms", "aperture_radius_arcsec", "seeing_fwhm_arcsec"])
        kinematics = Kinematics(sigma, aperture, seeing)

    top.finish(["system", "ring", "light", "stellar_mass", "kinematics"])
    return Observation(
        name=name,
        z_lens=z_lens,
        z_source=z_source,
        einstein_radius_arcsec=theta_e,
        light_profile=profile,
        r_eff_arcsec=r_eff,
        sersic_index=n,
        log10_mstar_msun=log_m,
        reference_imf=ref_imf,
        kinematics=kinematics,
        cosmology=cosmology,
        text=text,
        path=str(path),
    )


def read_observation(path) -> Observation:
    """Read and validate an observation file (TOML); raises :class:`SpecError`."""
    path = os.fspath(path)
    return parse_observation(read_text(path, "observation file"), path)
