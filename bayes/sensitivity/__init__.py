"""Sensitivity of the posterior to the priors: the width sweep (:mod:`bayes.sensitivity.sweep`).

Modules, from the bottom up: ``wording`` (every sentence), ``grid`` (width factors,
thresholds), ``priors`` (which priors are widened, the flat-prior limit), ``result``
(the numbers found, ``sweep.json``), ``conflict`` (prior-data conflict, power scaling),
``gaussian`` and ``sampled`` (the two engines), ``conclusions`` (flip factors),
``family_swap``, and ``sweep`` (the entry points).
"""
