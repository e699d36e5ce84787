"""The Examples sections of the core's docstrings run and print what they say."""

from __future__ import annotations

import doctest
import importlib
import pkgutil

import pytest

import rankfold

MODULES = sorted(m.name for m in pkgutil.iter_modules(rankfold.__path__))


@pytest.mark.parametrize("name", MODULES)
def test_docstring_examples_run(name: str) -> None:
    module = importlib.import_module(f"rankfold.{name}")
    result = doctest.testmod(module, optionflags=doctest.NORMALIZE_WHITESPACE)
    assert result.failed == 0, f"{result.failed} docstring example(s) failed in rankfold.{name}"
