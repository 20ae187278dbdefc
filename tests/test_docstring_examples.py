"""Every public docstring example runs and gives the value it quotes."""
from __future__ import annotations

import doctest
import importlib
import pkgutil

import pytest

import eqdesign.solve
import eqdesign.thermo


def _modules():
    for pkg in (eqdesign.thermo, eqdesign.solve):
        for info in pkgutil.walk_packages(pkg.__path__, prefix=f"{pkg.__name__}."):
            yield info.name


@pytest.mark.parametrize("name", sorted(_modules()))
def test_docstring_examples(name):
    module = importlib.import_module(name)
    result = doctest.testmod(module, optionflags=doctest.ELLIPSIS | doctest.NORMALIZE_WHITESPACE)
    assert result.failed == 0, f"{result.failed} docstring example(s) failed in {name}"
