"""Planning the next trials: which runs to make, what they buy, how likely they settle a question.

Numbers in ``candidates``, ``nodes``, ``criteria``, ``exchange``, ``assurance`` and ``plan``; the
result in ``result``, its words in ``wording``, its figure in ``figure``. The package itself is
callable, so that ``bayes.plan(result, candidates, runs)`` reaches :func:`bayes.plan.plan.plan`
whether or not a module of this package was imported first (importing one binds ``bayes.plan``
to the package).

Examples
--------
>>> import bayes, pandas as pd
>>> frame = pd.DataFrame({"x": [-0.5, 0.0, 0.5, 0.2], "y": [0.9, 2.1, 2.9, 2.5]})
>>> result = bayes.plan(bayes.fit(frame, response="y"),
...                     pd.DataFrame({"x": [-1.0, -0.5, 0.0, 0.5, 1.0]}), 2)
>>> sorted(r["values"]["x"] for r in result.runs)  # a straight line: D-optimal at the ends
[-1.0, 1.0]
"""

from __future__ import annotations

import sys
import types


class _CallablePackage(types.ModuleType):
    def __call__(self, *args, **kwargs):
        from bayes.plan.plan import plan

        return plan(*args, **kwargs)


sys.modules[__name__].__class__ = _CallablePackage
