"""The examples in the synthesis modules' docstrings run and give what they show."""

from __future__ import annotations

import doctest
import importlib

import pytest

MODULES = [
    "clockplan.synth.library",
    "clockplan.synth.input",
    "clockplan.synth.classes",
    "clockplan.synth.compat",
    "clockplan.synth.layout",
    "clockplan.synth.objective",
    "clockplan.synth.tree",
    "clockplan.tomlwrite",
    "clockplan.synth.build",
]


@pytest.mark.parametrize("name", MODULES)
def test_docstring_examples(name):
    module = importlib.import_module(name)
    failed, attempted = doctest.testmod(module, optionflags=doctest.NORMALIZE_WHITESPACE)
    assert failed == 0 and attempted > 0
