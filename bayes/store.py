"""Save a fit to a folder and load it back, for `bayes report`, `sweep` and `predict`.

A fit folder holds ``fit.json`` (the JSON of ``bayes fit --format json``),
``posterior.npz`` (data factor and posterior arrays), ``priors.toml`` (the
prior file as given) and, for in-memory fits, ``data.csv`` (the rows used).
A model with categorical predictors or derived terms adds ``terms.json`` (its
coding, see :class:`bayes.data.terms.Terms`), which ``bayes predict`` applies to new rows.
Sampled fits add ``posterior.nc``, an arviz InferenceData file: the one store of their draws
(``posterior.npz`` records their shape; folders saved before 0.2 hold them in both, checked
equal on loading), and the loaded fit's ``inference``. ``sweep.json``, ``compare.json``,
``contrasts.json`` (and ``plan.json`` with ``plan.csv``) are written beside a fit by the
commands that make them; each records the
fit it belongs to (:data:`FIT_ID`) and the command line that wrote it (:func:`commands`), see
:mod:`bayes.store_derived`. The folder is written beside its final place and swapped in only
when complete; a save killed part way is finished or undone by the next save or load
(:func:`elicit.io.recover_folder`).
"""

from __future__ import annotations

import hashlib
import json
from dataclasses import replace
from pathlib import Path

import numpy as np

from bayes.engine.crossings import crossing_arrays, crossing_fields_of
from bayes.engine.posterior import DrawsPosterior, FactoredCovs, MixturePosterior, Posterior
from bayes.errors import InputError
from bayes.problem import DataFactor
from bayes.results.result import FitResult
from bayes.store_checks import (
    COV_FACTORS,
    DAMAGE,
    check_fit_doc,
    damaged,
    draws_digest,
    load_arrays,
    load_inference,
    read_inference,
    read_json,
)
from bayes.store_derived import (  # noqa: F401 (re-exported: bayes.store is the one front door)
    DERIVED,
    FIT_ID,
    commands,
    compare_path,
    fit_id,
    load_comparison,
    load_contrasts,
    load_plan,
    load_saved,
    load_sweep,
    save_comparison,
    save_contrasts,
    save_plan,
    save_sweep,
)
from elicit.io import atomic_folder, recover_folder, replace_files

FILES = ("fit.json", "posterior.npz", "priors.toml")
OWNED = (*FILES, "data.csv", "terms.json", "posterior.nc")  # what save_fit writes or removes


def save_fit(result: FitResult, folder: str | Path) -> Path:
    """Write ``result`` into ``folder`` (replacing an earlier fit there).

    A new folder is written beside its place and renamed in when complete. In an existing
    fit folder only the files of :data:`OWNED` are replaced, each atomically and
    ``fit.json`` last; other files (``sweep.json``, ``compare.json``, the user's notes)
    stay, and the derived ones are known stale by the fit they record (:data:`FIT_ID`).

    Sampled fits also get ``posterior.nc``: their arviz InferenceData (posterior and
    prior groups, coordinates named after the columns).

    Parameters
    ----------
    result : FitResult
    folder : str or Path
        A new folder, or a fit folder written earlier.

    Returns
    -------
    Path
        ``folder``.

    Examples
    --------
    >>> import bayes, pandas as pd
    >>> frame = pd.DataFrame({"x": [0.0, 1.0, 2.0, 3.0], "y": [0.1, 0.9, 2.2, 2.8]})
    >>> import tempfile
    >>> folder = bayes.save_fit(bayes.fit(frame, response="y"), tempfile.mkdtemp() + "/fit")
    >>> sorted(p.name for p in folder.iterdir())
    ['data.csv', 'fit.json', 'posterior.npz', 'priors.toml']
    """
    folder = Path(folder)
    if folder.exists() and not folder.is_dir():
        raise InputError(f"{folder}: is a file, not a folder")
    if folder.exists() and not (folder / "fit.json").exists() and any(folder.iterdir()):
        raise InputError(f"{folder}: exists and is not a fit folder; choose another --save path")
    if not folder.exists():
        with atomic_folder(folder) as tmp:
            _write_fit(result, tmp)
    else:
        with replace_files(folder, owned=OWNED, last=("fit.json",)) as tmp:
            _write_fit(result, tmp)
    return folder


