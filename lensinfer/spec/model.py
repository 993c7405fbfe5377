"""The model spec: one halo-response hypothesis, readable by a person."""

from __future__ import annotations

import dataclasses
import os

from lensinfer.spec._reader import Table, load_toml, read_text
from lensinfer.spec.errors import SpecError

__all__ = [
    "ModelSpec",
    "PriorSpec",
    "builtin_model_names",
    "builtin_model_path",
    "parse_model",
    "read_model",
]

PRESCRIPTIONS = ("none", "blumenthal86", "gnedin04", "gnedin11", "orbit_averaged", "power")
#: Priors on log10 M200c available beside a stellar-to-halo relation.
HALO_ABUNDANCE = ("tinker08", "uniform_in_log")
#: Halo populations whose concentration scatter a relation prior may take.
HALO_POPULATIONS = ("all", "relaxed")
HALO_PROFILES = ("nfw", "gnfw")
TOTAL_PROFILES = ("power_law",)


@dataclasses.dataclass(frozen=True)
class PriorSpec:
    """A prior as written in a model file.

    kind is one of "uniform" (low, high), "normal" (mean, sd), "fixed"
    (value), "imf" (value from a named IMF's mass factor; ``name``), or
    "relation" (a published scaling relation ``name``, with an optional
    range low/high for the quantity it is conditioned on).  For the halo mass
    of a stellar-to-halo relation, ``abundance`` is the prior on
    log10 M200c over that range: a halo mass function (``"tinker08"``, the
    default) or ``"uniform_in_log"``.  For a concentration relation,
    ``population`` is ``"all"`` (default) or ``"relaxed"`` haloes, which sets
    the scatter.
    """

    kind: str
    low: float | None = None
    high: float | None = None
    mean: float | None = None
    sd: float | None = None
    value: float | None = None
    name: str | None = None
    abundance: str | None = None
    population: str | None = None


@dataclasses.dataclass(frozen=True)
class ModelSpec:
    """A validated model spec (read with :func:`read_model`).

    Attributes
    ----------
    name, summary : str
    mass_model : str
        "decomposition" (stars + dark halo) or "total_power_law".
    imf_factor : PriorSpec
        Prior on log10 alpha_IMF (relative to the observation's reference IMF).
    log10_mstar_ref : PriorSpec or None
        Prior on the SED-scale stellar mass when it is not tied to the halo
        by a stellar-to-halo relation.
    halo_profile : str or None
        "nfw" or "gnfw".
    log10_m200c, log10_c200c, inner_slope : PriorSpec or None
    prescription : str or None
        Halo response.
    response_nu : PriorSpec or None
        Prior on nu for "power".
    orbit_scale, orbit_exponent : PriorSpec or None
        Priors (or fixed values) of A and w of the orbit-averaged radius
        rbar = A r_vir (r / r_vir)^w for "orbit_averaged".
    slope, theta_e_arcsec : PriorSpec or None
        Total-mass power-law parameters.
    kinematics : dict
        Kinematics options (anisotropy); empty when not enabled.
    text, path : str
    """

    name: str
    summary: str
    mass_model: str
    imf_factor: PriorSpec
    log10_mstar_ref: PriorSpec | None
    halo_profile: str | None
    log10_m200c: PriorSpec | None
    log10_c200c: PriorSpec | None
    inner_slope: PriorSpec | None
    prescription: str | None
    response_nu: PriorSpec | None
    orbit_scale: PriorSpec | None
    orbit_exponent: PriorSpec | None
    slope: PriorSpec | None
    theta_e_arcsec: PriorSpec | None
    kinematics: dict
    text: str
    path: str


