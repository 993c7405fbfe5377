"""A validated model spec plus an observation, turned into a numpyro model.

The physics of one draw lives in :meth:`SystemModel.derive`, a pure JAX function
of the sampled parameters; the numpyro model, the mock-data generator and the
evidence code all call it, so they cannot drift apart.
"""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Callable

import jax
import jax.numpy as jnp
import numpy as np

from lensinfer.cosmology import Cosmology
from lensinfer.model.priors import Normal, TabulatedLogDensity, TruncatedNormal, Uniform
from lensinfer.spec import ModelSpec, Observation, PriorSpec

__all__ = [
    "DERIVED_QUANTITIES",
    "LIKELIHOOD_SITES",
    "PARAMETERS",
    "SystemModel",
    "build_model",
]

#: Every sampled parameter lensinfer may use: name -> (unit, meaning).
PARAMETERS = {
    "log10_m200c": ("dex(Msun)", "log10 of the dark-matter-only halo mass M200c"),
    "log10_mstar_ref": ("dex(Msun)", "log10 of the SED-scale stellar mass M*_ref (reference IMF)"),
    "log10_c200c": ("dex", "log10 of the halo concentration c200c = r200c / r_s"),
    "log10_imf_factor": ("dex", "log10 alpha_IMF = log10(M* / M*_ref)"),
    "inner_slope": ("", "inner logarithmic density slope of a generalized NFW halo"),
    "response_nu": ("", "halo response index nu of r_f / r_i = (M_i / M_f)^nu"),
    "orbit_scale": ("", "A of the orbit-averaged radius rbar = A r_vir (r / r_vir)^w"),
    "orbit_exponent": ("", "w of the orbit-averaged radius rbar = A r_vir (r / r_vir)^w"),
    "slope": ("", "3-D logarithmic slope of a power-law total density"),
    "theta_e_arcsec": (
        "arcsec",
        "Einstein radius of the total power law (its normalisation: M_2D(<R_E) = pi Sigma_cr R_E^2)",
    ),
    "r_eff_kpc": ("kpc", "effective (projected half-light) radius of the lens galaxy"),
    "sersic_index": ("", "Sersic index of the lens galaxy's light"),
    "z_source": ("", "source redshift (photometric: marginalised over)"),
    "anisotropy_beta": ("", "constant orbital anisotropy beta of the stars"),
    "log10_r_anisotropy_reff": ("dex", "log10 of the Osipkov-Merritt radius in units of R_eff"),
}

#: Physically sensible ranges of the parameters (for checking truth files).
PARAMETER_RANGES = {
    "log10_m200c": (10.5, 16.0),
    "log10_mstar_ref": (8.0, 13.0),
    "log10_c200c": (-0.5, 1.7),
    "log10_imf_factor": (-1.0, 1.5),
    "inner_slope": (0.0, 2.5),
    "response_nu": (-0.3, 3.0),
    "orbit_scale": (0.1, 5.0),
    "orbit_exponent": (0.2, 1.5),
    "slope": (1.05, 2.95),
    "theta_e_arcsec": (0.05, 10.0),
    "r_eff_kpc": (0.01, 200.0),
    "sersic_index": (0.5, 10.0),
    "z_source": (0.001, 20.0),
    "anisotropy_beta": (-2.0, 0.95),
    "log10_r_anisotropy_reff": (-1.5, 3.0),
}

#: Derived quantities recorded in every draw: name -> (unit, meaning).
DERIVED_QUANTITIES = {
    "mstar_msun": ("Msun", "stellar mass M* = alpha_IMF M*_ref"),
    "alpha_imf": ("", "alpha_IMF, stellar mass relative to the reference IMF"),
    "m200c_msun": ("Msun", "halo mass M200c (NaN for a total power law)"),
    "c200c": ("", "halo concentration (NaN for a total power law)"),
    "galaxy_fraction": ("", "f_gal = M*(<r200c) / M200c"),
    "einstein_radius_arcsec": ("arcsec", "predicted Einstein radius"),
    "projected_mass_einstein_msun": (
        "Msun",
        "total projected mass inside the predicted Einstein radius",
    ),
    "fdm_einstein": ("", "dark-matter fraction of the projected mass inside the Einstein radius"),
    "fdm_reff": ("", "dark-matter fraction of the 3-D mass inside R_eff"),
    "density_slope_einstein": (
        "",
        "mass-weighted total 3-D density slope inside R_E, 3 - dlnM/dlnr at R_E "
        "(Dutton & Treu 2014, eq. 2)",
    ),
    "contraction_ratio_reff": (
        "",
        "dark matter inside R_eff after / before the response (1 for no response)",
    ),
}

