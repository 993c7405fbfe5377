"""The ``lensinfer`` command line.

Heavy imports (numpyro, arviz) happen inside the sub-commands, never on the
``--help`` / ``--version`` path.  Bad input prints one message naming the
file, key, value and what is accepted, exits with status 2, and writes
nothing.
"""

from __future__ import annotations

import argparse
import json
import os
import sys

from lensinfer._version import __version__

__all__ = ["build_parser", "main"]

_DESCRIPTION = """\
lensinfer: stars versus dark matter in galaxy-scale strong gravitational lenses.

From an Einstein radius, the lens galaxy's light profile, its SED stellar
mass and redshifts (and, when measured, a velocity dispersion), lensinfer
infers the stellar mass-to-light ratio (the IMF), the dark-matter halo's
mass and concentration and the halo's response to the galaxy.
"""

EXIT_BAD_INPUT = 2


def _add_sampling_options(p, chains=4, warmup=1000, draws=1000, target_accept=0.95):
    p.add_argument(
        "--chains", type=int, default=chains, help=f"number of chains (default {chains})"
    )
    p.add_argument(
        "--warmup", type=int, default=warmup, help=f"warm-up steps per chain (default {warmup})"
    )
    p.add_argument(
        "--draws", type=int, default=draws, help=f"kept draws per chain (default {draws})"
    )
    p.add_argument("--seed", type=int, default=0, help="random seed (default 0)")
    p.add_argument(
        "--target-accept",
        type=float,
        default=target_accept,
        help=f"NUTS target acceptance (default {target_accept})",
    )
    p.add_argument(
        "--max-tree-depth", type=int, default=10, help="NUTS maximum tree depth (default 10)"
    )
    p.add_argument(
        "--diagonal-mass",
        action="store_true",
        help="adapt a diagonal instead of a dense mass matrix",
    )
    p.add_argument("--no-progress", action="store_true", help="hide the progress bar")


def build_parser() -> argparse.ArgumentParser:
    """The argument parser of the ``lensinfer`` command."""
    parser = argparse.ArgumentParser(
        prog="lensinfer",
        description=_DESCRIPTION,
        formatter_class=argparse.RawDescriptionHelpFormatter,
    )
    parser.add_argument("--version", action="version", version=f"lensinfer {__version__}")
    sub = parser.add_subparsers(dest="command", title="commands", metavar="COMMAND")

    p = sub.add_parser("sample", help="sample the posterior of a model for one lens")
    p.add_argument("model", help="a model file or a built-in model's name (see 'lensinfer models')")
    p.add_argument("observation", help="an observation file (TOML)")
    p.add_argument("-o", "--output", required=True, help="results file to write (netCDF, .nc)")
    p.add_argument("--json", action="store_true", help="print the JSON summary on stdout")
    _add_sampling_options(p)

    p = sub.add_parser("check", help="validate model and observation files without sampling")
    p.add_argument("files", nargs="+", help="model or observation files (or built-in model names)")

    p = sub.add_parser("mock", help="write a mock observation from chosen parameter values")
    p.add_argument("model", help="a model file or a built-in model's name")
    p.add_argument("--truth", required=True, help="truth file (TOML: [system], [truth], [errors])")
    p.add_argument("-o", "--output", required=True, help="observation file to write (TOML)")
    p.add_argument("--noise", action="store_true", help="add noise drawn from the stated errors")
    p.add_argument("--seed", type=int, default=0, help="seed of the noise (default 0)")

    p = sub.add_parser("report", help="write the posterior report of a results file")
    p.add_argument("results", help="a results file written by 'lensinfer sample' (.nc)")
    p.add_argument("-o", "--output-dir", required=True, help="directory for the report")

    p = sub.add_parser(
        "compare", help="compare halo-response hypotheses for one lens (evidences, nu posterior)"
    )
    p.add_argument("observation", help="an observation file (TOML)")
    p.add_argument("models", nargs="+", help="model files or built-in model names (one or more)")
    p.add_argument("-o", "--output-dir", required=True, help="directory for the comparison")
    p.add_argument(
        "--live", type=int, default=500, help="nested-sampling live points (default 500)"
    )
    p.add_argument(
        "--dlogz", type=float, default=0.1, help="nested-sampling stopping tolerance (default 0.1)"
    )
    p.add_argument(
        "--prior-odds",
        action="append",
        default=[],
        metavar="MODEL=WEIGHT",
        help="prior weight of a model (repeatable; default equal odds)",
    )
    p.add_argument(
        "--no-continuous",
        action="store_true",
        help="skip the free-response nu posterior (run otherwise even if not listed)",
    )
    p.add_argument("--chains", type=int, default=4, help="NUTS chains (default 4)")
    p.add_argument("--warmup", type=int, default=500, help="NUTS warm-up steps (default 500)")
    p.add_argument("--draws", type=int, default=500, help="NUTS kept draws (default 500)")
    p.add_argument("--seed", type=int, default=0, help="random seed (default 0)")
    p.add_argument("--no-progress", action="store_true", help="hide the progress output")

    p = sub.add_parser("models", help="list the built-in model specs")

    p = sub.add_parser("demo", help="run the whole job on the invented demo lens")
    p.add_argument(
        "--output-dir",
        default="lensinfer-demo",
        help="where to write results (default ./lensinfer-demo)",
    )
    p.add_argument("--model", default="gnedin04", help="model to sample (default gnedin04)")
    # 1000 + 1000 at target acceptance 0.98: with the dispersion the M*_ref -
    # alpha_IMF ridge needs it (measured 2026-12-02: 4 x (500 + 500) at 0.95
    # left R-hat 1.021 and a divergence; 1000 + 1000 at 0.95, 2 divergences;
    # at 0.98, none, R-hat 1.004, in about 2 minutes).
    _add_sampling_options(p, chains=4, warmup=1000, draws=1000, target_accept=0.98)
    return parser


