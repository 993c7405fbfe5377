"""Mock observations from chosen parameter values (for tests, teaching, calibration)."""

from __future__ import annotations

import dataclasses
import os

import jax
import numpy as np

from lensinfer.spec import Measurement, Observation, SpecError
from lensinfer.spec._reader import Table, check_number, load_toml, read_text
from lensinfer.spec.observation import cosmology_name

__all__ = ["Truth", "format_observation", "make_mock", "parse_truth", "read_truth"]


@dataclasses.dataclass(frozen=True)
class Truth:
    """A truth file: the system, parameter values and the measurement errors."""

    name: str
    z_lens: float
    z_source: float
    values: dict
    errors: dict
    kinematics: dict | None
    cosmology: str
    path: str


_ERROR_KEYS = (
    "einstein_radius_arcsec",
    "log10_mstar_msun",
    "r_eff_arcsec",
    "sersic_index",
    "z_source",
    "sigma_kms",
)


def parse_truth(text: str, path: str = "<string>") -> Truth:
    """Validate a truth file (TOML with [system], [truth], [errors], optional [kinematics])."""
    from lensinfer.model import PARAMETERS
    from lensinfer.model.lens_model import PARAMETER_RANGES

    top = Table(load_toml(text, path), path)
    system = top.table("system")
    name = system.string("name", default="mock lens (invented)")
    z_l = system.number("z_lens", positive=True, expected="a redshift > 0")
    z_s = system.number("z_source", positive=True, expected="a redshift > 0")
    if z_s <= z_l:
        raise SpecError(
            path, "system.z_source", z_s, f"a source redshift larger than z_lens = {z_l}"
        )
    cosmology = cosmology_name(system)
    system.finish(["name", "z_lens", "z_source", "cosmology"])
    truth = top.table("truth")
    values = {}
    for k, v in truth.data.items():
        if k not in PARAMETERS:
            raise SpecError(
                path,
                f"truth.{k}",
                v,
                f"a parameter name: {', '.join(PARAMETERS)}",
                problem="is not a known parameter",
            )
        lo, hi = PARAMETER_RANGES[k]
        values[k] = check_number(v, path, f"truth.{k}", low=lo, high=hi)
    errors_t = top.table("errors")
    errors = {}
    for k in _ERROR_KEYS:
        if errors_t.has(k):
            errors[k] = errors_t.number(k, low=0.0, expected="a 1-sigma error >= 0")
    for k in ("einstein_radius_arcsec", "log10_mstar_msun"):
        if errors.get(k, 0.0) <= 0.0:
            raise SpecError(path, f"errors.{k}", errors.get(k), "a positive 1-sigma error")
    errors_t.finish(list(_ERROR_KEYS))
    kin = top.table("kinematics", required=False)
    kinematics = None
    if kin is not None:
        kinematics = {
            "aperture_radius_arcsec": kin.number("aperture_radius_arcsec", positive=True),
            "seeing_fwhm_arcsec": kin.number("seeing_fwhm_arcsec", low=0.0),
        }
        kin.finish(["aperture_radius_arcsec", "seeing_fwhm_arcsec"])
        if errors.get("sigma_kms", 0.0) <= 0.0:
            raise SpecError(
                path,
                "errors.sigma_kms",
                errors.get("sigma_kms"),
                "a positive 1-sigma error when [kinematics] is given",
            )
    top.finish(["system", "truth", "errors", "kinematics"])
    return Truth(name, z_l, z_s, values, errors, kinematics, cosmology, str(path))


def read_truth(path) -> Truth:
    path = os.fspath(path)
    return parse_truth(read_text(path, "truth file"), path)


