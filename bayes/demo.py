"""The built-in demo study (invented): a ready-mix plant's trial programme."""

from __future__ import annotations

from collections.abc import Callable
from importlib import resources
from pathlib import Path

DEMO_FILES = ("trial_mix.csv", "priors.toml")


def demo_path(name: str) -> Path:
    """Path of a file of the demo study shipped inside the package."""
    return Path(str(resources.files("bayes") / "demo" / name))


def run_demo(out: Path, echo: Callable[[str], None] = print) -> None:
    """Fit the demo study, save the fit under ``out`` and print the table."""
    from .api import fit
    from .design import read_table

    data, priors = demo_path("trial_mix.csv"), demo_path("priors.toml")
    out.mkdir(parents=True, exist_ok=True)
    echo("Demo study (INVENTED data and experts): trial mix programme, 18 batches.")
    result = fit(read_table(data), priors=priors, source=data.name)
    from .store import save_fit

    save_fit(result, out / "fit")
    echo(result.text())
    echo(f"Saved the fit in {out / 'fit'}/")
