"""Run the examples in the package's docstrings (they document the science).

Collected from the installed package, so the doctests see exactly what users
import.
"""

import doctest
import importlib
import pkgutil

import pytest

import elucidate

MODULES = sorted(
    m.name for m in pkgutil.walk_packages(elucidate.__path__, prefix="elucidate.")
    if not m.name.endswith("__main__")
)


@pytest.mark.parametrize("name", MODULES)
def test_docstring_examples(name):
    module = importlib.import_module(name)
    result = doctest.testmod(module, optionflags=doctest.ELLIPSIS | doctest.NORMALIZE_WHITESPACE)
    assert result.failed == 0, f"{result.failed} doctest example(s) failed in {name}"
