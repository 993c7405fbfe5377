"""Benchmark: cost of the aperture velocity dispersion inside a NUTS step.

For Sérsic stars + a contracted (Gnedin et al. 2004) NFW halo of a typical
massive elliptical (M200c = 10^13.3 Msun, c200c = 6, M* = 10^11.5 Msun,
R_eff = 7 kpc, n = 4, z = 0.4) observed through a 1.5-kpc aperture with
2-kpc FWHM seeing, times the value and the value-and-gradient (with respect
to the five halo and galaxy parameters and the anisotropy parameter) of
``aperture_dispersion`` for each anisotropy model, per call inside a jitted
loop (what a NUTS step pays) and per Python-level call of a jitted function
(dispatch included).  For attribution it also times the same model's
contraction solve alone (which the lensing model pays anyway), the total
mass at the 61 radii of the dynamics grid (solve included), and the
dispersion with an uncontracted NFW halo.

Prints a table and writes benchmarks/results/bench_dynamics.json.
Run: ``python benchmarks/bench_dynamics.py``
"""

import jax
import jax.numpy as jnp
from _timing import machine_info, time_in_loop, time_python_call, write_json

import lensinfer  # noqa: F401  (float64)
from lensinfer.contraction import contract_halo
from lensinfer.cosmology import Cosmology
from lensinfer.dynamics import (
    ConstantAnisotropy,
    Isotropic,
    OsipkovMerritt,
    _grid,
    aperture,
    aperture_dispersion,
    los_dispersion,
)
from lensinfer.dynamics import _weights as weights
from lensinfer.halo import radius_from_mass
from lensinfer.profiles import NFW, Sersic

COSMO = Cosmology.default()
Z = 0.4
APERTURE_KPC = 1.5
FWHM_KPC = 2.0
#: [log10 M200c, c200c, log10 M*, R_eff, n, anisotropy parameter]
THETA = jnp.array([13.3, 6.0, 11.5, 7.0, 4.0, 0.5])

ANISOTROPIES = {
    "isotropic": lambda x: Isotropic(),
    "constant beta": lambda x: ConstantAnisotropy(0.5 * x),  # beta = 0.25
    "Osipkov-Merritt": lambda x: OsipkovMerritt(14.0 * x),  # r_a = 7 kpc
}


def _galaxy(theta, contracted=True):
    log_m, c, log_ms, r_eff, n = theta[0], theta[1], theta[2], theta[3], theta[4]
    stars = Sersic(10.0**log_ms, r_eff, n)
    halo = NFW.from_m200c(10.0**log_m, c, Z, COSMO)
    if contracted:
        r200 = radius_from_mass(10.0**log_m, Z, cosmology=COSMO)
        # z and the cosmology: r_vir normalises the orbit-averaged radius.
        halo = contract_halo(halo, stars, "gnedin04", r200c=r200, z=Z, cosmology=COSMO)
    return stars, stars + halo


def _aperture(anisotropy, contracted=True):
    def f(theta):
        stars, mass = _galaxy(theta, contracted)
        return aperture_dispersion(
            mass, stars, APERTURE_KPC, FWHM_KPC, ANISOTROPIES[anisotropy](theta[5])
        )

    return f


def _contraction_only(theta):
    _, mass = _galaxy(theta)
    return jnp.sum(mass.components[1].log_mass)


def _grid_masses(theta):
    stars, mass = _galaxy(theta)
    r = jnp.exp(_grid.grid_log_radii(jnp.log(APERTURE_KPC + 6.0 * FWHM_KPC / 2.3548)))
    return jnp.sum(jnp.log(mass.enclosed_mass(r) * stars.density(r)))


def _los(theta):
    stars, mass = _galaxy(theta)
    return los_dispersion(mass, stars, APERTURE_KPC)


def main():
    cases = {}
    for name in ANISOTROPIES:
        cases[f"aperture, {name}, contracted NFW"] = _aperture(name)
    for name in ANISOTROPIES:
        cases[f"aperture, {name}, plain NFW"] = _aperture(name, contracted=False)
    cases["los_dispersion(R = 1.5 kpc), contracted"] = _los
    cases["(part) contraction solve only"] = _contraction_only
    cases["(part) solve + rho*, M at 61 grid radii"] = _grid_masses

    rows = []
    for name, fn in cases.items():
        vg = jax.value_and_grad(fn)
        row = {
            "case": name,
            "value_us_loop": 1e6 * time_in_loop(fn, THETA, n_inner=500),
            "value_and_grad_us_loop": 1e6 * time_in_loop(vg, THETA, n_inner=500),
            "value_and_grad_us_python_call": 1e6 * time_python_call(vg, THETA),
        }
        rows.append(row)
        print(
            f"{name:45s} {row['value_us_loop']:9.1f} {row['value_and_grad_us_loop']:10.1f} {row['value_and_grad_us_python_call']:12.1f}",
            flush=True,
        )
    print(f"\n{'case':45s} {'value':>9s} {'val+grad':>10s} {'py call':>12s}   (microseconds)")
    for r in rows:
        print(
            f"{r['case']:45s} {r['value_us_loop']:9.1f} {r['value_and_grad_us_loop']:10.1f}"
            f" {r['value_and_grad_us_python_call']:12.1f}"
        )
    nodes = {
        "grid_points": _grid.N_GRID,
        "grid_step_ln_r": _grid.H,
        "grid_extent_ln_r": [-_grid.N_BELOW * _grid.H, _grid.N_ABOVE * _grid.H],
        "jeans_subnodes_per_interval": _grid.N_JEANS_SUB,
        "projection_subnodes_per_interval": _grid.N_LOS_SUB,
        "projection_first_panel_nodes": _grid.N_FIRST,
        "aperture_radius_nodes": [aperture.N_LOG, aperture.N_MID, aperture.N_EDGE],
        "slit_extra_nodes": aperture.N_SLIT,
        "seeing_weight_nodes_circle": weights.N_CIRCLE,
        "seeing_weight_nodes_slit_azimuth": 3 * weights.N_AZIMUTH,
    }
    payload = {
        "machine": machine_info(),
        "model": {
            "theta": [float(v) for v in THETA],
            "theta_names": [
                "log10_m200c",
                "c200c",
                "log10_mstar",
                "r_eff_kpc",
                "sersic_n",
                "anisotropy",
            ],
            "z": Z,
            "aperture_radius_kpc": APERTURE_KPC,
            "seeing_fwhm_kpc": FWHM_KPC,
            "prescription": "gnedin04",
        },
        "nodes": nodes,
        "rows": rows,
    }
    path = write_json("bench_dynamics.json", payload)
    print(f"wrote {path}")


if __name__ == "__main__":
    main()
