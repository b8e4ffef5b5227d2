"""Bayesian linear regression with elicited priors: design, engines, summaries, report."""

from .api import fit, fit_factor
from .result import FitResult

__all__ = ["fit", "fit_factor", "FitResult"]
