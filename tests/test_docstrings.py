"""The examples in the package's docstrings run and print what they show."""

from __future__ import annotations

import doctest
import importlib
import pkgutil

import pytest

import scorecard

# scorecard.__main__ runs the command when imported, so it is left out.
MODULES = sorted(m.name for m in pkgutil.walk_packages(scorecard.__path__, "scorecard.")
                 if not m.name.endswith("__main__"))


@pytest.mark.parametrize("name", MODULES)
def test_docstring_examples_hold(name, tmp_path, monkeypatch):
    # Examples that write files do so in a fresh folder.
    monkeypatch.chdir(tmp_path)
    module = importlib.import_module(name)
    result = doctest.testmod(module, optionflags=doctest.ELLIPSIS | doctest.NORMALIZE_WHITESPACE)
    assert result.failed == 0, f"{result.failed} of {result.attempted} examples failed"
