"""Results files: one netCDF per run (written atomically) and a JSON summary."""

from __future__ import annotations

import json
import math
import os
import tempfile

import numpy as np

__all__ = ["read_results", "summarize", "write_results", "write_summary"]


def _atomic_path(path):
    d = os.path.dirname(os.path.abspath(path)) or "."
    fd, tmp = tempfile.mkstemp(prefix=".tmp-", suffix=os.path.splitext(path)[1], dir=d)
    os.close(fd)
    # mkstemp makes the file private (0600); give it the mode a plainly
    # created file would have under the user's umask.
    umask = os.umask(0)
    os.umask(umask)
    os.chmod(tmp, 0o666 & ~umask)
    return tmp


def _write_atomically(path, write) -> str:
    """Call ``write(tmp)`` on a temporary file beside ``path``, then rename it.

    On any failure (or interrupt) the temporary file is removed and an
    existing file at ``path`` is left as it was.
    """
    path = os.fspath(path)
    tmp = _atomic_path(path)
    try:
        write(tmp)
        os.replace(tmp, path)
    except BaseException:
        if os.path.exists(tmp):
            os.remove(tmp)
        raise
    return path


def write_results(dt, path) -> str:
    """Write a DataTree to netCDF through a temporary file and a rename.

    An interrupted run never leaves a half-written results file at ``path``.
    """
    return _write_atomically(path, lambda tmp: dt.to_netcdf(tmp, engine="h5netcdf"))


def read_results(path):
    """Read a results file written by lensinfer (an arviz DataTree)."""
    import arviz as az

    return az.from_netcdf(os.fspath(path), engine="h5netcdf")


def _scalar_vars(ds):
    return [v for v in ds.data_vars if ds[v].ndim == 2]


def summarize(dt) -> dict:
    """Per-quantity summary: mean, sd, median, 68% and 95% intervals, R-hat, ESS.

    Intervals are equal-tailed (16-84 and 2.5-97.5 percentiles); R-hat is the
    rank-normalised split R-hat and ESS the bulk and tail ESS of Vehtari et
    al. (2021), from arviz.
    """
    import arviz as az

    post = dt.posterior.to_dataset()
    names = _scalar_vars(post)
    rhat = az.rhat(dt, var_names=names)
    ess_bulk = az.ess(dt, var_names=names, method="bulk")
    ess_tail = az.ess(dt, var_names=names, method="tail")
    out = {}
    for v in names:
        x = np.asarray(post[v].values, dtype=float).ravel()
        finite = x[np.isfinite(x)]
        if finite.size == 0:
            continue
        q = np.percentile(finite, [2.5, 16, 50, 84, 97.5])
        out[v] = {
            "mean": float(finite.mean()),
            "sd": float(finite.std(ddof=1)) if finite.size > 1 else 0.0,
            "median": float(q[2]),
            "interval_68": [float(q[1]), float(q[3])],
            "interval_95": [float(q[0]), float(q[4])],
            "r_hat": _float(rhat[v]),
            "ess_bulk": _float(ess_bulk[v]),
            "ess_tail": _float(ess_tail[v]),
        }
    div = 0
    if "sample_stats" in dt.children:
        stats = dt.sample_stats.to_dataset()
        if "diverging" in stats:
            div = int(np.asarray(stats["diverging"].values).sum())
    return {
        "model": dt.attrs.get("model_name"),
        "observation": dt.attrs.get("observation_name"),
        "divergences": div,
        "chains": int(post.sizes["chain"]),
        "draws": int(post.sizes["draw"]),
        "quantities": out,
    }


def _float(x):
    v = float(np.asarray(getattr(x, "values", x)))
    return v if math.isfinite(v) else None


def write_bytes(data: bytes, path) -> str:
    """Write bytes to ``path`` atomically (temporary file in the same directory, rename)."""

    def write(tmp):
        with open(tmp, "wb") as fh:
            fh.write(data)

    return _write_atomically(path, write)


def write_summary(summary: dict, path) -> str:
    """Write the JSON summary atomically."""

    def write(tmp):
        with open(tmp, "w", encoding="utf-8") as fh:
            json.dump(summary, fh, indent=2)

    return _write_atomically(path, write)
