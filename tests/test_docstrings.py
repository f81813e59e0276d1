"""The Examples sections of the kit's docstrings run and hold (numpydoc examples as doctests)."""

import doctest
import importlib
import pkgutil

import pytest

import kit

# Panels need a notebook front end to be useful; their examples run in tests/test_panels.py.
MODULES = sorted(info.name for info in pkgutil.walk_packages(kit.__path__, "kit.")
                 if not info.name.startswith("kit.panels"))


@pytest.mark.parametrize("name", MODULES)
def test_examples_in_docstrings(name):
    module = importlib.import_module(name)
    result = doctest.testmod(module, optionflags=doctest.ELLIPSIS | doctest.NORMALIZE_WHITESPACE)
    assert result.failed == 0, f"{result.failed} of {result.attempted} examples failed in {name}"