def _error(msg: str) -> int:
    print(f"lensinfer: error: {msg}", file=sys.stderr)
    return EXIT_BAD_INPUT


def _sampling_kwargs(args) -> dict:
    return dict(
        chains=args.chains,
        warmup=args.warmup,
        draws=args.draws,
        seed=args.seed,
        dense_mass=not args.diagonal_mass,
        target_accept=args.target_accept,
        max_tree_depth=args.max_tree_depth,
        progress=not args.no_progress,
    )


def _check_sampling_args(args):
    for name in ("chains", "warmup", "draws"):
        value = getattr(args, name)
        if value < 1:
            raise ValueError(f"--{name} must be a positive integer, not {value}")
    if not 0.0 < args.target_accept < 1.0:
        raise ValueError(f"--target-accept must lie between 0 and 1, not {args.target_accept}")


def summary_path(results_path: str) -> str:
    """The JSON summary written beside a results file: RESULTS.summary.json."""
    root, _ = os.path.splitext(results_path)
    return root + ".summary.json"


def _run_sample(model_arg, observation_arg, output, args, command_line) -> dict:
    from lensinfer.inference import sample, summarize, write_results, write_summary
    from lensinfer.model import build_model
    from lensinfer.spec import read_model, read_observation

    lens = build_model(read_model(model_arg), read_observation(observation_arg))
    _check_output_file(output)
    dt = sample(lens, command_line=command_line, **_sampling_kwargs(args))
    summary = summarize(dt)
    write_results(dt, output)
    write_summary(summary, summary_path(output))
    return summary


def _cmd_sample(args, argv) -> int:
    _check_sampling_args(args)
    summary = _run_sample(
        args.model, args.observation, args.output, args, "lensinfer " + " ".join(argv)
    )
    if args.json:
        print(json.dumps(summary, indent=2))
    else:
        print(f"wrote {args.output} and {summary_path(args.output)}")
        _print_headline(summary)
    return 0


def _cmd_check(args) -> int:
    from lensinfer.spec import SpecError, builtin_model_path, read_model, read_observation
    from lensinfer.spec._reader import load_toml, read_text

    bad = 0
    for f in args.files:
        try:
            path = f if os.path.exists(f) else builtin_model_path(f)
            if path is None:
                read_model(f)  # raises a SpecError naming the built-in models
            data = load_toml(read_text(path, "model or observation file"), path)
            if "model" in data:
                m = read_model(path)
                print(f"{f}: ok (model {m.name!r}, {m.mass_model}, response {m.prescription})")
            elif "system" in data:
                o = read_observation(path)
                print(
                    f"{f}: ok (observation {o.name!r}, z_lens {o.z_lens}, z_source {o.z_source.value})"
                )
            else:
                raise SpecError(
                    path,
                    "",
                    None,
                    "a model file (with a [model] section) or an observation file (with a [system] section)",
                    problem="is neither a model nor an observation",
                )
        except SpecError as exc:
            print(f"lensinfer: error: {exc}", file=sys.stderr)
            bad += 1
    return EXIT_BAD_INPUT if bad else 0


