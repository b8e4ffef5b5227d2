"""Checks on the files of a fit folder as they are read: damage becomes one line naming the file.

A fit folder may be truncated by a crash, edited by hand or received from someone else:
:func:`read_json` and :func:`check_arrays` refuse what :func:`bayes.store.load_fit` could
not use (unreadable JSON, an archive that is not one, missing keys, wrong shapes, values
that are not finite, names that do not match) before any of it reaches a computation.
"""

from __future__ import annotations

import json
import zipfile
from pathlib import Path

import numpy as np

from bayes.errors import InputError

# what reading a damaged file may raise, besides our own InputError
DAMAGE = (KeyError, ValueError, TypeError, IndexError, AttributeError, OSError, EOFError,
          zipfile.BadZipFile)  # fmt: skip

#: ``posterior.npz`` keeps an exact fit's covariance factors as ``cov_G`` ... ``cov_h``
#: (:class:`bayes.engine.posterior.FactoredCovs`), beside the ``covs`` stack formed from them
COV_FACTORS = ("G", "d", "H", "h")


def damaged(path: Path, e: Exception) -> InputError:
    """The one-line error for a fit-folder file that could not be read as one."""
    text = str(e).strip().splitlines()[0] if str(e).strip() else ""
    return InputError(f"{path}: damaged or not written by bayes ({type(e).__name__}"
                      f"{': ' + text if text else ''})")  # fmt: skip


def read_json(path: Path) -> dict:
    """The JSON object in ``path``; an InputError naming the file when it is not one."""
    try:
        doc = json.loads(path.read_text(encoding="utf-8"))
    except (OSError, ValueError, RecursionError) as e:  # JSON and UTF-8 errors are ValueErrors
        raise InputError(f"{path}: not readable JSON ({type(e).__name__})") from None
    if not isinstance(doc, dict):
        raise InputError(f"{path}: not a JSON object")
    return doc


def check_fit_doc(doc: dict, *, path: Path) -> None:
    """``fit.json`` has the fields a fit is loaded from, of their types; its labels repeat its
    method, detail and mode kind, and the method is known.

    Raises
    ------
    InputError
        Naming the file and the field.
    """
    kinds = {"response": str, "level": float, "provenance": dict, "notes": list, "labels": dict}
    for key, kind in kinds.items():
        value = doc.get(key)
        if not isinstance(value, kind) or isinstance(value, bool):
            raise InputError(f"{path}: damaged: field {key!r} is missing or not a {kind.__name__}")
    if not isinstance(doc.get("intercept", True), bool):
        raise InputError(f"{path}: damaged: field 'intercept' is not true or false")
    if not 0 < doc["level"] < 1:
        raise InputError(f"{path}: damaged: level must lie strictly between 0 and 1")
    labels = doc.get("labels")
    keys = ("method", "detail", "mode_kind")
    if not isinstance(labels, dict) or any(labels.get(k) != doc.get(k) for k in keys):
        raise InputError(f"{path}: its labels differ from its method, detail and mode_kind")
    if labels["method"] not in ("exact", "sampled") or not all(
        isinstance(labels[k], str) for k in keys
    ):
        raise InputError(f"{path}: method must be exact or sampled, got {labels['method']!r}")


def load_arrays(path: Path, *, intercept: bool = True) -> dict[str, np.ndarray]:
    """Every array of ``posterior.npz`` (no pickled objects), checked by :func:`check_arrays`
    (``intercept``: whether the fit's model has one, from ``fit.json``)."""
    try:
        with np.load(path, allow_pickle=False) as z:
            arrays = {k: z[k] for k in z.files}
    except DAMAGE as e:
        raise damaged(path, e) from None
    check_arrays(arrays, path=path, intercept=intercept)
    return arrays