#: Likelihood sites (observed quantities): name -> (unit, meaning).
LIKELIHOOD_SITES = {
    "einstein_radius": ("arcsec", "measured Einstein radius"),
    "stellar_mass": ("dex(Msun)", "SED stellar mass log10 M*_ref under the reference IMF"),
    "velocity_dispersion": ("km/s", "aperture stellar velocity dispersion"),
}

_AGE_GYR = 10.0  # age of the population used to turn a named IMF into alpha_IMF


def _simple_prior(p: PriorSpec):
    if p.kind == "uniform":
        return Uniform(p.low, p.high)
    if p.kind == "normal":
        return Normal(p.mean, p.sd)
    raise ValueError(f"not a simple prior: {p}")


@dataclasses.dataclass(frozen=True)
class ParameterPlan:
    """How one sampled parameter gets its prior: from earlier parameters' values."""

    name: str
    prior: Callable[[dict], object]  # values so far -> Uniform / Normal / TruncatedNormal
    describe: str


@dataclasses.dataclass(frozen=True)
class SystemModel:
    r"""A model spec applied to one observation.

    Attributes
    ----------
    spec : ModelSpec
    observation : Observation
    cosmology : Cosmology
    plan : tuple of ParameterPlan
        The sampled parameters in sampling order (later priors may depend on
        earlier values, e.g. M*_ref on M200c through a stellar-to-halo relation).
    fixed : dict
        Parameters held fixed (named IMF factor, exact nuisance values).
    kpc_per_arcsec : float
    baryon_fraction : float
        :math:`f_b = \Omega_b/\Omega_m` of the cosmology (the baryon budget).
    log_prior_volume : float
        ln of the fraction of the parameter box (the product of the
        sequential priors in :attr:`plan`) that the baryon budget allows.  The
        prior is that product restricted to the allowed region and divided by
        this fraction; evidences computed over the box subtract it.
    """

    spec: ModelSpec
    observation: Observation
    cosmology: Cosmology
    plan: tuple
    fixed: dict
    kpc_per_arcsec: float
    baryon_fraction: float = math.nan
    log_prior_volume: float = 0.0

    @property
    def parameter_names(self) -> list[str]:
        return [p.name for p in self.plan]

    @property
    def uses_kinematics(self) -> bool:
        return bool(self.spec.kinematics.get("use")) and self.observation.kinematics is not None

    # ------------------------------------------------------------------ priors
    def prior_transform(self, u):
        """Map a point of the unit cube (one coordinate per parameter) to parameters.

        Sequential inverse-CDF transforms, in the order of :attr:`plan`, so
        conditional priors (M*_ref given M200c, c200c given M200c) stay exact.
        """
        values = {}
        for k, p in enumerate(self.plan):
            values[p.name] = p.prior(values).from_unit_cube(u[..., k])
        return values

    def to_unit_cube(self, params):
        """The inverse of :meth:`prior_transform`: parameters -> unit-cube point (..., n).

        Each coordinate is the parameter's prior CDF given the earlier
        parameters' values (the Rosenblatt transform), so a posterior draw maps
        to the point of the cube that :meth:`prior_transform` sends back to it.
        """
        cols = [p.prior(params).to_unit_cube(params[p.name]) for p in self.plan]
        return jnp.stack(cols, axis=-1)

    def prior_descriptions(self) -> dict[str, str]:
        return {p.name: p.describe for p in self.plan}

    # ------------------------------------------------------------- physics
    def _value(self, params, name):
        return params[name] if name in params else self.fixed[name]

    # ---------------------------------------------------------- baryon budget
    @property
    def has_baryon_budget(self) -> bool:
        """True for stars + halo models, whose prior obeys M* <= f_b M200c."""
        return self.spec.mass_model == "decomposition"

    def _log10_mstar(self, params):
        """log10 M* = log10 alpha_IMF + log10 M*_ref, the galaxy's stellar mass."""
        return self._value(params, "log10_mstar_ref") + self._value(params, "log10_imf_factor")

    def _log10_mstar_max(self, params):
        """log10 of the largest stellar mass the baryon budget allows, f_b M200c."""
        return self._value(params, "log10_m200c") + math.log10(self.baryon_fraction)

    def baryon_budget_ok(self, params):
        r"""Whether a draw respects the baryon budget :math:`M_* \le f_b M_{200c}`.

        :math:`M_* = \alpha_{\rm IMF} M_{*,\rm ref}` is the galaxy's total
        stellar mass and :math:`f_b = \Omega_b/\Omega_m` the cosmic baryon
        fraction (:func:`lensinfer.halo.max_galaxy_fraction`): a galaxy cannot
        hold more baryons than its halo brought in.  The total (not only the
        part inside r200c) is bounded, so :math:`f_{\rm gal} \le f_b < 1` always.
        """
        if not self.has_baryon_budget:
            return jnp.asarray(True)
        return self._log10_mstar(params) <= self._log10_mstar_max(params)

    def log_constraint(self, params):
        """0 where the draw is allowed by the baryon budget, -inf where it is not."""
        return jnp.where(self.baryon_budget_ok(params), 0.0, -jnp.inf)

    def build_profiles(self, params):
        """(stars, dark_matter, halo, extras) profiles for one draw."""
        from lensinfer.contraction import contract_halo
        from lensinfer.halo import radius_from_mass
        from lensinfer.profiles import NFW, GeneralizedNFW, Hernquist, PowerLaw, Sersic

        obs = self.observation
        r_eff = self._value(params, "r_eff_kpc")
        n = self._value(params, "sersic_index")
        log10_mstar = self._log10_mstar(params)
        if self.has_baryon_budget:
            # Outside the baryon budget (excluded by log_constraint) the physics
            # would take log(1 - f_gal) of f_gal > 1; evaluate it at the budget's
            # edge instead, so values and gradients stay finite there (the draw
            # has zero prior density either way).  Inside, this changes nothing.
            log10_mstar = jnp.minimum(log10_mstar, self._log10_mstar_max(params))
        mstar = 10.0**log10_mstar
        if obs.light_profile == "sersic":
            stars = Sersic(mstar, r_eff, n)
        else:
            stars = Hernquist(mstar, r_eff / 1.8153)  # R_eff = 1.8153 a (Hernquist 1990)
        if self.spec.mass_model == "total_power_law":
            # Normalised by its own Einstein radius, the parameter the ring
            # measures almost directly: the lensing constraint is then
            # axis-aligned in (theta_E, slope) instead of a curved ridge.
            from lensinfer.lensing import critical_surface_density

            gamma = self._value(params, "slope")
            sigma_cr = critical_surface_density(
                obs.z_lens, self._value(params, "z_source"), self.cosmology
            )
            r_e = self._value(params, "theta_e_arcsec") * self.kpc_per_arcsec
            unit = PowerLaw(1.0, r_e, gamma)
            total = PowerLaw(jnp.pi * sigma_cr * r_e**2 / unit.projected_mass(r_e), r_e, gamma)
            return stars, None, None, {"total": total}
        z_l = obs.z_lens
        m200 = 10.0 ** self._value(params, "log10_m200c")
        c200 = 10.0 ** self._value(params, "log10_c200c")
        if self.spec.halo_profile == "nfw":
            halo = NFW.from_m200c(m200, c200, z_l, self.cosmology)
        else:
            halo = GeneralizedNFW.from_m200c(
                m200, c200, self._value(params, "inner_slope"), z_l, self.cosmology
            )
        r200 = radius_from_mass(m200, z_l, "200c", self.cosmology)
        kwargs = {}
        if self.spec.prescription == "power":
            kwargs["response_index"] = self._value(params, "response_nu")
        if self.spec.prescription == "orbit_averaged":
            kwargs["orbit_scale"] = self._value(params, "orbit_scale")
            kwargs["orbit_exponent"] = self._value(params, "orbit_exponent")
        # z and cosmology let contract_halo find the virial radius that
        # normalises the orbit-averaged radius (Gnedin et al. 2004, 2011).
        dm = contract_halo(
            halo,
            stars,
            self.spec.prescription,
            r200c=r200,
            z=z_l,
            cosmology=self.cosmology,
            **kwargs,
        )
        return stars, dm, halo, {"r200c": r200, "m200c": m200, "c200c": c200}

    def derive(self, params) -> dict:
        """All derived quantities of one draw (pure JAX; see DERIVED_QUANTITIES)."""
        from lensinfer.lensing import critical_surface_density, einstein_radius_kpc

        obs = self.observation
        stars, dm, halo, extra = self.build_profiles(params)
        total = extra["total"] if dm is None else stars + dm
        z_s = self._value(params, "z_source")
        sigma_cr = critical_surface_density(obs.z_lens, z_s, self.cosmology)
        r_e = einstein_radius_kpc(
            total, sigma_cr, r_guess=obs.einstein_radius_arcsec.value * self.kpc_per_arcsec
        )
        r_eff = self._value(params, "r_eff_kpc")
        m2d_e = total.projected_mass(r_e)
        m2d_star = stars.projected_mass(r_e)
        m3d_star_reff = stars.enclosed_mass(r_eff)

        def log_m3d(lnr):
            return jnp.log(total.enclosed_mass(jnp.exp(lnr)))

        dlnm = jax.jvp(log_m3d, (jnp.log(r_e),), (jnp.ones_like(r_e),))[1]
        out = {
            "mstar_msun": stars.mass,
            "alpha_imf": 10.0 ** self._value(params, "log10_imf_factor"),
            "einstein_radius_arcsec": r_e / self.kpc_per_arcsec,
            "projected_mass_einstein_msun": m2d_e,
            "fdm_einstein": 1.0 - m2d_star / m2d_e,
            "density_slope_einstein": 3.0 - dlnm,
        }
        if dm is None:
            m3d_tot = total.enclosed_mass(r_eff)
            nan = jnp.full_like(m2d_e, jnp.nan)
            out.update(
                m200c_msun=nan,
                c200c=nan,
                galaxy_fraction=nan,
                fdm_reff=1.0 - m3d_star_reff / m3d_tot,
                contraction_ratio_reff=nan,
            )
        else:
            f_gal = stars.enclosed_mass(extra["r200c"]) / extra["m200c"]
            m_dm_reff = dm.enclosed_mass(r_eff)
            out.update(
                m200c_msun=extra["m200c"],
                c200c=extra["c200c"],
                galaxy_fraction=f_gal,
                fdm_reff=m_dm_reff / (m_dm_reff + m3d_star_reff),
                contraction_ratio_reff=m_dm_reff / ((1.0 - f_gal) * halo.enclosed_mass(r_eff)),
            )
        if self.uses_kinematics:
            out["sigma_aperture_kms"] = self.predict_dispersion(params, stars, total)
        return out

    def anisotropy(self, params):
        """The stars' orbital anisotropy model for one draw (lensinfer.dynamics)."""
        from lensinfer.dynamics import ConstantAnisotropy, Isotropic, OsipkovMerritt

        kind = self.spec.kinematics.get("anisotropy", "isotropic")
        if kind == "constant":
            return ConstantAnisotropy(self._value(params, "anisotropy_beta"))
        if kind == "osipkov_merritt":
            r_eff = self._value(params, "r_eff_kpc")
            return OsipkovMerritt(r_eff * 10.0 ** self._value(params, "log10_r_anisotropy_reff"))
        return Isotropic()

    def predict_dispersion(self, params, stars, total):
        """Luminosity-weighted aperture velocity dispersion (km/s) of the stars.

        Spherical Jeans equation for the stars (the light profile as tracer) in
        the total potential, projected and averaged over the observation's
        circular aperture convolved with its Gaussian seeing (see
        :func:`lensinfer.dynamics.aperture_dispersion`).
        """
        from lensinfer.dynamics import aperture_dispersion

        kin = self.observation.kinematics
        return aperture_dispersion(
            total,
            stars,
            kin.aperture_radius_arcsec * self.kpc_per_arcsec,
            kin.seeing_fwhm_arcsec * self.kpc_per_arcsec,
            anisotropy=self.anisotropy(params),
        )

    # ---------------------------------------------------------- likelihood
    def likelihood_sites(self) -> dict:
        """Site name -> (the sampled or derived quantity it measures, its Measurement).

        The one table of observed quantities; the log-likelihood terms, the
        numpyro observed sites and the results file's groups all read it.
        """
        obs = self.observation
        sites = {
            "einstein_radius": ("einstein_radius_arcsec", obs.einstein_radius_arcsec),
            "stellar_mass": ("log10_mstar_ref", obs.log10_mstar_msun),
        }
        if self.uses_kinematics:
            sites["velocity_dispersion"] = ("sigma_aperture_kms", obs.kinematics.sigma_kms)
        return sites

    def _predicted(self, params, derived, key):
        return derived[key] if key in derived else self._value(params, key)

    def log_likelihood_terms(self, params, derived=None) -> dict:
        """Gaussian log-likelihood of each observed quantity (one entry per site)."""
        d = self.derive(params) if derived is None else derived
        return {
            site: _normal_logpdf(m.value, self._predicted(params, d, key), m.sd)
            for site, (key, m) in self.likelihood_sites().items()
        }

    def observed_values(self) -> dict:
        return {site: m.value for site, (_, m) in self.likelihood_sites().items()}

    def observed_sds(self) -> dict:
        return {site: m.sd for site, (_, m) in self.likelihood_sites().items()}

    def predicted_keys(self) -> dict:
        """Likelihood site -> the sampled or derived quantity it compares with."""
        return {site: key for site, (key, _) in self.likelihood_sites().items()}

    def log_prior(self, params):
        """The normalised prior log density (in the sampled parameters).

        The sum of the sequential priors' log densities, restricted to the
        baryon budget (-inf outside) and renormalised by
        :attr:`log_prior_volume`.
        """
        total = 0.0
        for p in self.plan:
            total = total + p.prior(params).distribution().log_prob(params[p.name])
        return total + self.log_constraint(params) - self.log_prior_volume

    # -------------------------------------------------------------- numpyro
    def numpyro_model(self, observed: bool = True):
        """The numpyro model: samples, deterministics and observed sites.

        With ``observed=False`` the likelihood sites are left unobserved, so
        numpyro's Predictive draws the prior predictive distribution.
        """
        import numpyro
        import numpyro.distributions as dist

        params = {}
        for p in self.plan:
            params[p.name] = numpyro.sample(p.name, p.prior(params).distribution())
        if self.has_baryon_budget:
            numpyro.factor("baryon_budget", self.log_constraint(params))
        d = self.derive(params)
        for name, value in d.items():
            numpyro.deterministic(name, value)
        for site, (key, m) in self.likelihood_sites().items():
            numpyro.sample(
                site,
                dist.Normal(self._predicted(params, d, key), m.sd),
                obs=m.value if observed else None,
            )

    def __call__(self):
        return self.numpyro_model()


