"""The TOML writer round-trips through the standard library's reader (tomllib, TOML 1.0)."""

import math
import tomllib

from hypothesis import given, settings
from hypothesis import strategies as st

from clockplan.tomlwrite import toml_key, toml_string, toml_value

# Any text a TOML file can hold: every Unicode scalar value (no lone surrogates, which
# UTF-8 cannot encode and TOML does not allow).
TEXT = st.text(st.characters(exclude_categories=("Cs",)), max_size=40)
SCALARS = st.one_of(st.booleans(), st.integers(-(2**63), 2**63 - 1), st.floats(allow_nan=False), TEXT)
VALUES = st.recursive(SCALARS, lambda inner: st.one_of(st.lists(inner, max_size=4), st.dictionaries(TEXT, inner, max_size=4)), max_leaves=12)


@settings(max_examples=300, deadline=None, derandomize=True)
@given(TEXT)
def test_every_string_reads_back_unchanged(text):
    # DEL and the C0 controls must be escaped (TOML 1.0, "String"); tomllib refuses them raw.
    assert tomllib.loads(f"k = {toml_string(text)}")["k"] == text


@settings(max_examples=200, deadline=None, derandomize=True)
@given(TEXT.filter(bool), VALUES)
def test_keys_and_nested_values_read_back_unchanged(key, value):
    assert tomllib.loads(f"{toml_key(key)} = {toml_value(value)}")[key] == value


def test_special_floats_use_the_toml_spellings():
    # TOML 1.0 spells them inf, -inf, nan.
    doc = tomllib.loads(f"a = {toml_value(math.inf)}\nb = {toml_value(-math.inf)}\nc = {toml_value(math.nan)}")
    assert doc["a"] == math.inf and doc["b"] == -math.inf and math.isnan(doc["c"])
