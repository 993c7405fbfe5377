"""Benchmark: the log posterior of every built-in model on the demo lens, and NUTS.

For each built-in model (``lensinfer.spec.builtin_model_names()``) built on the
demo observation (``lensinfer/data/demo_lens.toml``, invented data), with its
ring and stellar mass only ("lensing only") and with its velocity dispersion
too ("+ kinematics"), times the value and gradient of the log posterior

.. math:: \\ln p(\\theta \\mid d) = \\ln \\pi(\\theta) + \\sum_i \\ln L_i(\\theta)

(``SystemModel.log_prior`` plus the sum of ``SystemModel.log_likelihood_terms``)
as a function of the constrained parameters, in the model's sampling order.
This is the physics NUTS pays for at every leapfrog step.  numpyro's
potential (``initialize_model(...).potential_fn``, in unconstrained
coordinates) adds only the prior-support bijections and their Jacobians; timed
the same way it cost the same within the noise (no-response 7.2 vs 7.3 us,
gnedin04 340-370 vs 350-390 us, 2026-12-01), so it is left out to keep the
compiles, which dominate this script's run time, to three per model (prior
draws, the function, the timed loop).

The point is the prior draw of highest posterior density among 512 draws
(``draw_prior`` + ``initial_points``, as ``lensinfer.sample`` starts its
chains).  Times are microseconds per value-and-gradient inside a jitted
``lax.scan`` (amortised: what a NUTS step pays) and per Python-level call of
the jitted function (dispatch included); "1st call" is the compilation (or
its load from the persistent cache) plus one evaluation.  The gradient is returned stacked
with the value in one array, so the timed loop consumes it and XLA cannot drop
it as dead code.

With ``--nuts``, also runs ``lensinfer.sample`` on the demo (default: gnedin04,
4 chains x (1000 warm-up + 1000 draws)), lensing only and with kinematics, and
reports the wall time without and
with compilation (compilation measured with JAX's monitoring events: tracing,
lowering and XLA compilation or persistent-cache retrieval), divergences, the
smallest bulk and tail ESS, the largest R-hat (arviz, rank-normalised split
R-hat), ESS per second and the ratio of the two wall times.

Prints tables and writes benchmarks/results/bench_model.json.
Run: ``python benchmarks/bench_model.py [--nuts] [--model NAME] [--chains N]``
"""

import argparse
import dataclasses
import itertools
import json
import os
import time

import jax
import jax.numpy as jnp
import numpy as np
from _timing import machine_info, time_in_loop, time_python_call, write_json

import lensinfer  # (float64)
from lensinfer.inference.initialise import draw_prior, initial_points
from lensinfer.model import build_model
from lensinfer.spec import builtin_model_names, read_model, read_observation

DEMO = os.path.join(os.path.dirname(lensinfer.__file__), "data", "demo_lens.toml")
N_PRIOR = 512  # as lensinfer.sample (max(prior_draws, 512, 8 * chains)): same compiled program
SEED = 0
COMPILE_EVENTS = (
    "/jax/core/compile/jaxpr_trace_duration",
    "/jax/core/compile/jaxpr_to_mlir_module_duration",
    "/jax/core/compile/backend_compile_duration",
)


def log_posterior(lens):
    """Log posterior of a vector of the sampled parameters (in ``lens.plan`` order)."""
    names = lens.parameter_names

    def f(theta):
        params = {k: theta[i] for i, k in enumerate(names)}
        return lens.log_prior(params) + sum(lens.log_likelihood_terms(params).values())

    return f


def posterior_point(lens):
    """The best of N_PRIOR prior draws by posterior density, as a parameter vector."""
    draws = draw_prior(lens, jax.random.PRNGKey(SEED), N_PRIOR)
    best = initial_points(draws, 1)
    return jnp.array([best[k][0] for k in lens.parameter_names])