def _normal_logpdf(x, mean, sd):
    return -0.5 * ((x - mean) / sd) ** 2 - jnp.log(sd) - 0.5 * math.log(2.0 * math.pi)


def _astropy_cosmology(observation: Observation):
    """The astropy realisation the observation names (e.g. Planck18)."""
    from astropy.cosmology import realizations

    return getattr(realizations, observation.cosmology)


def _cosmology_for(observation: Observation) -> Cosmology:
    return Cosmology.from_astropy(_astropy_cosmology(observation))


def build_model(spec: ModelSpec, observation: Observation) -> SystemModel:
    """Turn a validated model spec and observation into a :class:`SystemModel`."""
    from lensinfer.halo import (
        concentration,
        concentration_scatter_dex,
        max_galaxy_fraction,
        stellar_mass_from_halo,
    )
    from lensinfer.stellar import imf_mass_factor

    cosmo = _cosmology_for(observation)
    z_l = observation.z_lens
    kpc_per_arcsec = float(cosmo.kpc_per_arcsec(z_l))
    plan: list[ParameterPlan] = []
    fixed: dict = {}

    def add(name, prior_fn, describe):
        plan.append(ParameterPlan(name, prior_fn, describe))

    def add_simple(name, p: PriorSpec, note=""):
        prior = _simple_prior(p)
        add(name, lambda v, prior=prior: prior, prior.describe() + note)

    # --- halo mass and the SED-scale stellar mass
    if spec.mass_model == "decomposition":
        m = spec.log10_m200c
        if m.kind == "relation":
            prior, describe = halo_mass_prior(m, observation)
            add("log10_m200c", lambda v, prior=prior: prior, describe)
            relation = m.name
            # The relations predict Chabrier-scale (reference-IMF) masses; an SED
            # mass quoted under another IMF is that mass times the IMF mass factor.
            log10_to_ref = _log10_chabrier_to_reference(observation.reference_imf)

            def mstar_prior(v, relation=relation, shift=log10_to_ref):
                med, scatter = stellar_mass_from_halo(
                    10.0 ** v["log10_m200c"], z_l, relation, cosmo
                )
                return Normal(jnp.log10(med) + shift, scatter)

            note = (
                f" + {log10_to_ref:.3f} dex ({observation.reference_imf} SED masses)"
                if observation.reference_imf != "chabrier03"
                else ""
            )
            add(
                "log10_mstar_ref",
                mstar_prior,
                f"normal(stellar-to-halo relation {relation!r} at M200c{note}, its scatter)",
            )
        else:
            add_simple("log10_m200c", m)
            add_simple("log10_mstar_ref", spec.log10_mstar_ref)
        c = spec.log10_c200c
        if c.kind == "relation":
            rel = c.name
            population = c.population or "all"
            scatter = float(concentration_scatter_dex(rel, population))

            def c_prior(v, rel=rel, scatter=scatter):
                med = concentration(10.0 ** v["log10_m200c"], z_l, relation=rel, cosmology=cosmo)
                return Normal(jnp.log10(med), scatter)

            add(
                "log10_c200c",
                c_prior,
                f"normal(concentration-mass relation {rel!r}, {scatter} dex, {population} haloes)",
            )
        else:
            add_simple("log10_c200c", c)
        if spec.halo_profile == "gnfw":
            if spec.inner_slope.kind == "fixed":
                fixed["inner_slope"] = spec.inner_slope.value
            else:
                add_simple("inner_slope", spec.inner_slope)
        if spec.prescription == "power":
            add_simple("response_nu", spec.response_nu)
        if spec.prescription == "orbit_averaged":
            for name in ("orbit_scale", "orbit_exponent"):
                p = getattr(spec, name)
                if p.kind == "fixed":
                    fixed[name] = p.value
                else:
                    add_simple(name, p)
    else:
        add_simple("log10_mstar_ref", spec.log10_mstar_ref)
        add_simple("slope", spec.slope)
        add_simple("theta_e_arcsec", spec.theta_e_arcsec)

    # --- the IMF factor
    f = spec.imf_factor
    if f.kind == "imf":
        fixed["log10_imf_factor"] = float(
            jnp.log10(
                imf_mass_factor(f.name, reference=observation.reference_imf, age_gyr=_AGE_GYR)
            )
        )
    else:
        add_simple("log10_imf_factor", f)

    # --- photometric nuisance parameters and the source redshift
    r = observation.r_eff_arcsec
    if r.fixed:
        fixed["r_eff_kpc"] = r.value * kpc_per_arcsec
    else:
        mu, sd = r.value * kpc_per_arcsec, r.sd * kpc_per_arcsec
        prior = TruncatedNormal(mu, sd, max(0.05 * mu, mu - 8 * sd), mu + 8 * sd)
        add("r_eff_kpc", lambda v, prior=prior: prior, prior.describe() + " (from r_eff_arcsec)")
    n = observation.sersic_index
    if n.fixed:
        fixed["sersic_index"] = n.value
    else:
        prior = TruncatedNormal(
            n.value, n.sd, max(0.5, n.value - 8 * n.sd), min(10.0, n.value + 8 * n.sd)
        )
        add("sersic_index", lambda v, prior=prior: prior, prior.describe())
    zs = observation.z_source
    if zs.fixed:
        fixed["z_source"] = zs.value
    else:
        prior = TruncatedNormal(zs.value, zs.sd, z_l + 0.05, zs.value + 8 * zs.sd)
        add("z_source", lambda v, prior=prior: prior, prior.describe())

    # --- orbital anisotropy of the stars (only when kinematics are used)
    if spec.kinematics.get("use") and observation.kinematics is not None:
        kind = spec.kinematics.get("anisotropy", "isotropic")
        key = {
            "constant": ("anisotropy_beta", "beta"),
            "osipkov_merritt": ("log10_r_anisotropy_reff", "log10_r_anisotropy_reff"),
        }.get(kind)
        if key is not None:
            name, spec_key = key
            p = spec.kinematics[spec_key]
            if p.kind == "fixed":
                fixed[name] = p.value
            else:
                add_simple(name, p)

    lens = SystemModel(
        spec=spec,
        observation=observation,
        cosmology=cosmo,
        plan=tuple(plan),
        fixed=fixed,
        kpc_per_arcsec=kpc_per_arcsec,
        baryon_fraction=float(max_galaxy_fraction(cosmo)),
    )
    if lens.has_baryon_budget:
        lens = dataclasses.replace(lens, log_prior_volume=allowed_log_volume(lens))
    return lens


