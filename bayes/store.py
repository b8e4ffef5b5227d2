"""Save a fit to a folder and load it back, for `bayes report`, `sweep` and `predict`.

A fit folder holds ``fit.json`` (the JSON of ``bayes fit --format json``),
``posterior.npz`` (data factor and posterior arrays), ``priors.toml`` (the
prior file as given) and, for in-memory fits, ``data.csv`` (the rows used).
A model with categorical predictors or derived terms adds ``terms.json`` (its
coding, see :class:`bayes.data.terms.Terms`), which ``bayes predict`` applies to new rows.
Sampled fits add ``posterior.nc``, an arviz InferenceData file. The folder is
written beside its final place and swapped in only when complete.
"""

from __future__ import annotations

import json
import os
import shutil
import tempfile
from pathlib import Path

import numpy as np

from bayes.engine.posterior import DrawsPosterior, MixturePosterior, Posterior
from bayes.errors import InputError
from bayes.problem import DataFactor
from bayes.results.result import FitResult

FILES = ("fit.json", "posterior.npz", "priors.toml")


def save_fit(result: FitResult, folder: str | Path) -> Path:
    """Write ``result`` into ``folder`` atomically (replacing an earlier fit there).

    Sampled fits also get ``posterior.nc``: their arviz InferenceData (posterior and
    prior groups, coordinates named after the columns).
    """
    folder = Path(folder)
    if folder.exists() and not (folder / "fit.json").exists() and any(folder.iterdir()):
        raise InputError(f"{folder}: exists and is not a fit folder; choose another --save path")
    folder.parent.mkdir(parents=True, exist_ok=True)
    tmp = Path(tempfile.mkdtemp(prefix=f".{folder.name}.", dir=folder.parent))
    try:
        post, f = result.posterior, result.factor
        arrays = {
            "factor_names": np.array(f.names, dtype=str),
            "factor_n": np.array(f.n),
            "x_mean": f.x_mean,
            "x_scale": f.x_scale,
            "y_mean": np.array(f.y_mean),
            "R": f.R,
            **_posterior_arrays(post),
        }
        np.savez(tmp / "posterior.npz", **arrays)
        doc = result.to_dict()
        doc["labels"] = {"method": post.method, "detail": post.detail, "mode_kind": post.mode_kind}
        (tmp / "fit.json").write_text(json.dumps(doc, indent=2) + "\n")
        src = getattr(result.priors, "path", None)
        text = Path(src).read_text() if src and Path(src).exists() else ""
        (tmp / "priors.toml").write_text(text)
        if result.data is not None:
            result.data.frame().to_csv(tmp / "data.csv", index=False)
        if result.terms is not None:
            (tmp / "terms.json").write_text(json.dumps(result.terms.to_dict(), indent=2) + "\n")
        if result.inference is not None:
            result.inference.to_netcdf(str(tmp / "posterior.nc"), engine="h5netcdf")
        _swap(tmp, folder)
    except BaseException:
        shutil.rmtree(tmp, ignore_errors=True)
        raise
    return folder


def _posterior_arrays(post: Posterior) -> dict[str, np.ndarray]:
    """The posterior's arrays in ``posterior.npz``.

    Both forms write the mixture keys (``weights``, ``sigma``, ``means``, ``covs`` and
    ``df`` in ``scalars``), which older versions read unconditionally: a sampled fit
    writes one component at the draws' mean and covariance and the noise draws' median.
    """
    if isinstance(post, DrawsPosterior):
        mixture = {
            "weights": np.ones(1),
            "sigma": np.array([float(np.median(post.sigma_draws))]),
            "means": post.mean[None],
            "covs": post.cov[None],
        }
        df, extra = np.inf, {"draws": post.draws, "sigma_draws": post.sigma_draws}
    else:
        mixture = {"weights": post.weights, "sigma": post.sigma, "means": post.means,
                   "covs": post.covs}  # fmt: skip
        df, extra = post.df, {} if post.sigma_cdf is None else {"sigma_cdf": post.sigma_cdf}
    return {
        "names": np.array(post.names, dtype=str),
        **mixture,
        "mode": post.mode,
        "scalars": np.array([post.sigma_mode, df, float(post.noise_known)]),
        **extra,
    }


def _posterior_from_arrays(z, labels: dict) -> Posterior:
    """The posterior of a ``posterior.npz`` (old or new): draws make a sampled posterior."""
    sigma_mode, df, known = z["scalars"]
    common = dict(
        names=tuple(str(s) for s in z["names"]), method=labels["method"],
        detail=labels["detail"], mode=z["mode"], mode_kind=labels["mode_kind"],
        sigma_mode=float(sigma_mode), noise_known=bool(known),
    )  # fmt: skip
    if "draws" in z:
        return DrawsPosterior(**common, draws=z["draws"], sigma_draws=z["sigma_draws"])
    return MixturePosterior(
        **common, weights=z["weights"], sigma=z["sigma"], means=z["means"], covs=z["covs"],
        df=float(df), sigma_cdf=z["sigma_cdf"] if "sigma_cdf" in z else None,
    )  # fmt: skip


def _swap(tmp: Path, folder: Path) -> None:
    """Put the complete folder ``tmp`` in place of ``folder``."""
    if folder.exists():
        old = Path(tempfile.mkdtemp(prefix=f".{folder.name}.old.", dir=folder.parent))
        os.replace(folder, old / "fit")
        os.replace(tmp, folder)
        shutil.rmtree(old, ignore_errors=True)
    else:
        os.replace(tmp, folder)


def load_fit(folder: str | Path) -> FitResult:
    """Load a fit saved by :func:`save_fit`.

    Raises
    ------
    InputError
        When the folder is not a complete fit folder.
    """
    import tomllib

    import pandas as pd

    from bayes.data.design import Design
    from elicit.spec import flat_priors, parse_priors

    folder = Path(folder)
    missing = [f for f in FILES if not (folder / f).exists()]
    if missing:
        raise InputError(f"{folder}: not a saved fit (missing {', '.join(missing)})")
    doc = json.loads((folder / "fit.json").read_text())
    z = np.load(folder / "posterior.npz")
    factor = DataFactor(
        tuple(str(s) for s in z["factor_names"]), int(z["factor_n"]), z["x_mean"], z["x_scale"],
        float(z["y_mean"]), z["R"],
    )  # fmt: skip
    post = _posterior_from_arrays(z, doc["labels"])
    text = (folder / "priors.toml").read_text()
    priors = (
        parse_priors(tomllib.loads(text), str(folder / "priors.toml")) if text else flat_priors()
    )
    terms = None
    if (folder / "terms.json").exists():
        from bayes.data.terms import Terms

        terms = Terms.from_dict(json.loads((folder / "terms.json").read_text()))
    data = None
    if (folder / "data.csv").exists():
        frame = pd.read_csv(folder / "data.csv")
        names = factor.names
        data = Design(
            doc["response"], names, frame[list(names)].to_numpy(float),
            frame[doc["response"]].to_numpy(float), doc["provenance"].get("data", "data"),
            int(doc["provenance"].get("dropped", 0)), terms,
        )  # fmt: skip
    return FitResult(
        doc["response"], factor, priors, post, doc["level"], tuple(doc["coefficients"]),
        doc["diagnostics"], tuple(doc["penalties"]), tuple(doc["notes"]), data,
        doc["provenance"], terms=terms,
    )  # fmt: skip