def bench_gradients(obs):
    rows = []
    variants = [("lensing only", dataclasses.replace(obs, kinematics=None))]
    if obs.kinematics is not None:
        variants.append(("+ kinematics", obs))
    for name, (data, o) in itertools.product(builtin_model_names(), variants):
        try:
            lens = build_model(read_model(name), o)
        except Exception as exc:  # a model that does not build is reported, not fatal
            rows.append({"model": name, "data": data, "error": f"{type(exc).__name__}: {exc}"})
            print(f"  {name}: does not build: {exc}", flush=True)
            continue
        theta = posterior_point(lens)
        f = log_posterior(lens)

        def vg(theta, f=f):
            value, grad = jax.value_and_grad(f)(theta)
            return jnp.concatenate([value[None], grad])

        t = time.perf_counter()
        out = np.asarray(jax.jit(vg)(theta))
        compile_s = time.perf_counter() - t
        rows.append(
            {
                "model": name,
                "data": data,
                "n_params": len(lens.parameter_names),
                "parameters": dict(zip(lens.parameter_names, map(float, theta), strict=True)),
                "log_posterior": float(out[0]),
                "gradient_finite": bool(np.all(np.isfinite(out[1:]))),
                "first_call_s": compile_s,
                "value_and_grad_us_loop": 1e6 * time_in_loop(vg, theta, n_inner=1000),
                "value_and_grad_us_python_call": 1e6 * time_python_call(vg, theta),
            }
        )
        print(f"  {name} ({data}): done", flush=True)
    return rows


def print_gradients(rows):
    print(
        f"{'model':18s} {'data':13s} {'n':>2s} {'ln post':>9s} {'val+grad loop (us)':>19s}"
        f" {'val+grad py call (us)':>22s} {'1st call (s)':>13s}"
    )
    for r in rows:
        if "error" in r:
            print(f"{r['model']:18s} {r['data']:13s} (does not build)")
            continue
        flag = "" if r["gradient_finite"] else "  (non-finite gradient)"
        print(
            f"{r['model']:18s} {r['data']:13s} {r['n_params']:2d} {r['log_posterior']:9.3f}"
            f" {r['value_and_grad_us_loop']:19.2f} {r['value_and_grad_us_python_call']:22.1f}"
            f" {r['first_call_s']:13.1f}{flag}"
        )


def _extreme(tree, names, pick):
    """(value, variable) of ``pick`` (min or max) over the finite values of the named variables.

    Variables that are NaN in every draw (e.g. M200c of a total-mass model) are skipped.
    """
    ds = tree.to_dataset()
    vals = {}
    for v in names:
        x = np.asarray(ds[v].values, dtype=float) if v in ds else np.array([])
        x = x[np.isfinite(x)]
        if x.size:
            vals[v] = float(pick(x))
    if not vals:
        return None, None
    var = pick(vals, key=vals.get)
    return vals[var], var


class _CompileClock:
    """Union of the time spans of JAX's tracing, lowering and compile events."""

    def __init__(self):
        self.spans = []
        self.cache_hits = 0

    def _span(self, event, start, end, **kwargs):
        if event in COMPILE_EVENTS:
            self.spans.append((start, end))

    def _event(self, event, **kwargs):
        if event == "/jax/compilation_cache/cache_hits":
            self.cache_hits += 1

    def __enter__(self):
        jax.monitoring.register_event_time_span_listener(self._span)
        jax.monitoring.register_event_listener(self._event)
        return self

    def __exit__(self, *exc):
        jax.monitoring.unregister_event_time_span_listener(self._span)
        jax.monitoring.unregister_event_listener(self._event)

    @property
    def seconds(self):
        total, end_max = 0.0, -np.inf
        for start, end in sorted(self.spans):
            if end > end_max:
                total += end - max(start, end_max)
                end_max = end
        return total


def bench_nuts(args, lensing_only=False):
    import arviz as az

    obs = read_observation(DEMO)
    if lensing_only:
        obs = dataclasses.replace(obs, kinematics=None)
    with _CompileClock() as clock:
        t = time.perf_counter()
        dt = lensinfer.sample(
            args.model,
            obs,
            chains=args.chains,
            warmup=args.warmup,
            draws=args.draws,
            seed=SEED,
            progress=False,
        )
        total = time.perf_counter() - t
    params = list(json.loads(dt.attrs["priors"]))  # the sampled parameters
    everything = list(dt.posterior.to_dataset().data_vars)
    ess_bulk = az.ess(dt, method="bulk")
    ess_tail = az.ess(dt, method="tail")
    rhat = az.rhat(dt)
    wall = total - clock.seconds
    out = {
        "model": args.model,
        "data": "lensing only" if lensing_only else "lensing + kinematics",
        "chains": args.chains,
        "warmup": args.warmup,
        "draws": args.draws,
        "chain_method": json.loads(dt.attrs["options"]).get("chain_method"),
        "compile_inclusive_wall_s": total,
        "compile_s": clock.seconds,
        "persistent_cache_hits": clock.cache_hits,
        "wall_s": wall,
        "mcmc_run_wall_s": float(dt.attrs["sampling_wall_seconds"]),
        "divergences": int(np.asarray(dt.sample_stats["diverging"].values).sum()),
        "leapfrog_steps": int(np.asarray(dt.sample_stats["n_steps"].values).sum()),
    }
    for label, names in (("params", params), ("all", everything)):
        b, bv = _extreme(ess_bulk, names, min)
        tl, tv = _extreme(ess_tail, names, min)
        r, rv = _extreme(rhat, names, max)
        out[label] = {
            "min_ess_bulk": b,
            "min_ess_bulk_var": bv,
            "min_ess_tail": tl,
            "min_ess_tail_var": tv,
            "max_r_hat": r,
            "max_r_hat_var": rv,
            "min_ess_bulk_per_s": None if b is None else b / wall,
            "min_ess_bulk_per_s_incl_compile": None if b is None else b / total,
        }
    return out


