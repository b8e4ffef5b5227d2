"""Bayesian linear regression with elicited priors: design, engines, summaries, report."""

__all__ = ["fit", "fit_factor", "FitResult"]


def __getattr__(name: str):
    # Lazy (PEP 562): `bayes --help` imports this package and must not pay for numpy,
    # scipy and pandas.
    if name in ("fit", "fit_factor"):
        from bayes import api

        return getattr(api, name)
    if name == "FitResult":
        from bayes.results.result import FitResult

        return FitResult
    raise AttributeError(f"module 'bayes' has no attribute {name!r}")
