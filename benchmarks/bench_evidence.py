"""Benchmark: wall time and accuracy of one model evidence on the demo lens.

For each built-in model (or those named with ``--models``) on the demo
observation (``lensinfer/data/demo_lens.toml``, invented data: ring, stellar
mass and aperture velocity dispersion), runs :func:`lensinfer.comparison.nested_evidence`
(dynesty, multi-ellipsoid bounds, random-walk proposals) at ``--live`` live
points and dlogz 0.1, and reports ln Z, its uncertainty, the likelihood
calls, the wall time (compilation included) and the cost per call.  The
issue's target is ln Z uncertainty <= 0.1 in under a minute per model.

Prints a table and writes benchmarks/results/bench_evidence.json.
Run: ``python benchmarks/bench_evidence.py [--live N] [--models a b ...]``
"""

import argparse
import os

from _timing import machine_info, write_json

import lensinfer
from lensinfer.comparison import nested_evidence, problem_of
from lensinfer.model import build_model
from lensinfer.spec import builtin_model_names, read_model, read_observation

DEMO = os.path.join(os.path.dirname(lensinfer.__file__), "data", "demo_lens.toml")


def main(argv=None):
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--live", type=int, default=500)
    parser.add_argument("--models", nargs="*", default=None)
    args = parser.parse_args(argv)
    obs = read_observation(DEMO)
    rows = []
    print(
        f"{'model':18s} {'ln Z':>8s} {'+-':>6s} {'calls':>8s} {'wall (s)':>9s} {'us/call':>8s}",
        flush=True,
    )
    for name in args.models or builtin_model_names():
        e = nested_evidence(problem_of(build_model(read_model(name), obs)), n_live=args.live)
        row = {"model": name, **e.to_dict(), "us_per_call": 1e6 * e.wall_s / e.n_likelihood}
        rows.append(row)
        print(
            f"{name:18s} {e.ln_z:8.3f} {e.ln_z_err:6.3f} {e.n_likelihood:8d} {e.wall_s:9.1f}"
            f" {row['us_per_call']:8.0f}",
            flush=True,
        )
    payload = {"machine": machine_info(), "observation": os.path.relpath(DEMO), "rows": rows}
    print(f"wrote {write_json('bench_evidence.json', payload)}")


if __name__ == "__main__":
    main()
