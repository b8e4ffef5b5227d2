"""The files written beside a saved fit: ``sweep.json``, ``compare.json``, ``contrasts.json``,
``plan.json`` (with ``plan.csv``, the planned runs).

Each records the fit it was made for (:data:`FIT_ID`, the SHA-256 that ``fit.json`` records of
itself), so that one left from an earlier fit is known stale, and, when the `bayes` command
wrote it, the command line and the time (:func:`commands` lists them in order).
:mod:`bayes.store` re-exports every name here: callers import from it.
"""

from __future__ import annotations

import json
from collections.abc import Callable
from pathlib import Path
from typing import TYPE_CHECKING, TypeVar

from bayes.errors import InputError
from bayes.store_checks import read_json
from elicit.io import atomic_write_text

if TYPE_CHECKING:  # annotations only: loading a fit needs none of them
    from bayes.compare import Comparison
    from bayes.plan.result import PlanResult
    from bayes.results.contrast import Contrasts
    from bayes.sensitivity.sweep import SweepResult

DERIVED = (
    "sweep.json",
    "compare.json",
    "contrasts.json",
    "plan.json",
)  # written beside a fit, for the fit they record
FIT_ID = "fit_sha256"  # provenance field of fit.json, and field of the derived files
_T = TypeVar("_T")


def fit_id(folder: str | Path) -> str | None:
    """The :data:`FIT_ID` of the fit saved in ``folder`` (None without a fit, or for a fit
    saved before fits recorded one)."""
    path = Path(folder) / "fit.json"
    if not path.exists():
        return None
    value = read_json(path).get("provenance", {}).get(FIT_ID)
    return value if isinstance(value, str) else None


def _recorded(doc: dict, folder: Path) -> dict:
    """``doc`` (of a :data:`DERIVED` file) with the :data:`FIT_ID` of the fit in ``folder``,
    and, when the `bayes` command writes it, its command line and the time (``command``,
    ``written``: see :func:`commands`)."""
    from bayes.results.provenance import command_line, written_at

    current = fit_id(folder)
    doc = doc if current is None else {**doc, FIT_ID: current}
    command = command_line(running=True)
    return doc if command is None else {**doc, "command": command, "written": written_at()}


def commands(folder: str | Path) -> tuple[tuple[str, str], ...]:
    """The command lines that wrote the fit folder, in order: ``(file, command)`` pairs.

    The fit's own (``fit.json``) first, then those of the :data:`DERIVED` files that belong
    to this fit, by the time each was written; files written by Python, or by versions that
    did not record their command, are left out. Each command is shell-quoted
    (``shlex.split`` gives its arguments back).
    """
    folder = Path(folder)
    out = []
    fit_doc = read_json(folder / "fit.json")
    fit_command = fit_doc.get("provenance", {}).get("command")
    if isinstance(fit_command, str):
        out.append(("fit.json", fit_command))
    current = fit_doc.get("provenance", {}).get(FIT_ID)
    later = []
    for name in DERIVED:
        path = folder / name
        if not path.exists():
            continue
        doc = read_json(path)
        command, written = doc.get("command"), doc.get("written")
        if isinstance(command, str) and isinstance(written, str) and doc.get(FIT_ID) == current:
            later.append((written, name, command))
    return (*out, *((name, command) for _, name, command in sorted(later)))


# ----------------------------------------------------------------------------- sweep.json


def save_sweep(result: SweepResult, folder) -> Path:
    """Write ``folder/sweep.json`` atomically (the folder is created when missing)."""
    folder = Path(folder)
    folder.mkdir(parents=True, exist_ok=True)
    path = folder / "sweep.json"
    atomic_write_text(path, json.dumps(_recorded(result.to_dict(), folder), indent=2,
                                       allow_nan=False) + "\n")  # fmt: skip
    return path


def load_sweep(folder: str | Path) -> SweepResult | None:
    """The sweep saved in ``folder/sweep.json`` by :func:`save_sweep`, or None when none is.

    Raises
    ------
    InputError
        When the file is there but not a readable sweep.
    """
    from bayes.sensitivity.sweep import SweepResult

    return load_saved(Path(folder) / "sweep.json", SweepResult.from_dict, what="sweep")


# ----------------------------------------------------------------------------- compare.json


def compare_path(fit_dir: str | Path) -> Path:
    """Where ``save_comparison`` writes: ``fit_dir/compare.json``, in a saved fit folder."""
    folder = Path(fit_dir)
    if not (folder / "fit.json").exists():
        raise InputError(f"{folder}: not a saved fit folder (run bayes fit --save {folder} first)")
    return folder / "compare.json"