def _prior(
    table: Table,
    name: str,
    *,
    allow=("uniform", "normal"),
    relations=(),
    imfs=(),
    relation_options=(),
):
    """Parse ``name = { prior = "uniform", low = .., high = .. }`` and friends."""
    raw = table.raw(name)
    key = table.key(name)
    forms = []
    if "uniform" in allow:
        forms.append('{ prior = "uniform", low = <number>, high = <number> }')
    if "normal" in allow:
        forms.append('{ prior = "normal", mean = <number>, sd = <positive number> }')
    if "fixed" in allow:
        forms.append("a number (fixed)")
    if relations:
        forms.append(f"{{ relation = <one of {', '.join(map(repr, relations))}> }}")
    if imfs:
        forms.append(f"{{ imf = <one of {', '.join(map(repr, imfs))}> }}")
    expected = " or ".join(forms)
    if isinstance(raw, (int, float)) and not isinstance(raw, bool) and "fixed" in allow:
        return PriorSpec("fixed", value=table.number(name))
    if not isinstance(raw, dict):
        raise SpecError(table.path, key, raw, expected)
    sub = Table(raw, table.path, key)
    if sub.has("relation") and relations:
        rel = sub.string("relation", choices=tuple(relations))
        low = sub.number("low", default=None)
        high = sub.number("high", default=None)
        if low is None and high is not None:
            raise SpecError(
                table.path,
                key + ".low",
                None,
                "both low and high (or neither): a lower bound 'low' beside 'high'",
            )
        if high is None and low is not None:
            raise SpecError(
                table.path,
                key + ".high",
                None,
                "both low and high (or neither): an upper bound 'high' beside 'low'",
            )
        if low is not None and high <= low:
            raise SpecError(table.path, key + ".high", high, f"a number with high > low = {low}")
        extra = {}
        if "abundance" in relation_options:
            extra["abundance"] = sub.string(
                "abundance", choices=HALO_ABUNDANCE, default=HALO_ABUNDANCE[0]
            )
        if "population" in relation_options:
            extra["population"] = sub.string(
                "population", choices=HALO_POPULATIONS, default=HALO_POPULATIONS[0]
            )
        sub.finish(["relation", "low", "high", *extra])
        return PriorSpec("relation", low=low, high=high, name=rel, **extra)
    if sub.has("imf") and imfs:
        imf = sub.string("imf", choices=tuple(imfs))
        sub.finish(["imf"])
        return PriorSpec("imf", name=imf)
    if not sub.has("prior"):
        raise SpecError(table.path, key, raw, expected)
    kind = sub.string("prior", choices=tuple(k for k in allow if k in ("uniform", "normal")))
    if kind == "uniform":
        low = sub.number("low")
        high = sub.number("high")
        if high <= low:
            raise SpecError(table.path, key + ".high", high, f"a number larger than low = {low}")
        sub.finish(["prior", "low", "high"])
        return PriorSpec("uniform", low=low, high=high)
    mean = sub.number("mean")
    sd = sub.number("sd", positive=True, expected="a positive number")
    sub.finish(["prior", "mean", "sd"])
    return PriorSpec("normal", mean=mean, sd=sd)


def _check_range(path, key, prior: PriorSpec | None, low, high, what):
    """Uniform bounds (or normal means) must lie in the physically valid range."""
    if prior is None:
        return
    vals = [v for v in (prior.low, prior.high, prior.mean, prior.value) if v is not None]
    for v in vals:
        if not (low <= v <= high):
            raise SpecError(path, key, v, f"{what} between {low} and {high}")