#: Quasi-random points used to measure the baryon budget's share of the prior box.
N_VOLUME_POINTS = 2**15


def allowed_log_volume(lens: SystemModel, n_points: int = N_VOLUME_POINTS) -> float:
    """ln of the fraction of the prior box that the baryon budget allows.

    Scrambled Sobol points of the unit cube (scipy.stats.qmc, fixed seed) are
    mapped through the prior transform; the allowed share is the fraction
    that pass :meth:`SystemModel.baryon_budget_ok`.  With 2^15 points the
    relative error of the fraction P is about sqrt((1 - P) / (N P)), below 1%
    (0.01 in ln) whenever P > 0.25 (binomial; quasi-random points do better).

    Raises
    ------
    ValueError
        When no point is allowed: the priors cannot satisfy the budget.
    """
    from scipy.stats import qmc

    u = qmc.Sobol(len(lens.plan), scramble=True, seed=12345).random(n_points)
    u = np.clip(u, 1e-12, 1.0 - 1e-12)
    ok = jax.jit(jax.vmap(lambda ui: lens.baryon_budget_ok(lens.prior_transform(ui))))(u)
    frac = float(np.mean(np.asarray(ok)))
    if frac == 0.0:
        raise ValueError(
            f"model {lens.spec.name!r}: no draw of its priors has a stellar mass "
            f"M* <= f_b M200c (f_b = {lens.baryon_fraction:.3f}); widen the halo-mass "
            "or IMF-factor priors"
        )
    return math.log(frac)


