"""The public names document themselves (numpydoc, with a runnable example), and every example
in the public docstrings runs and prints what it says."""

from __future__ import annotations

import doctest
import importlib
import inspect
import warnings

import pytest

import bayes
import elicit

PUBLIC = [(pkg, name) for pkg in (bayes, elicit) for name in pkg.__all__]
# the modules the public names live in, and the packages themselves
MODULES = sorted({"bayes", "elicit", "bayes.settings"} | {
    getattr(pkg, name).__name__ if inspect.ismodule(getattr(pkg, name))
    else getattr(pkg, name).__module__
    for pkg, name in PUBLIC if callable(getattr(pkg, name)) or inspect.ismodule(getattr(pkg, name))
})  # fmt: skip


@pytest.mark.parametrize(("pkg", "name"), PUBLIC, ids=[f"{p.__name__}.{n}" for p, n in PUBLIC])
def test_public_name_has_numpydoc_with_an_example(pkg, name):
    obj = getattr(pkg, name)
    if not (callable(obj) or inspect.ismodule(obj)):
        return  # a constant (elicit.FAMILIES): documented where it is defined
    doc = inspect.getdoc(obj) or ""
    assert "Examples\n--------" in doc and ">>> " in doc, f"{pkg.__name__}.{name}: no example"
    if inspect.isfunction(obj):
        params = [p for p in inspect.signature(obj).parameters if p not in ("self", "cls")]
        if params:
            assert "Parameters\n----------" in doc, f"{pkg.__name__}.{name}: no Parameters"
            for p in params:
                assert p in doc, f"{pkg.__name__}.{name}: parameter {p!r} not described"
        assert "Returns\n-------" in doc, f"{pkg.__name__}.{name}: no Returns"


@pytest.mark.parametrize("name", MODULES)
def test_docstring_examples(name, tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)  # examples that write files write them here
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # arviz announces its refactor on import
        flags = doctest.ELLIPSIS | doctest.NORMALIZE_WHITESPACE
        failed, tried = doctest.testmod(importlib.import_module(name), optionflags=flags)
    assert tried > 0 and failed == 0
