"""Benchmark: cost of the halo-response solve inside a NUTS step.

For Sersic stars + a contracted NFW halo (a typical massive elliptical:
M200c = 10^13.3 Msun, c200c = 6, M* = 10^11.5 Msun, R_eff = 7 kpc, n = 4,
z = 0.4), times the value and the value-and-gradient (with respect to all six
halo, galaxy and response parameters) of the dark-matter projected mass at
R = 5 kpc, for each prescription, inside a jitted loop; and the parts: the
response grid alone, and the stars' 3-D mass at the 96 grid radii.

Prints a table and writes benchmarks/results/contraction.json.
Run: ``python benchmarks/bench_contraction.py``
"""

import jax
import jax.numpy as jnp
from _timing import machine_info, time_in_loop, write_json

import lensinfer  # noqa: F401  (float64)
from lensinfer.contraction import contract_halo
from lensinfer.cosmology import Cosmology
from lensinfer.profiles import NFW, Sersic

COSMO = Cosmology.default()
Z = 0.4
RHO_C = float(COSMO.critical_density(Z))
PRESCRIPTIONS = {
    "none": {},
    "blumenthal86": {},
    "gnedin04": {},
    "gnedin11": {},
    "power": {"response_index": 0.6},
}


def _build(theta, prescription, kwargs):
    log_m, c, log_ms, r_eff, n, nu = theta
    halo = NFW.from_m200c(10.0**log_m, c, Z, COSMO)
    r200 = (3.0 * 10.0**log_m / (4.0 * jnp.pi * 200.0 * RHO_C)) ** (1.0 / 3.0)
    kw = dict(kwargs)
    if "response_index" in kw:
        kw["response_index"] = nu
    # z and the cosmology: the Gnedin forms solve r_vir (which normalises their
    # orbit-averaged radius) from them; the others ignore them.
    stars = Sersic(10.0**log_ms, r_eff, n)
    return contract_halo(halo, stars, prescription, r200c=r200, z=Z, cosmology=COSMO, **kw)


THETA = jnp.array([13.3, 6.0, 11.5, 7.0, 4.0, 0.6])


def main():
    rows = []
    for pres, kw in PRESCRIPTIONS.items():

        def m2d(s, pres=pres, kw=kw):
            return _build(THETA * s, pres, kw).projected_mass(5.0)

        def vg(s, pres=pres, kw=kw):
            def f(t):
                return _build(t, pres, kw).projected_mass(5.0)

            return jax.value_and_grad(f)(THETA * s)

        rows.append(
            {
                "case": f"M2D_dm(5 kpc) {pres}",
                "value_us": 1e6 * time_in_loop(m2d, 1.0, n_inner=200),
                "value_and_grad_us": 1e6 * time_in_loop(vg, 1.0, n_inner=200),
            }
        )

    def grid(s):
        return _build(THETA * s, "gnedin04", {}).log_mass

    def stars96(s):
        return Sersic(10**11.5, 7.0 * s, 4.0).enclosed_mass(jnp.geomspace(0.005, 5000.0, 96))

    for name, f in (("response grid only (gnedin04)", grid), ("stars M3D at 96 radii", stars96)):
        rows.append(
            {
                "case": name,
                "value_us": 1e6 * time_in_loop(f, 1.0, n_inner=200),
                "value_and_grad_us": 1e6
                * time_in_loop(jax.grad(lambda s, f=f: jnp.sum(f(s))), 1.0, n_inner=200),
            }
        )
    print(f"{'case':36s} {'value (us)':>11s} {'value+grad (us)':>16s}")
    for r in rows:
        print(f"{r['case']:36s} {r['value_us']:11.2f} {r['value_and_grad_us']:16.2f}")
    print(f"wrote {write_json('contraction.json', {'machine': machine_info(), 'rows': rows})}")


if __name__ == "__main__":
    main()