def _check_output_file(path):
    """Refuse an output path in a missing directory or naming a directory."""
    out_dir = os.path.dirname(os.path.abspath(path))
    if not os.path.isdir(out_dir):
        raise ValueError(f"cannot write {path}: output directory {out_dir} does not exist")
    if os.path.isdir(path):
        raise ValueError(f"cannot write {path}: it is a directory")


def _cmd_mock(args) -> int:
    from lensinfer.inference.results import _atomic_path
    from lensinfer.mock import format_observation, make_mock, read_truth
    from lensinfer.spec import read_model

    _check_output_file(args.output)
    spec = read_model(args.model)
    truth = read_truth(args.truth)
    obs, predicted = make_mock(spec, truth, noise=args.noise, seed=args.seed)
    header = (
        f"Mock observation (invented data) made by lensinfer {__version__}\n"
        f"model: {spec.name}; truth: {truth.path}; noise: {'yes, seed ' + str(args.seed) if args.noise else 'no'}\n"
        + "true values: "
        + ", ".join(f"{k} = {v:.5g}" for k, v in predicted.items())
    )
    text = format_observation(obs, header)
    tmp = _atomic_path(args.output)
    with open(tmp, "w", encoding="utf-8") as fh:
        fh.write(text)
    os.replace(tmp, args.output)
    print(f"wrote {args.output} (Einstein radius {obs.einstein_radius_arcsec.value:.4g} arcsec)")
    return 0


def _cmd_models() -> int:
    from lensinfer.spec import builtin_model_names, read_model

    for name in builtin_model_names():
        m = read_model(name)
        print(f"{name:18s} {m.summary}")
    return 0


def demo_observation_path() -> str:
    """Path of the shipped demo observation (an invented lens)."""
    return os.path.join(os.path.dirname(__file__), "data", "demo_lens.toml")


def _print_headline(summary: dict):
    q = summary["quantities"]

    def line(key, label, fmt="{:.3g}", scale=1.0):
        if key not in q:
            return
        s = q[key]
        lo, hi = s["interval_68"]
        lo95, hi95 = s["interval_95"]
        med = s["median"]
        print(
            f"  {label:34s} {fmt.format(med / scale)}  (68%: {fmt.format(lo / scale)} .. {fmt.format(hi / scale)};"
            f" 95%: {fmt.format(lo95 / scale)} .. {fmt.format(hi95 / scale)})"
        )

    print(
        f"model {summary['model']!r} on {summary['observation']!r}: {summary['divergences']} divergences"
    )
    line("fdm_einstein", "f_DM inside the Einstein radius", "{:.3f}")
    line("alpha_imf", "alpha_IMF (M*/M*_ref)", "{:.3f}")
    line("m200c_msun", "M200c [1e13 Msun]", "{:.3g}", 1e13)
    line("contraction_ratio_reff", "DM contraction inside R_eff", "{:.3f}")
    worst = max((s["r_hat"] or 1.0 for s in q.values()), default=1.0)
    low_ess = min((s["ess_bulk"] or 0.0 for s in q.values()), default=0.0)
    print(f"  max R-hat {worst:.4f}, min bulk ESS {low_ess:.0f}")


def _write_report(results, output_dir) -> str:
    from lensinfer.report import report

    path = report(results, output_dir)
    print(f"report: {os.path.abspath(path)}")
    return path


def _cmd_report(args) -> int:
    if os.path.isdir(args.results):
        raise ValueError(f"{args.results}: is a directory, not a results file")
    if not os.path.isfile(args.results):
        raise ValueError(f"{args.results}: results file does not exist")
    if os.path.exists(args.output_dir) and not os.path.isdir(args.output_dir):
        raise ValueError(f"{args.output_dir}: exists and is not a directory (-o wants a directory)")
    try:
        from lensinfer.inference import read_results

        dt = read_results(args.results)
    except (OSError, ValueError) as exc:
        raise ValueError(
            f"{args.results}: cannot be read as a lensinfer results file (netCDF): {exc}"
        ) from None
    if "posterior" not in dt.children or not {"model_text", "observation_text"} <= set(dt.attrs):
        raise ValueError(
            f"{args.results}: not a lensinfer results file (needs a posterior group and "
            "the model and observation texts in its attributes)"
        )
    from lensinfer.report.profiles import model_from_results

    model_from_results(dt, args.results)  # embedded spec problems: SpecError, exit 2
    try:
        _write_report(args.results, args.output_dir)
    except ValueError as exc:  # a failure inside the report is ours, not bad input
        raise RuntimeError(f"writing the report of {args.results} failed: {exc}") from exc
    return 0


