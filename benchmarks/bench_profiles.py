"""Benchmark: per-call cost of projected masses and of the Einstein-radius root.

Prints a table and writes benchmarks/results/profiles.json.  Times are in
microseconds per call inside a jitted loop (what a NUTS step pays) and per
Python-level call of a jitted function (dispatch included).

Run: ``python benchmarks/bench_profiles.py``
"""

import jax
from _timing import machine_info, time_in_loop, time_python_call, write_json

import lensinfer  # noqa: F401  (float64)
from lensinfer.cosmology import Cosmology
from lensinfer.lensing import einstein_radius
from lensinfer.profiles import (
    NFW,
    CoredIsothermal,
    GeneralizedNFW,
    Hernquist,
    Jaffe,
    PointMass,
    PowerLaw,
    Sersic,
    SingularIsothermal,
)

COSMO = Cosmology.default()

# Each entry: name -> function of one parameter p (scaled around 1) returning
# the projected mass at R = 5 kpc, so value-and-gradient is d/dp.
PROFILES = {
    "PointMass": lambda p: PointMass(1e11 * p).projected_mass(5.0),
    "SingularIsothermal": lambda p: SingularIsothermal(250.0 * p).projected_mass(5.0),
    "CoredIsothermal": lambda p: CoredIsothermal(250.0, 0.5 * p).projected_mass(5.0),
    "PowerLaw": lambda p: PowerLaw(1e8, 1.0, 2.0 * p).projected_mass(5.0),
    "NFW": lambda p: NFW(1e7, 30.0 * p).projected_mass(5.0),
    "GeneralizedNFW": lambda p: GeneralizedNFW(1e7, 30.0, 1.3 * p).projected_mass(5.0),
    "Hernquist": lambda p: Hernquist(1e11, 3.0 * p).projected_mass(5.0),
    "Jaffe": lambda p: Jaffe(1e11, 3.0 * p).projected_mass(5.0),
    "Sersic": lambda p: Sersic(1e11, 5.0, 4.0 * p).projected_mass(5.0),
}


def einstein_sersic_nfw(p):
    lens = Sersic(10**11.4 * p, 6.0, 4.0) + NFW.from_m200c(10**13.2, 7.0, 0.45, COSMO)
    return einstein_radius(lens, 0.45, 1.9, COSMO)


def main():
    rows = []
    cases = dict(PROFILES)
    cases["einstein_radius(Sersic+NFW)"] = einstein_sersic_nfw
    for name, fn in cases.items():
        vg = jax.value_and_grad(fn)
        n_inner = 200 if name.startswith("einstein") or name == "GeneralizedNFW" else 2000
        row = {
            "case": name,
            "value_us_loop": 1e6 * time_in_loop(fn, 1.0, n_inner=n_inner),
            "value_and_grad_us_loop": 1e6 * time_in_loop(vg, 1.0, n_inner=n_inner),
            "value_and_grad_us_python_call": 1e6 * time_python_call(vg, 1.0),
        }
        rows.append(row)
    print(
        f"{'case':32s} {'value (us)':>12s} {'val+grad (us)':>14s} {'val+grad, py call (us)':>24s}"
    )
    for r in rows:
        print(
            f"{r['case']:32s} {r['value_us_loop']:12.3f} {r['value_and_grad_us_loop']:14.3f}"
            f" {r['value_and_grad_us_python_call']:24.1f}"
        )
    path = write_json("profiles.json", {"machine": machine_info(), "rows": rows})
    print(f"wrote {path}")


if __name__ == "__main__":
    main()