def _log10_chabrier_to_reference(reference_imf: str) -> float:
    """log10 of M*(reference IMF) / M*(Chabrier 2003) at equal light (10 Gyr)."""
    if reference_imf == "chabrier03":
        return 0.0
    from lensinfer.stellar import imf_mass_factor

    return float(
        jnp.log10(imf_mass_factor(reference_imf, reference="chabrier03", age_gyr=_AGE_GYR))
    )


def halo_mass_prior(m: PriorSpec, observation: Observation):
    """The prior on log10 M200c beside a stellar-to-halo relation, and its description.

    ``abundance = "tinker08"`` (default): proportional to the halo mass
    function dn/dlog M200c at the lens redshift (Tinker et al. 2008; see
    :mod:`lensinfer.halo.abundance`), so that with the relation's
    p(M*_ref | M200c) the joint prior gives p(M200c | M*_ref) as abundance
    matching implies.  ``"uniform_in_log"``: uniform in log10 M200c (ignores
    how rare massive haloes are; kept as an explicit choice).
    """
    if (m.abundance or "tinker08") == "uniform_in_log":
        prior = Uniform(m.low, m.high)
        return prior, prior.describe() + " (uniform in log)"
    from lensinfer.halo.abundance import log_mass_function_table

    z_l = observation.z_lens
    grid, logdn = log_mass_function_table(
        z_l, m.low, m.high, _astropy_cosmology(observation), model=m.abundance
    )
    prior = TabulatedLogDensity(
        grid,
        logdn,
        label=f"halo mass function {m.abundance!r} (Tinker et al. 2008) at z = {z_l:g}",
    )
    return prior, prior.describe()
