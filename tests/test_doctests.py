"""The examples in lintamp's docstrings run as written (``>>>`` lines are doctests).

Every module of the package and every rule module is imported and its docstring
examples are run with :mod:`doctest`; a module without examples passes trivially.
The examples' expected values come from where each docstring says (common practice:
documentation that runs cannot drift from the code).
"""

from __future__ import annotations

import doctest
import importlib
import os
import pkgutil

import pytest

import lintamp

import lintamp.rules

# The package's own folder and the rules' folder, walked apart: run from a source tree,
# lintamp's __path__ also holds the checkout (to find rules/ beside it), and a walk of
# that would find the package inside itself again.
MODULES = sorted(set(
    name for path, prefix in ((os.path.dirname(lintamp.__file__), "lintamp."),
                              (lintamp.rules.__path__[0], "lintamp.rules."))
    for _, name, is_pkg in pkgutil.walk_packages([path], prefix)
    if not is_pkg and not name.endswith("__main__")))


def test_the_walk_found_the_layers():
    for name in ("lintamp.text", "lintamp.circuit.design", "lintamp.connectivity.dc_paths",
                 "lintamp.engine.formulas", "lintamp.rulekit.context", "lintamp.rules.body_tie"):
        assert name in MODULES


@pytest.mark.parametrize("name", MODULES)
def test_docstring_examples(name):
    module = importlib.import_module(name)
    result = doctest.testmod(module, optionflags=doctest.ELLIPSIS | doctest.NORMALIZE_WHITESPACE)
    assert result.failed == 0, f"{result.failed} of {result.attempted} examples failed in {name}"
