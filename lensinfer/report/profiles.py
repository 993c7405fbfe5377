"""Posterior bands of the mass decomposition versus radius, from a results file."""

from __future__ import annotations

import jax
import jax.numpy as jnp
import numpy as np

__all__ = ["model_from_results", "profile_bands"]


def model_from_results(dt, source: str = "<results>"):
    """Rebuild the SystemModel of a run from the spec texts kept in its provenance.

    A problem in an embedded text is reported against ``source`` (the
    results file), e.g. ``run.nc (model_text): key 'halo' is missing``.
    """
    from lensinfer.model import build_model
    from lensinfer.spec import parse_model, parse_observation

    spec = parse_model(dt.attrs["model_text"], f"{source} (model_text)")
    obs = parse_observation(dt.attrs["observation_text"], f"{source} (observation_text)")
    return build_model(spec, obs)


def profile_bands(dt, lens=None, n_draws: int = 200, n_radii: int = 40, seed: int = 0) -> dict:
    """2.5/16/50/84/97.5 percentiles of M_2D(<R) for stars, dark matter and total,
    and of the projected dark-matter fraction, on radii from 0.05 R_E to 5 R_eff.

    Uses ``n_draws`` posterior draws chosen at random (seeded); the physics is
    the model's own (:meth:`SystemModel.build_profiles`), jitted and vmapped.
    """
    lens = model_from_results(dt) if lens is None else lens
    post = dt.posterior
    names = lens.parameter_names
    flat = {n: np.asarray(post[n].values, float).ravel() for n in names}
    total_draws = len(next(iter(flat.values())))
    rng = np.random.default_rng(seed)
    pick = rng.choice(total_draws, size=min(n_draws, total_draws), replace=False)
    params = {n: jnp.asarray(v[pick]) for n, v in flat.items()}
    obs = lens.observation
    r_e = obs.einstein_radius_arcsec.value * lens.kpc_per_arcsec
    r_eff = obs.r_eff_arcsec.value * lens.kpc_per_arcsec
    radii = np.geomspace(0.05 * min(r_e, r_eff), 5.0 * max(r_e, r_eff), n_radii)

    def one(p):
        stars, dm, _, extra = lens.build_profiles(p)
        R = jnp.asarray(radii)
        m_star = stars.projected_mass(R)
        if dm is None:
            m_tot = extra["total"].projected_mass(R)
            m_dm = m_tot - m_star  # what the stars leave of the total power law
        else:
            m_dm = dm.projected_mass(R)
            m_tot = m_star + m_dm
        return m_star, m_dm, m_tot

    m_star, m_dm, m_tot = jax.jit(jax.vmap(one))(params)
    pct = [2.5, 16, 50, 84, 97.5]

    def band(a):
        return np.percentile(np.asarray(a), pct, axis=0)

    from lensinfer.lensing import critical_surface_density

    sigma_cr = float(critical_surface_density(obs.z_lens, obs.z_source.value, lens.cosmology))
    theta = obs.einstein_radius_arcsec
    return {
        "radius_kpc": radii,
        "stars": band(m_star),
        "dark_matter": band(m_dm),
        "total": band(m_tot),
        "fdm": band(np.asarray(m_dm) / np.asarray(m_tot)),
        "einstein_radius_kpc": (r_e, theta.sd * lens.kpc_per_arcsec),
        # The ring's measurement as a mass: pi Sigma_cr R_E^2 (and its 1-sd
        # error, twice the relative error of R_E).
        "einstein_mass_msun": (
            np.pi * sigma_cr * r_e**2,
            2.0 * np.pi * sigma_cr * r_e**2 * theta.sd / theta.value,
        ),
        "r_eff_kpc": r_eff,
        "n_draws": len(pick),
    }