def _write_fit(result: FitResult, tmp: Path) -> None:
    """Write every file of the fit folder into the (new, empty) folder ``tmp``."""
    post, f = result.posterior, result.factor
    arrays = {
        "factor_names": np.array(f.names, dtype=str),
        "factor_n": np.array(f.n),
        "x_mean": f.x_mean,
        "x_scale": f.x_scale,
        "y_mean": np.array(f.y_mean),
        "R": f.R,
        **_posterior_arrays(post, draws_in_nc=result.inference is not None),
    }
    np.savez(tmp / "posterior.npz", **arrays)
    doc = result.to_dict()
    doc["labels"] = {"method": post.method, "detail": post.detail, "mode_kind": post.mode_kind}
    doc["provenance"].pop(FIT_ID, None)  # a loaded fit saved again gets a new one
    digest = hashlib.sha256(json.dumps(doc, sort_keys=True).encode("utf-8"))
    doc["provenance"][FIT_ID] = digest.hexdigest()
    (tmp / "fit.json").write_text(json.dumps(doc, indent=2) + "\n")
    (tmp / "priors.toml").write_text(_priors_text(result.priors))
    if result.data is not None:
        result.data.frame().to_csv(tmp / "data.csv", index=False)
    if result.terms is not None:
        coding = {**result.terms.to_dict(), "notes": list(result.terms.notes)}
        (tmp / "terms.json").write_text(json.dumps(coding, indent=2) + "\n")
    if result.inference is not None:
        result.inference.to_netcdf(str(tmp / "posterior.nc"), engine="h5netcdf")


def _priors_text(priors) -> str:
    """The fit's priors as TOML: the prior file as given when it still says what the fit used,
    else the priors the fit used, written out (an in-memory or changed prior set); empty for
    flat priors."""
    from elicit.read import read_prior_file
    from elicit.spec import flat_priors
    from elicit.write import dump_toml, prior_doc

    used = prior_doc(priors)
    if used == prior_doc(flat_priors()):
        return ""
    src = getattr(priors, "path", None)
    if src and Path(src).is_file():
        try:
            if prior_doc(read_prior_file(src)) == used:
                return Path(src).read_text(encoding="utf-8")
        except (InputError, OSError, UnicodeDecodeError):
            pass
    return dump_toml(used, header="The priors this fit used (written by bayes fit --save).")