def _parse_odds(items) -> dict:
    odds = {}
    for item in items:
        name, sep, value = item.partition("=")
        try:
            weight = float(value) if sep else float("nan")
        except ValueError:
            weight = float("nan")
        if not name or not weight > 0:
            raise ValueError(
                f"--prior-odds {item!r}: expected MODEL=WEIGHT with a positive number, "
                "e.g. gnedin04=2"
            )
        odds[name] = weight
    return odds


def _cmd_compare(args) -> int:
    from lensinfer.comparison import CompareSettings, compare
    from lensinfer.spec import read_model, read_observation

    for name in ("live", "chains", "warmup", "draws"):
        if getattr(args, name) < 1:
            raise ValueError(f"--{name} must be a positive integer, not {getattr(args, name)}")
    if not args.dlogz > 0:
        raise ValueError(f"--dlogz must be positive, not {args.dlogz}")
    if os.path.exists(args.output_dir) and not os.path.isdir(args.output_dir):
        raise ValueError(f"{args.output_dir}: exists and is not a directory (-o wants a directory)")
    obs = read_observation(args.observation)
    specs = [read_model(m) for m in args.models]  # every model valid before any run
    names = [s.name for s in specs]
    odds = _parse_odds(args.prior_odds)
    unknown = sorted(set(odds) - set(names))
    if unknown:
        raise ValueError(f"--prior-odds names {unknown}, not among the compared models {names}")
    settings = CompareSettings(
        n_live=args.live,
        dlogz=args.dlogz,
        chains=args.chains,
        warmup=args.warmup,
        draws=args.draws,
        seed=args.seed,
    )
    result = compare(
        obs,
        specs,
        args.output_dir,
        settings=settings,
        prior_odds=odds,
        continuous=not args.no_continuous,
        progress=not args.no_progress,
    )
    print(f"{'model':18s} {'ln Z':>15s} {'Delta ln Z':>15s} {'P(model)':>9s}  Kass & Raftery")
    for r in result["table"]:
        delta = f"{r['delta_ln_z']:.2f} +- {r['delta_ln_z_err']:.2f}"
        print(
            f"{r['model']:18s} {r['ln_z']:8.2f} +- {r['ln_z_err']:4.2f} {delta:>15s}"
            f" {r['probability']:9.3f}  {r['kass_raftery']}"
        )
    from lensinfer.comparison import comparability_note

    not_comparable = comparability_note(specs)
    if not_comparable:
        print("not comparable: " + not_comparable)
    c = result.get("continuous")
    if c:
        print(
            f"free-response nu = {c['nu_median']:.2f} (95%: {c['nu_95'][0]:.2f} to"
            f" {c['nu_95'][1]:.2f})"
        )
    print(f"comparison: {os.path.abspath(os.path.join(args.output_dir, 'compare.md'))}")
    return 0


def _cmd_demo(args, argv) -> int:
    _check_sampling_args(args)
    os.makedirs(args.output_dir, exist_ok=True)
    out = os.path.join(args.output_dir, "demo-results.nc")
    print(
        f"lensinfer demo: model {args.model!r} on the invented demo lens {demo_observation_path()}"
    )
    summary = _run_sample(
        args.model, demo_observation_path(), out, args, "lensinfer " + " ".join(argv)
    )
    print(f"results: {os.path.abspath(out)}")
    print(f"summary: {os.path.abspath(summary_path(out))}")
    _print_headline(summary)
    _write_report(out, os.path.join(args.output_dir, "report"))
    return 0


def main(argv: list[str] | None = None) -> int:
    """Run the command line; returns the exit status (0 success, 2 bad input)."""
    argv = list(sys.argv[1:] if argv is None else argv)
    parser = build_parser()
    args = parser.parse_args(argv)
    if args.command is None:
        parser.print_help()
        return 0
    from lensinfer.spec import SpecError

    try:
        if args.command == "sample":
            return _cmd_sample(args, argv)
        if args.command == "check":
            return _cmd_check(args)
        if args.command == "mock":
            return _cmd_mock(args)
        if args.command == "models":
            return _cmd_models()
        if args.command == "compare":
            return _cmd_compare(args)
        if args.command == "report":
            return _cmd_report(args)
        if args.command == "demo":
            return _cmd_demo(args, argv)
    except SpecError as exc:
        return _error(str(exc))
    except ValueError as exc:
        return _error(str(exc))
    return 0  # pragma: no cover


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
