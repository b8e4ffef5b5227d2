"""Bayesian linear regression with elicited priors: design, engines, summaries, report."""