def check_arrays(z: dict[str, np.ndarray], *, path: Path, intercept: bool = True) -> None:
    """The arrays of ``posterior.npz`` have the keys, shapes and finite values a fit has.

    Raises
    ------
    InputError
        Naming the file and the first array that is missing, misshapen or not finite.
    """
    need = ("factor_names", "factor_n", "x_mean", "x_scale", "y_mean", "R", "names", "mode",
            "scalars", "weights", "sigma", "means", "covs")  # fmt: skip
    missing = [k for k in need if k not in z]
    if missing:
        raise InputError(f"{path}: damaged: no array {missing[0]!r}")
    p = len(z["factor_names"])
    k, m = p + int(intercept), len(z["weights"])
    shapes = {"factor_names": (p,), "factor_n": (), "x_mean": (p,), "x_scale": (p,),
              "y_mean": (), "names": (k,), "mode": (k,), "scalars": (3,), "weights": (m,),
              "sigma": (m,), "means": (m, k), "covs": (m, k, k)}  # fmt: skip
    if "draws" in z:
        shapes["draws"] = (*z["draws"].shape[:-1], k)
        shapes["sigma_draws"] = z["draws"].shape[:-1]
    if "draws_shape" in z:  # the draws are in posterior.nc: (chains, draws) of them
        shapes.update(draws_shape=(2,), draws_digest=(32,))
    if "growth" in z or "tail_df" in z:  # both or neither: the noise posterior's tail
        shapes.update(growth=(k, k), tail_df=())
    if any(f"cov_{n}" in z for n in COV_FACTORS):  # all or none: the covariances' factors
        r, f = (z[key].shape[-1] if key in z and z[key].ndim == 2 else -1
                for key in ("cov_G", "cov_H"))  # fmt: skip
        shapes.update(cov_G=(k, r), cov_d=(m, r), cov_H=(k, f), cov_h=(m,))
    for key, shape in shapes.items():
        if key not in z or z[key].shape != shape:
            got = z[key].shape if key in z else "none"
            raise InputError(f"{path}: damaged: array {key!r} has shape {got}, not {shape}")
    if z["R"].ndim != 2 or z["R"].shape[1] != p + 1 or not 1 <= z["R"].shape[0] <= p + 1:
        raise InputError(f"{path}: damaged: array 'R' has shape {z['R'].shape}")
    for key in ("factor_names", "names"):
        if z[key].dtype.kind != "U":
            raise InputError(f"{path}: damaged: array {key!r} is not text")
    if list(z["names"]) != ["intercept"] * intercept + list(z["factor_names"]):
        raise InputError(f"{path}: damaged: the posterior's names are not the data factor's")
    numbers = [key for key in z if key not in ("factor_names", "names")]
    for key in numbers:
        if z[key].dtype.kind not in "fiub":
            raise InputError(f"{path}: damaged: array {key!r} is not numbers")
    for key in ("x_mean", "x_scale", "y_mean", "R", "mode", "weights", "sigma", "means", "covs",
                "draws", "sigma_draws", "factor_n", "growth", "tail_df",
                *(f"cov_{n}" for n in COV_FACTORS)):  # fmt: skip
        if key in z and not np.all(np.isfinite(z[key])):
            raise InputError(f"{path}: damaged: array {key!r} has values that are not finite")
    if "draws_shape" in z and (z["draws_shape"].dtype.kind not in "iu" or
                               np.any(z["draws_shape"] < 1)):  # fmt: skip
        raise InputError(f"{path}: damaged: array 'draws_shape' is not two counts")
    if int(z["factor_n"]) < 1 or np.any(z["x_scale"] <= 0) or np.any(z["weights"] < 0):
        raise InputError(f"{path}: damaged: the row count, scales or weights are out of range")


def draws_digest(beta: np.ndarray, sigma: np.ndarray) -> np.ndarray:
    """The SHA-256 of a fit's draws (float64, C order) as 32 bytes: ``posterior.npz`` keeps it,
    so a ``posterior.nc`` from another fit of the same shape is refused."""
    import hashlib

    h = hashlib.sha256(np.ascontiguousarray(beta, dtype=np.float64).tobytes())
    h.update(np.ascontiguousarray(sigma, dtype=np.float64).tobytes())
    return np.frombuffer(h.digest(), dtype=np.uint8).copy()


def read_inference(path: Path, names: tuple[str, ...], shape: tuple[int, int],
                   digest: np.ndarray | None = None):  # fmt: skip
    """The arviz InferenceData of ``posterior.nc``, read into memory and checked: a
    ``posterior`` group whose ``beta`` has dimensions (chain, draw, coefficient) with the
    coefficient names ``names`` and whose ``sigma`` has (chain, draw), of ``shape`` (chains,
    draws), all finite.

    Parameters
    ----------
    path : Path
    names : tuple of str
        The coefficients ("intercept" first).
    shape : tuple of int
        (chains, draws) the fit recorded.
    digest : ndarray of 32 uint8, optional
        The draws' :func:`draws_digest` the fit recorded.

    Returns
    -------
    tuple
        (InferenceData, beta draws of shape (chains, draws, k), sigma draws (chains, draws)).

    Raises
    ------
    InputError
        One line naming the file: not a netCDF file arviz reads, or not this fit's draws.
    """
    import warnings

    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # arviz announces its refactor on import
        import arviz as az

        try:
            with az.rc_context(rc={"data.load": "eager"}):
                idata = az.from_netcdf(str(path), engine="h5netcdf")
            post = idata.posterior
            beta, noise = post["beta"], post["sigma"]
        except (*DAMAGE, RuntimeError, ImportError) as e:
            raise damaged(path, e) from None
    want = (*shape, len(names))
    bad = None
    if tuple(beta.dims) != ("chain", "draw", "coefficient") or beta.shape != want:
        bad = f"its beta has dimensions {dict(beta.sizes)}, not the fit's {want}"
    elif tuple(noise.dims) != ("chain", "draw") or noise.shape != tuple(shape):
        bad = f"its sigma has dimensions {dict(noise.sizes)}, not the fit's {tuple(shape)}"
    elif "coefficient" not in beta.coords or [
        str(c) for c in beta.coords["coefficient"].values
    ] != list(names):
        bad = "its coefficient names are not the fit's"
    elif not (np.isfinite(beta.values).all() and np.isfinite(noise.values).all()):
        bad = "it has draws that are not finite"
    elif digest is not None and not np.array_equal(draws_digest(beta.values, noise.values),
                                                   digest):  # fmt: skip
        bad = "its draws are not those this fit recorded"
    if bad:
        raise InputError(f"{path}: not this fit's InferenceData: {bad}")
    return idata, np.asarray(beta.values, float), np.asarray(noise.values, float)


def load_inference(path: Path, names: tuple[str, ...], draws: np.ndarray, sigma: np.ndarray):
    """The InferenceData of ``posterior.nc`` beside a ``posterior.npz`` that holds the draws
    too (folders saved before the draws were stored once): checked as by
    :func:`read_inference`, and equal to those draws."""
    idata, beta, noise = read_inference(path, names, draws.shape[:2])
    if not (np.array_equal(beta, draws) and np.array_equal(noise, sigma)):
        raise InputError(f"{path}: not this fit's InferenceData: "
                         "its draws are not those of posterior.npz")  # fmt: skip
    return idata
