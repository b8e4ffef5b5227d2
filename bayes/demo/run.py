"""The built-in demo study (invented): a ready-mix plant's trial programme."""

from __future__ import annotations

from collections.abc import Callable
from importlib import resources
from pathlib import Path


def demo_path(name: str) -> Path:
    """Path of a file of the demo study shipped inside the package."""
    return Path(str(resources.files("bayes") / "demo" / name))


def run_demo(out: Path, echo: Callable[[str], None] = print) -> None:
    """The whole job on the demo study: prior file -> fit -> sweep -> compare -> report.

    ``out/fit/`` holds the saved fit, its sweep (``sweep.json``) and the comparison with a
    second engineer's prior file (``compare.json``); ``out/report.html``
    (self-contained), ``out/report.pdf`` (A4), ``out/report.docx``, ``out/report.md`` with its
    PNG figures beside it, and ``out/tables/*.csv`` the report.
    """
    from bayes.api import fit, load_priors
    from bayes.compare import compare_priors
    from bayes.report.build import report_from_result
    from bayes.report.render import outputs_text, write_report
    from bayes.results.format import TABLE_DIGITS as DIGITS
    from bayes.results.provenance import provenance
    from bayes.sensitivity.sweep import sweep
    from bayes.settings import DEFAULT_SAMPLER
    from bayes.store import save_comparison, save_fit, save_sweep
    from elicit.io import read_table

    data, priors = demo_path("trial_mix.csv"), demo_path("priors.toml")
    out.mkdir(parents=True, exist_ok=True)
    echo("Demo study (INVENTED data and experts): trial mix programme, 18 batches.")
    # The sampler's one set of defaults (those of `bayes fit`): the demo prints what the command
    # would.
    sampler = DEFAULT_SAMPLER
    result = fit(read_table(data), priors=priors, source=data.name, sampler=sampler,
                 provenance=provenance(str(data), sampler.seed))  # fmt: skip
    save_fit(result, out / "fit")
    echo(result.text(DIGITS))
    echo(f"Saved the fit in {out / 'fit'}/")
    swept = sweep(result)
    save_sweep(swept, out / "fit")
    echo("")
    echo("Sensitivity to the prior widths (the sweep's headline):")
    for line in swept.headline:
        echo(f"  {line}")
    echo("")
    other = demo_path("priors_optimistic.toml")
    comparison = compare_priors(
        result.data, [load_priors(priors), load_priors(other)], sampler=sampler
    )
    save_comparison(comparison, out / "fit")
    echo(f"Comparison with a second engineer's prior file ({other.name}):")
    echo(comparison.text())
    echo("")
    report = report_from_result(result, sweep=swept, comparison=comparison)
    where = dict(html=out / "report.html", markdown=out / "report.md", csv_dir=out / "tables",
                 pdf=out / "report.pdf", docx=out / "report.docx")  # fmt: skip
    write_report(report, **where)
    echo(outputs_text(report, **where))
