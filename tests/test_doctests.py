"""The examples in the public docstrings run and print what they say."""

from __future__ import annotations

import doctest
import importlib

import pytest

MODULES = ["bayes.settings", "bayes.results.result", "bayes.results.contrast"]


@pytest.mark.parametrize("name", MODULES)
def test_docstring_examples(name):
    failed, tried = doctest.testmod(importlib.import_module(name), optionflags=doctest.ELLIPSIS)
    assert tried > 0 and failed == 0
