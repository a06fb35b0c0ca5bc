"""Reading consumer-list boards: what synthesis takes, what it refuses, and that load_board is unchanged."""

from __future__ import annotations

from fractions import Fraction

import pytest

from clockplan.boardfile import load_board, parse_board
from clockplan.errors import BoardError
from clockplan.synth.input import PENDING_SOURCE, load_consumer_list, parse_consumer_list

_HEAD = '[board]\nname = "t"\n'


def test_demo_consumer_list_reads_with_resolved_budgets():
    spec = load_consumer_list("boards/synthesis/consumer-list.toml")
    assert len(spec.consumers) == 16
    assert all(c.source == PENDING_SOURCE for c in spec.consumers)
    pcie = next(c for c in spec.consumers if c.id == "pcie_nvme")
    # PCI Express Base Specification refclk: ±300 ppm (the standards table's entry).
    assert pcie.budget.ppm == (Fraction(-300, 10**6), Fraction(300, 10**6))
    assert spec.settings.alternatives == 2 and spec.settings.time_limit_s == 30.0
    assert spec.raw_consumers[0]["id"] == "sdi_rx"


def test_the_ordinary_loader_still_refuses_a_consumer_list():
    with pytest.raises(BoardError, match="synthesis"):
        load_board("boards/synthesis/consumer-list.toml")
    with pytest.raises(BoardError, match="source"):
        parse_board(_HEAD + '[[reference]]\nid = "r"\nfrequency = "25 MHz"\n[[consumer]]\nid = "a"\nfrequency = "25 MHz"\n')


@pytest.mark.parametrize(
    "text, key, words",
    [
        (_HEAD + '[[consumer]]\nid = "a"\nsource = "ref"\nfrequency = "25 MHz"\n', "consumer[0].source", "leaves the source"),
        (_HEAD + '[[pll]]\nid = "p"\n', "pll", "unknown section"),
        (_HEAD + '[[consumer]]\nid = "a"\nfrequency = "25 MHz"\n[[consumer]]\nid = "a"\nfrequency = "50 MHz"\n', "consumer[1].id", "duplicate"),
        (_HEAD + '[[reference]]\nid = "r1"\nfrequency = "25 MHz"\n[[reference]]\nid = "r2"\nfrequency = "27 MHz"\n'
         '[[consumer]]\nid = "a"\nfrequency = "25 MHz"\n', "reference[1]", "one fixed reference"),
        (_HEAD + '[synthesis]\nallow = "xo"\n[[consumer]]\nid = "a"\nfrequency = "25 MHz"\n', "synthesis.allow", "array"),
        (_HEAD + '[synthesis]\ntime_limit = 0\n[[consumer]]\nid = "a"\nfrequency = "25 MHz"\n', "synthesis.time_limit", "outside"),
        (_HEAD + '[[consumer]]\nid = "a"\nfrequency = "25 MHz"\nstandard = "PCIe Gen99"\n', "consumer[0].standard", "PCIe"),
    ],
)
def test_bad_consumer_lists_are_located(text, key, words):
    with pytest.raises(BoardError) as err:
        parse_consumer_list(text, "list.toml")
    assert err.value.key == key and err.value.file == "list.toml"
    assert words in err.value.message or words in (err.value.hint or "")


def test_a_pll_section_points_to_the_library():
    with pytest.raises(BoardError) as err:
        parse_consumer_list(_HEAD + '[[pll]]\nid = "p"\n')
    assert "library" in err.value.hint


def test_an_empty_list_is_refused():
    with pytest.raises(BoardError, match="no consumer"):
        parse_consumer_list(_HEAD)


def test_a_fixed_reference_is_kept_with_its_table():
    text = _HEAD + '[[reference]]\nid = "main"\nfrequency = "27 MHz"\nkind = "tcxo"\n[[consumer]]\nid = "pix"\nfrequency = "74.25 MHz"\n'
    spec = parse_consumer_list(text)
    assert spec.fixed_reference.id == "main" and spec.fixed_reference.frequency == 27_000_000
    assert spec.raw_reference == {"id": "main", "frequency": "27 MHz", "kind": "tcxo"}
