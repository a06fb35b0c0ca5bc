"""The examples in the jitter modules' docstrings run and give what they show."""

from __future__ import annotations

import doctest
import importlib

import pytest

MODULES = [
    "clockplan.jitter",
    "clockplan.jitter.profile",
    "clockplan.jitter.integrate",
    "clockplan.jitter.loop",
    "clockplan.jitter.chain",
    "clockplan.jitter.converter",
    "clockplan.jitter.result",
    "clockplan.jitter.parse",
    "clockplan.jitter.tree",
    "clockplan.jitter.consumer",
    "clockplan.jitter.stage",
]


@pytest.mark.parametrize("name", MODULES)
def test_docstring_examples(name):
    module = importlib.import_module(name)
    failed, attempted = doctest.testmod(module, optionflags=doctest.NORMALIZE_WHITESPACE)
    assert failed == 0
    assert attempted > 0 or name == "clockplan.jitter"


@pytest.mark.parametrize("name", MODULES)
def test_public_names_exist(name):
    module = importlib.import_module(name)
    assert module.__all__ and all(hasattr(module, attr) for attr in module.__all__)