def save_comparison(comparison: Comparison, fit_dir: str | Path) -> Path:
    """Write ``fit_dir/compare.json`` atomically, beside a fit saved by ``bayes fit --save``."""
    target = compare_path(fit_dir)
    doc = _recorded(comparison.to_dict(), target.parent)
    atomic_write_text(target, json.dumps(doc, indent=2, allow_nan=False) + "\n")
    return target


def load_comparison(folder: str | Path) -> Comparison | None:
    """The comparison saved in ``folder/compare.json`` by :func:`save_comparison`, or None
    when none is; an InputError when the file is there but not a readable comparison."""
    from bayes.compare import Comparison

    return load_saved(Path(folder) / "compare.json", Comparison.from_dict, what="comparison")


# ----------------------------------------------------------------------------- contrasts.json


def save_contrasts(contrasts: Contrasts, fit_dir: str | Path) -> Path:
    """Write ``fit_dir/contrasts.json`` atomically, beside a fit saved by ``bayes fit --save``."""
    folder = Path(fit_dir)
    if not (folder / "fit.json").exists():
        raise InputError(f"{folder}: not a saved fit folder (run bayes fit --save {folder} first)")
    target = folder / "contrasts.json"
    doc = _recorded(contrasts.to_dict(), folder)
    atomic_write_text(target, json.dumps(doc, indent=2, allow_nan=False) + "\n")
    return target


def load_contrasts(folder: str | Path) -> Contrasts | None:
    """The contrasts saved in ``folder/contrasts.json`` by :func:`save_contrasts`, or None
    when none are; an InputError when the file is there but unreadable or stale."""
    from bayes.results.contrast import Contrasts

    return load_saved(Path(folder) / "contrasts.json", Contrasts.from_dict, what="contrasts")


# ----------------------------------------------------------------------------- plan.json


def save_plan(plan: PlanResult, fit_dir: str | Path) -> tuple[Path, Path]:
    """Write ``fit_dir/plan.json`` and ``fit_dir/plan.csv`` (the runs, in the candidates'
    columns, in order of value) atomically, beside a fit saved by ``bayes fit --save``."""
    folder = Path(fit_dir)
    if not (folder / "fit.json").exists():
        raise InputError(f"{folder}: not a saved fit folder (run bayes fit --save {folder} first)")
    target, table = folder / "plan.json", folder / "plan.csv"
    atomic_write_text(table, plan.frame().to_csv(index=False))
    doc = _recorded(plan.to_dict(), folder)
    atomic_write_text(target, json.dumps(doc, indent=2, allow_nan=False) + "\n")
    return target, table


def load_plan(folder: str | Path) -> PlanResult | None:
    """The plan saved in ``folder/plan.json`` by :func:`save_plan`, or None when none is; an
    InputError when the file is there but unreadable or stale."""
    from bayes.plan.result import PlanResult

    return load_saved(Path(folder) / "plan.json", PlanResult.from_dict, what="plan")


def load_saved(path: Path, from_dict: Callable[[dict], _T], *, what: str) -> _T | None:
    """The object saved as JSON in ``path`` (sweep.json, compare.json), or None when absent.

    Parameters
    ----------
    path : Path
    from_dict : callable
        Makes the object from the JSON document (``SweepResult.from_dict``).
    what : str
        What the file holds, for the message ("sweep").

    Raises
    ------
    InputError
        When the file is not UTF-8 JSON or not a readable ``what``, or when it records a fit
        (:data:`FIT_ID`) other than the one saved beside it (it is stale).
    """
    if not path.exists():
        return None
    try:
        doc = json.loads(path.read_text(encoding="utf-8"))
    except (json.JSONDecodeError, UnicodeDecodeError) as e:
        raise InputError(f"{path}: not readable JSON ({e})") from None
    recorded = doc.get(FIT_ID) if isinstance(doc, dict) else None
    if recorded is not None and recorded != fit_id(path.parent):
        raise InputError(
            f"{path}: stale: this {what} was made for an earlier fit in {path.parent} (the fit "
            f"was saved again since): make the {what} again for this fit, or move the file away"
        )
    try:
        return from_dict(doc)
    except (ValueError, KeyError, TypeError, IndexError) as e:
        raise InputError(f"{path}: not a readable {what} ({type(e).__name__}: {e})") from None