def parse_model(text: str, path: str = "<string>") -> ModelSpec:
    """Validate the text of a model spec; raises :class:`SpecError`."""
    from lensinfer.halo import CONCENTRATION_RELATIONS, STELLAR_HALO_RELATIONS
    from lensinfer.stellar import NAMED_IMFS

    data = load_toml(text, path)
    top = Table(data, path)
    head = top.table("model")
    name = head.string("name")
    summary = head.string("summary", default="")
    head.finish(["name", "summary"])

    stars = top.table("stars")
    imf_factor = _prior(stars, "imf_factor", allow=("uniform", "normal"), imfs=tuple(NAMED_IMFS))
    _check_range(path, "stars.imf_factor", imf_factor, -1.0, 1.5, "log10 alpha_IMF")
    mstar_ref = None
    if stars.has("log10_mstar_ref"):
        mstar_ref = _prior(stars, "log10_mstar_ref")
        _check_range(path, "stars.log10_mstar_ref", mstar_ref, 8.0, 13.0, "log10 M*_ref/Msun")
    stars.finish(["imf_factor", "log10_mstar_ref"])

    has_halo, has_total = top.has("halo"), top.has("total")
    one_of = (
        "exactly one of a [halo] section (stars + dark matter) or a [total] section "
        "(a total-mass power law)"
    )
    if has_halo and has_total:
        raise SpecError(path, "total", None, one_of, problem="is given together with [halo]")
    if not has_halo and not has_total:
        raise SpecError(path, "halo", None, one_of)
    halo_profile = m200 = c200 = gamma = prescription = nu = slope = theta_e = None
    orbit_a = orbit_w = None
    if has_halo:
        mass_model = "decomposition"
        halo = top.table("halo")
        halo_profile = halo.string("profile", choices=HALO_PROFILES)
        m200 = _prior(
            halo,
            "log10_m200c",
            relations=tuple(STELLAR_HALO_RELATIONS),
            relation_options=("abundance",),
        )
        _check_range(path, "halo.log10_m200c", m200, 10.5, 16.0, "log10 M200c/Msun")
        c200 = _prior(
            halo,
            "log10_c200c",
            relations=tuple(CONCENTRATION_RELATIONS),
            relation_options=("population",),
        )
        _check_range(path, "halo.log10_c200c", c200, -0.5, 1.7, "log10 c200c")
        if halo_profile == "gnfw":
            gamma = _prior(halo, "inner_slope", allow=("uniform", "normal", "fixed"))
            # gamma < 2: the concentration-mass relations define c through r_-2,
            # the radius of slope -2, which is (2 - gamma) r_s for a gNFW.
            _check_range(path, "halo.inner_slope", gamma, 0.0, 1.9, "an inner slope")
            halo.finish(["profile", "log10_m200c", "log10_c200c", "inner_slope"])
        else:
            halo.finish(["profile", "log10_m200c", "log10_c200c"])
        if m200.kind == "relation" and mstar_ref is not None:
            raise SpecError(
                path,
                "stars.log10_mstar_ref",
                stars.data["log10_mstar_ref"],
                f"no explicit prior: the stellar-to-halo relation {m200.name!r} already "
                "links M*_ref to M200c",
            )
        if m200.kind == "relation" and m200.low is None:
            m200 = dataclasses.replace(m200, low=11.5, high=15.0)
        if m200.kind != "relation" and mstar_ref is None:
            mstar_ref = PriorSpec("uniform", low=9.5, high=12.8)
        response = top.table("response")
        prescription = response.string("prescription", choices=PRESCRIPTIONS)
        if prescription == "power":
            nu = _prior(response, "response_nu")
            _check_range(path, "response.response_nu", nu, -0.3, 3.0, "a response index nu")
            response.finish(["prescription", "response_nu"])
        elif prescription == "orbit_averaged":
            allow = ("uniform", "normal", "fixed")
            orbit_a = _prior(response, "orbit_scale", allow=allow)
            _check_range(path, "response.orbit_scale", orbit_a, 0.1, 5.0, "an orbit scale A")
            orbit_w = _prior(response, "orbit_exponent", allow=allow)
            _check_range(path, "response.orbit_exponent", orbit_w, 0.2, 1.5, "an orbit exponent w")
            response.finish(["prescription", "orbit_scale", "orbit_exponent"])
        else:
            response.finish(["prescription"])
    else:
        mass_model = "total_power_law"
        total = top.table("total")
        total.string("profile", choices=TOTAL_PROFILES)
        slope = _prior(total, "slope")
        _check_range(path, "total.slope", slope, 1.05, 2.95, "a 3-D density slope")
        theta_e = _prior(total, "theta_e_arcsec")
        _check_range(
            path, "total.theta_e_arcsec", theta_e, 0.05, 10.0, "an Einstein radius in arcsec"
        )
        total.finish(["profile", "slope", "theta_e_arcsec"])
        if mstar_ref is None:
            mstar_ref = PriorSpec("uniform", low=9.5, high=12.8)

    kinematics = {}
    kin = top.table("kinematics", required=False)
    if kin is not None:
        kinematics = _parse_kinematics(kin)
    if mass_model == "decomposition":
        top.finish(["model", "stars", "halo", "response", "kinematics"])
    else:
        top.finish(["model", "stars", "total", "kinematics"])
    return ModelSpec(
        name=name,
        summary=summary,
        mass_model=mass_model,
        imf_factor=imf_factor,
        log10_mstar_ref=mstar_ref,
        halo_profile=halo_profile,
        log10_m200c=m200,
        log10_c200c=c200,
        inner_slope=gamma,
        prescription=prescription,
        response_nu=nu,
        orbit_scale=orbit_a,
        orbit_exponent=orbit_w,
        slope=slope,
        theta_e_arcsec=theta_e,
        kinematics=kinematics,
        text=text,
        path=str(path),
    )


