"""Planning the next trials: which runs to make, what they buy, how likely they settle a question.

Numbers in ``candidates``, ``nodes``, ``criteria``, ``exchange``, ``assurance`` and ``plan``; the
result in ``result``, its words in ``wording``, its figure in ``figure``. The package itself is
callable, so that ``bayes.plan(result, candidates, runs)`` reaches :func:`bayes.plan.plan.plan`
whether or not a module of this package was imported first (importing one binds ``bayes.plan``
to the package).

Examples
--------
>>> import bayes, bayes.plan.result  # importing a module of the package binds bayes.plan to it
>>> callable(bayes.plan)  # and it still plans: see bayes.plan.plan.plan for an example
True
"""

from __future__ import annotations

import sys
import types


class _CallablePackage(types.ModuleType):
    def __call__(self, *args, **kwargs):
        from bayes.plan.plan import plan

        return plan(*args, **kwargs)


sys.modules[__name__].__class__ = _CallablePackage
