"""The examples in the package's docstrings run as written (doctests of every valvol module).

The modules are imported from the installed package (``valvol.flows``, ``valvol.schemas`` and
``valvol.sql`` exist only there), so the doctests run here rather than by collecting the
source folders.
"""

from __future__ import annotations

import doctest
import importlib
import pkgutil

import pytest

import valvol


def _modules() -> list[str]:
    names = {m.name for m in pkgutil.walk_packages(valvol.__path__, "valvol.")}
    for sub in ("valvol.flows", "valvol.schemas"):  # mapped in from other folders by the installation
        package = importlib.import_module(sub)
        names |= {sub} | {m.name for m in pkgutil.walk_packages(package.__path__, sub + ".")}
    return sorted(names)


MODULES = _modules()


def test_modules_are_found():
    assert {"valvol.pipeline", "valvol.methods.chainlink", "valvol.flows.rebuild"} <= set(MODULES)


@pytest.mark.parametrize("name", MODULES)
def test_docstring_examples(name):
    module = importlib.import_module(name)
    result = doctest.testmod(module, optionflags=doctest.NORMALIZE_WHITESPACE | doctest.ELLIPSIS, verbose=False)
    assert result.failed == 0, f"{result.failed} of {result.attempted} docstring example(s) fail in {name}"