ANISOTROPY = ("isotropic", "constant", "osipkov_merritt")


def _parse_kinematics(kin: Table) -> dict:
    """[kinematics]: use = true/false, anisotropy model and its prior."""
    use = kin.raw("use", True)
    if not isinstance(use, bool):
        raise SpecError(kin.path, kin.key("use"), use, "true or false")
    anisotropy = kin.string("anisotropy", choices=ANISOTROPY, default="isotropic")
    out = {"use": use, "anisotropy": anisotropy}
    if anisotropy == "constant":
        out["beta"] = _prior(kin, "beta", allow=("uniform", "normal", "fixed"))
        _check_range(kin.path, kin.key("beta"), out["beta"], -2.0, 0.95, "an anisotropy beta")
        kin.finish(["use", "anisotropy", "beta"])
    elif anisotropy == "osipkov_merritt":
        out["log10_r_anisotropy_reff"] = _prior(
            kin, "log10_r_anisotropy_reff", allow=("uniform", "normal", "fixed")
        )
        _check_range(
            kin.path,
            kin.key("log10_r_anisotropy_reff"),
            out["log10_r_anisotropy_reff"],
            -1.5,
            3.0,
            "log10 r_a/R_eff",
        )
        kin.finish(["use", "anisotropy", "log10_r_anisotropy_reff"])
    else:
        kin.finish(["use", "anisotropy"])
    return out


def _builtin_dirs():
    here = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
    # In a wheel the specs are packaged at lensinfer/_builtin_models; in a
    # source checkout (editable install) they are the repository's models/.
    return [os.path.join(here, "_builtin_models"), os.path.join(os.path.dirname(here), "models")]


def builtin_model_names() -> list[str]:
    """Names of the built-in model specs."""
    for d in _builtin_dirs():
        if os.path.isdir(d):
            return sorted(f[:-5] for f in os.listdir(d) if f.endswith(".toml"))
    return []


def builtin_model_path(name: str) -> str | None:
    """Path of the built-in model ``name`` (without .toml), or None."""
    for d in _builtin_dirs():
        p = os.path.join(d, f"{name}.toml")
        if os.path.isfile(p):
            return p
    return None


def read_model(path_or_name) -> ModelSpec:
    """Read and validate a model spec from a path or a built-in model's name."""
    path = os.fspath(path_or_name)
    if not os.path.exists(path):
        builtin = builtin_model_path(path)
        if builtin is None:
            names = ", ".join(builtin_model_names())
            raise SpecError(
                path,
                "",
                None,
                f"an existing model file or a built-in model name ({names})",
                problem="is neither a file nor a built-in model",
            )
        path = builtin
    return parse_model(read_text(path, "model file"), path)