def print_nuts(r):
    print(
        f"\nNUTS {r['model']} ({r['data']}): {r['chains']} chains x ({r['warmup']} warm-up + {r['draws']} draws),"
        f" {r['chain_method']}"
    )
    print(
        f"  wall {r['wall_s']:.1f} s without compilation, {r['compile_inclusive_wall_s']:.1f} s"
        f" with ({r['compile_s']:.1f} s compiling, {r['persistent_cache_hits']} persistent-cache"
        f" hits); mcmc.run {r['mcmc_run_wall_s']:.1f} s"
    )
    steps = r["leapfrog_steps"]
    print(
        f"  divergences {r['divergences']}; {steps} leapfrog steps in the kept draws"
        f" ({steps / (r['chains'] * r['draws']):.1f} per draw)"
    )
    print(
        f"  {'over':14s} {'min ESS bulk':>18s} {'min ESS tail':>18s} {'max R-hat':>18s}"
        f" {'bulk ESS/s':>11s} {'incl. compile':>14s}"
    )
    for label, title in (("params", "sampled"), ("all", "all quantities")):
        s = r[label]
        if s["min_ess_bulk"] is None:
            continue
        print(
            f"  {title:14s} {s['min_ess_bulk']:8.0f} {s['min_ess_bulk_var'][:9]:>9s}"
            f" {s['min_ess_tail']:8.0f} {s['min_ess_tail_var'][:9]:>9s}"
            f" {s['max_r_hat']:8.4f} {s['max_r_hat_var'][:9]:>9s}"
            f" {s['min_ess_bulk_per_s']:11.1f} {s['min_ess_bulk_per_s_incl_compile']:14.1f}"
        )


def main(argv=None):
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--nuts", action="store_true", help="also run NUTS on the demo lens")
    parser.add_argument("--no-table", action="store_true", help="skip the gradient table")
    parser.add_argument("--model", default="gnedin04", help="model of the NUTS run")
    parser.add_argument("--chains", type=int, default=4)
    parser.add_argument("--warmup", type=int, default=1000)
    parser.add_argument("--draws", type=int, default=1000)
    args = parser.parse_args(argv)

    payload = {
        "machine": machine_info(),
        "observation": os.path.relpath(DEMO),
        "log_posterior": "log_prior + sum(log_likelihood_terms), constrained parameters",
        "n_prior_draws": N_PRIOR,
        "seed": SEED,
    }
    if not args.no_table:
        obs = read_observation(DEMO)
        print(f"log posterior value and gradient on {os.path.relpath(DEMO)}:", flush=True)
        payload["rows"] = rows = bench_gradients(obs)
        print_gradients(rows)
    if args.nuts:
        payload["nuts"] = runs = [bench_nuts(args, lensing_only=True)]
        if read_observation(DEMO).kinematics is not None:
            runs.append(bench_nuts(args))
        for r in runs:
            print_nuts(r)
        if len(runs) == 2:
            ratio = runs[1]["compile_inclusive_wall_s"] / runs[0]["compile_inclusive_wall_s"]
            payload["kinematics_cost_ratio"] = ratio
            print(f"\nwall time with kinematics / lensing only (compilation included): {ratio:.2f}")
    print(f"wrote {write_json('bench_model.json', payload)}")


if __name__ == "__main__":
    main()