def _posterior_arrays(post: Posterior, *, draws_in_nc: bool) -> dict[str, np.ndarray]:
    """The posterior's arrays in ``posterior.npz``.

    A sampled fit's draws are stored once: in ``posterior.nc`` when the fit has its
    InferenceData (``draws_in_nc``; the npz then records only their ``draws_shape``),
    else here.

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
        if draws_in_nc:
            extra = {
                "draws_shape": np.array(post.draws.shape[:2], dtype=np.int64),
                "draws_digest": draws_digest(post.draws, post.sigma_draws),
            }
        extra.update(crossing_arrays(post))  # what the chains are judged against
    else:
        mixture = {"weights": post.weights, "sigma": post.sigma, "means": post.means,
                   "covs": post.covs}  # fmt: skip
        df, extra = post.df, {} if post.sigma_cdf is None else {"sigma_cdf": post.sigma_cdf}
        if post.noise_modes:  # (sigma, mass) of each mode of the noise posterior
            extra["noise_modes"] = np.array(post.noise_modes, dtype=float).reshape(-1, 2)
        if post.growth is not None:  # the noise posterior's tail (infinite variances)
            extra.update(tail_df=np.array(post.tail_df), growth=post.growth)
        if post.factored is not None:  # the covariances' factors, which the fit read off
            extra.update({f"cov_{n}": getattr(post.factored, n) for n in COV_FACTORS})
    return {
        "names": np.array(post.names, dtype=str),
        **mixture,
        "mode": post.mode,
        "scalars": np.array([post.sigma_mode, df, float(post.noise_known)]),
        **extra,
    }


def _posterior_from_arrays(z, labels: dict, draws=None) -> Posterior:
    """The posterior of a ``posterior.npz`` (old or new): draws make a sampled posterior
    (``draws``: the (beta, sigma) draws read from ``posterior.nc``, else those in ``z``)."""
    sigma_mode, df, known = z["scalars"]
    common = dict(
        names=tuple(str(s) for s in z["names"]), method=labels["method"],
        detail=labels["detail"], mode=z["mode"], mode_kind=labels["mode_kind"],
        sigma_mode=float(sigma_mode), noise_known=bool(known),
    )  # fmt: skip
    if draws is not None:
        return DrawsPosterior(**common, draws=draws[0], sigma_draws=draws[1],
                              **crossing_fields_of(z))  # fmt: skip
    if "draws" in z:
        return DrawsPosterior(**common, draws=z["draws"], sigma_draws=z["sigma_draws"],
                              **crossing_fields_of(z))  # fmt: skip
    return MixturePosterior(
        **common, weights=z["weights"], sigma=z["sigma"], means=z["means"], stack=z["covs"],
        df=float(df), sigma_cdf=z["sigma_cdf"] if "sigma_cdf" in z else None,
        noise_modes=tuple((float(s), float(m)) for s, m in z["noise_modes"])
        if "noise_modes" in z else (),
        tail_df=float(z["tail_df"]) if "tail_df" in z else np.inf,
        growth=z["growth"] if "growth" in z else None,
        factored=FactoredCovs(*(z[f"cov_{n}"] for n in COV_FACTORS)) if "cov_G" in z else None,
    )  # fmt: skip


def load_fit(folder: str | Path) -> FitResult:
    """Load a fit saved by :func:`save_fit`.

    Raises
    ------
    InputError
        When the folder is not a complete fit folder.

    Parameters
    ----------
    folder : str or Path
        A fit folder written by :func:`save_fit` (or ``bayes fit --save``), by this or an
        earlier version.

    Returns
    -------
    FitResult

    Examples
    --------
    >>> import bayes, pandas as pd
    >>> frame = pd.DataFrame({"x": [0.0, 1.0, 2.0, 3.0], "y": [0.1, 0.9, 2.2, 2.8]})
    >>> import tempfile
    >>> folder = bayes.save_fit(bayes.fit(frame, response="y"), tempfile.mkdtemp() + "/fit")
    >>> round(float(bayes.load_fit(folder).summary().loc["x", "mean"]), 2)
    0.94
    """
    import tomllib

    import pandas as pd

    from bayes.data.design import Design
    from elicit.spec import flat_priors
    from elicit.validate import parse_priors

    folder = Path(folder)
    try:  # a save killed part way: put the complete old or new fit in place
        recover_folder(folder, owned=OWNED)
    except OSError:
        pass  # a folder we may not change: read what is there
    missing = [f for f in FILES if not (folder / f).exists()]
    if missing:
        raise InputError(f"{folder}: not a saved fit (missing {', '.join(missing)})")
    doc = read_json(folder / "fit.json")
    check_fit_doc(doc, path=folder / "fit.json")
    npz = folder / "posterior.npz"
    intercept = doc.get("intercept", True)  # a folder without the field: an intercept
    z = load_arrays(npz, intercept=intercept)
    nc, inference, draws = folder / "posterior.nc", None, None
    if "draws_shape" in z:  # the draws are stored once, in posterior.nc
        if not nc.exists():
            raise InputError(f"{nc}: missing: this sampled fit's draws are stored there")
        names = tuple(str(s) for s in z["names"])
        shape = tuple(int(c) for c in z["draws_shape"])
        inference, *draws = read_inference(nc, names, shape, z["draws_digest"])
    try:
        factor = DataFactor(
            tuple(str(s) for s in z["factor_names"]), int(z["factor_n"]), z["x_mean"],
            z["x_scale"], float(z["y_mean"]), z["R"], intercept,
        )  # fmt: skip
        post = _posterior_from_arrays(z, doc["labels"], draws)
    except DAMAGE as e:
        raise damaged(npz, e) from None
    try:
        text = (folder / "priors.toml").read_text(encoding="utf-8")
        table = tomllib.loads(text) if text else None
    except (*DAMAGE, RecursionError) as e:
        raise damaged(folder / "priors.toml", e) from None
    priors = parse_priors(table, source=str(folder / "priors.toml")) if text else flat_priors()
    terms, coding = None, None
    if (folder / "terms.json").exists():
        from bayes.data.terms import Terms

        coding = read_json(folder / "terms.json")
        try:
            terms = Terms.from_dict(coding)
        except InputError as e:
            raise InputError(f"{folder / 'terms.json'}: {e}") from None
        if (terms.response != doc["response"] or terms.columns != factor.names
                or terms.intercept != intercept):  # fmt: skip
            raise InputError(
                f"{folder / 'terms.json'}: its response, columns or intercept differ from the fit's"
            )
    data = None
    if (folder / "data.csv").exists():
        names = factor.names
        try:
            label = doc.get("row_label")  # absent in older folders
            if not isinstance(label, str) or label in (*names, doc["response"]):
                label = None
            frame = pd.read_csv(folder / "data.csv", dtype=None if label is None else {label: str})
            labels = () if label not in frame else tuple(frame[label].fillna("").astype(str))
            data = Design(
                doc["response"], names, frame[list(names)].to_numpy(float),
                frame[doc["response"]].to_numpy(float), str(doc["provenance"].get("data", "data")),
                int(doc["provenance"].get("dropped", 0)), terms, intercept, label, labels,
                tuple(str(n) for n in doc.get("column_notes", ())),
            )  # fmt: skip
        except (*DAMAGE, pd.errors.ParserError, pd.errors.EmptyDataError) as e:
            raise damaged(folder / "data.csv", e) from None
        if data.n != factor.n or not (np.isfinite(data.X).all() and np.isfinite(data.y).all()):
            raise InputError(f"{folder / 'data.csv'}: damaged: its rows are not the fit's")
    if nc.exists() and inference is None:  # an older folder: the draws are in both files
        if not isinstance(post, DrawsPosterior):
            raise InputError(f"{nc}: not this fit's InferenceData: "
                             "the fit is exact and has no draws")  # fmt: skip
        inference = load_inference(nc, post.names, post.draws, post.sigma_draws)
    result = FitResult(doc["response"], factor, priors, post, doc["level"], data=data,
                       provenance=doc["provenance"], terms=terms,
                       inference=inference)  # fmt: skip
    if coding is not None and "notes" not in coding:
        # Saved by 0.1.0: the coding's notes (reference levels) are only in fit.json, as the
        # notes that the fit itself does not make.
        own = set(replace(result, terms=None).notes)
        terms = replace(terms, notes=tuple(n for n in doc["notes"] if n not in own))
        result = replace(result, terms=terms, data=data and replace(data, terms=terms))
    return result
