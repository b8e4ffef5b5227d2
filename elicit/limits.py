"""The magnitudes the arithmetic handles: one home for the limits on the numbers of a prior file
(:mod:`elicit.fields`, :mod:`elicit.validate`) and of a data file (:mod:`bayes.data.columns`).

A number beyond :data:`LARGEST` in magnitude, or a positive scale, sd, ``per``, weight or
degrees of freedom below :data:`SMALLEST`, is refused with a suggestion to change the units:
squares and products of such numbers (variances, precisions, a prior scale times a data
column's scale) would leave the float range, about 2.2e-308 to 1.8e308 (common practice, no
source). Within the limits a square or a product of two numbers stays inside 1e-200..1e200.
"""

from __future__ import annotations

LARGEST = 1e100
SMALLEST = 1e-100
# A prior's scale is at least this fraction of its center: the float spacing near the center
# (2.2e-16 of it) then leaves the prior's quantiles distinct to four digits or more.
PRECISION = 1e-12
UNITS = "express it in other units"  # the advice given with a number out of the limits