def make_mock(spec, truth: Truth, *, noise: bool = False, seed: int = 0):
    """The observation a lens with parameters ``truth.values`` would give.

    Returns (Observation, predicted) where ``predicted`` holds the noiseless
    predicted quantities.  With ``noise``, Gaussian noise with the stated
    errors is added to every measured value (seeded).
    """
    from lensinfer.model import build_model
    from lensinfer.model.lens_model import _cosmology_for

    cosmo_obs = Observation(
        name=truth.name,
        z_lens=truth.z_lens,
        z_source=Measurement(truth.z_source, 0.0),
        einstein_radius_arcsec=Measurement(1.0, 1.0),
        light_profile="sersic",
        r_eff_arcsec=Measurement(1.0, 0.0),
        sersic_index=Measurement(4.0, 0.0),
        log10_mstar_msun=Measurement(11.0, 1.0),
        reference_imf="chabrier03",
        kinematics=None,
        cosmology=truth.cosmology,
        text="",
        path="<mock>",
    )
    kpc_per_arcsec = float(_cosmology_for(cosmo_obs).kpc_per_arcsec(truth.z_lens))
    v = dict(truth.values)
    need_r = "r_eff_kpc" not in v
    need_n = "sersic_index" not in v
    if need_r or need_n:
        missing = [k for k, m in (("r_eff_kpc", need_r), ("sersic_index", need_n)) if m]
        raise SpecError(
            truth.path, f"truth.{missing[0]}", None, "the lens galaxy's r_eff_kpc and sersic_index"
        )
    err = truth.errors
    kin = None
    if truth.kinematics is not None:
        from lensinfer.spec import Kinematics

        kin = Kinematics(
            Measurement(200.0, err["sigma_kms"]),
            truth.kinematics["aperture_radius_arcsec"],
            truth.kinematics["seeing_fwhm_arcsec"],
        )
    obs = dataclasses.replace(
        cosmo_obs,
        z_source=Measurement(truth.z_source, err.get("z_source", 0.0)),
        einstein_radius_arcsec=Measurement(1.0, err["einstein_radius_arcsec"]),
        r_eff_arcsec=Measurement(v["r_eff_kpc"] / kpc_per_arcsec, err.get("r_eff_arcsec", 0.0)),
        sersic_index=Measurement(v["sersic_index"], err.get("sersic_index", 0.0)),
        log10_mstar_msun=Measurement(11.0, err["log10_mstar_msun"]),
        kinematics=kin,
    )
    lens = build_model(spec, obs)
    params = {}
    for name in lens.parameter_names:
        if name == "z_source":
            params[name] = truth.z_source
        elif name == "r_eff_kpc":
            params[name] = v["r_eff_kpc"]
        elif name == "sersic_index":
            params[name] = v["sersic_index"]
        elif name not in v:
            raise SpecError(
                truth.path,
                f"truth.{name}",
                None,
                f"a value for every parameter of model {spec.name!r}: {', '.join(lens.parameter_names)}",
            )
        else:
            params[name] = v[name]
    # Jitted: an eager run of a contraction model dispatches thousands of small ops.
    derived = {k: float(x) for k, x in jax.jit(lens.derive)(params).items()}
    rng = np.random.default_rng(seed)

    def noisy(value, sd):
        return float(value + sd * rng.standard_normal()) if (noise and sd > 0) else float(value)

    theta = derived["einstein_radius_arcsec"]
    if not theta > 0:
        raise SpecError(
            truth.path,
            "truth",
            None,
            "parameters of a super-critical lens",
            problem="gives no Einstein ring (the lens is sub-critical)",
        )
    mstar_ref = params.get("log10_mstar_ref", v.get("log10_mstar_ref"))
    out = dataclasses.replace(
        obs,
        z_source=Measurement(
            noisy(truth.z_source, err.get("z_source", 0.0))
            if err.get("z_source", 0) > 0
            else truth.z_source,
            err.get("z_source", 0.0),
        ),
        einstein_radius_arcsec=Measurement(
            noisy(theta, err["einstein_radius_arcsec"]), err["einstein_radius_arcsec"]
        ),
        r_eff_arcsec=Measurement(
            noisy(obs.r_eff_arcsec.value, obs.r_eff_arcsec.sd), obs.r_eff_arcsec.sd
        ),
        sersic_index=Measurement(
            float(np.clip(noisy(v["sersic_index"], obs.sersic_index.sd), 0.5, 10.0)),
            obs.sersic_index.sd,
        ),
        log10_mstar_msun=Measurement(
            noisy(mstar_ref, err["log10_mstar_msun"]), err["log10_mstar_msun"]
        ),
    )
    if kin is not None:
        sig = derived["sigma_aperture_kms"]
        out = dataclasses.replace(
            out,
            kinematics=dataclasses.replace(
                kin, sigma_kms=Measurement(noisy(sig, err["sigma_kms"]), err["sigma_kms"])
            ),
        )
    return out, {**{k: float(x) for k, x in params.items()}, **derived}


def _m(m: Measurement, digits=6) -> str:
    if m.sd > 0:
        return f"{{ value = {m.value:.{digits}g}, sd = {m.sd:.{digits}g} }}"
    return f"{m.value:.{digits}g}"


def format_observation(obs: Observation, header: str = "") -> str:
    """TOML text of an observation (the inverse of :func:`parse_observation`)."""
    lines = [f"# {h}" for h in header.splitlines()] if header else []
    zs = obs.z_source
    z_text = f"{{ mean = {zs.value:.6g}, sd = {zs.sd:.6g} }}" if zs.sd > 0 else f"{zs.value:.6g}"
    lines += [
        "[system]",
        f"name = {_q(obs.name)}",
        f"z_lens = {obs.z_lens:.6g}",
        f"z_source = {z_text}",
        f"cosmology = {_q(obs.cosmology)}",
        "",
        "[ring]",
        f"einstein_radius_arcsec = {_m(obs.einstein_radius_arcsec)}",
        "",
        "[light]",
        f"profile = {_q(obs.light_profile)}",
        f"r_eff_arcsec = {_m(obs.r_eff_arcsec)}",
    ]
    if obs.light_profile == "sersic":
        lines.append(f"sersic_index = {_m(obs.sersic_index)}")
    lines += [
        "",
        "[stellar_mass]",
        f"log10_mstar_msun = {_m(obs.log10_mstar_msun)}",
        f"reference_imf = {_q(obs.reference_imf)}",
    ]
    if obs.kinematics is not None:
        k = obs.kinematics
        lines += [
            "",
            "[kinematics]",
            f"sigma_kms = {_m(k.sigma_kms)}",
            f"aperture_radius_arcsec = {k.aperture_radius_arcsec:.6g}",
            f"seeing_fwhm_arcsec = {k.seeing_fwhm_arcsec:.6g}",
        ]
    return "\n".join(lines) + "\n"


def _q(s: str) -> str:
    return '"' + s.replace("\\", "\\\\").replace('"', '\\"') + '"'
