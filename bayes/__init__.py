"""Bayesian linear regression with elicited priors: design, engines, summaries, report.

The public names load on first use (PEP 562), so that ``bayes --help`` does not pay for numpy,
scipy and pandas.

Examples
--------
>>> import bayes, pandas as pd
>>> frame = pd.DataFrame({"x": [0.0, 1.0, 2.0, 3.0], "y": [0.1, 0.9, 2.2, 2.8]})
>>> result = bayes.fit(frame, response="y")  # or priors="priors.toml"
>>> "fit" in dir(bayes) and result.posterior.method == "exact"
True
"""

from __future__ import annotations

from importlib import import_module

# public name -> the module that is its one home
_HOMES = {
    "fit": "bayes.api",
    "fit_factor": "bayes.api",
    "load_priors": "bayes.api",
    "FitResult": "bayes.results.result",
    "SamplerSettings": "bayes.settings",
    "InputError": "bayes.errors",
    "load_fit": "bayes.store",
    "save_fit": "bayes.store",
    "predict": "bayes.results.predict",
    "sweep": "bayes.sensitivity.sweep",
    "SweepResult": "bayes.sensitivity.sweep",
    "compare_priors": "bayes.compare",
    "Comparison": "bayes.compare",
    "build_report": "bayes.report.build",
    "contrast": "bayes.results.contrast",
    "Contrasts": "bayes.results.contrast",
    "plan": "bayes.plan.plan",
    "PlanResult": "bayes.plan.result",
}

__all__ = sorted(_HOMES)


def __getattr__(name: str):
    home = _HOMES.get(name)
    if home is None:
        raise AttributeError(f"module 'bayes' has no attribute {name!r}")
    value = getattr(import_module(home), name)
    globals()[name] = value  # the next lookup is a plain attribute
    return value


def __dir__() -> list[str]:
    return sorted({*globals(), *__all__})
