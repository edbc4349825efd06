"""Run the docstring examples of every toolkit module (imported from the installed package), so that the
examples in the documentation cannot drift from the code.

Behaviour checks only: no published check value here, so none needs a source.
"""

import doctest
import importlib
import pkgutil

import pytest

import toolkit


def _modules():
    for info in pkgutil.walk_packages(toolkit.__path__, "toolkit."):
        if info.name.endswith("__main__"):
            continue
        yield info.name


@pytest.mark.parametrize("name", sorted(_modules()))
def test_docstring_examples(name):
    module = importlib.import_module(name)
    result = doctest.testmod(module, optionflags=doctest.ELLIPSIS | doctest.NORMALIZE_WHITESPACE,
                             verbose=False)
    assert result.failed == 0, f"{result.failed} docstring example(s) failed in {name}"
