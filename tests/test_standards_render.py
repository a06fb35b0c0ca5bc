"""The renderables behind ``clockplan standards``."""

from __future__ import annotations

from fractions import Fraction as F

import pytest
from rich.console import Console
from rich.panel import Panel
from rich.table import Table

from clockplan.errors import BoardError
from clockplan.standards import all_standards, resolve_budget
from clockplan.standards.render import (
    PLANNING_CAVEAT,
    format_error_range,
    standard_panel,
    standards_table,
    standards_view,
)


def _text(renderable) -> str:
    console = Console(width=220, record=True, color_system=None)
    console.print(renderable)
    return console.export_text()


def test_full_table_has_a_row_per_entry_and_the_caveat():
    table = standards_table()
    assert table.row_count == len(all_standards())
    text = _text(table)
    assert "pcie-gen4" in text and "±300 ppm" in text and PLANNING_CAVEAT in text


def test_table_filters_by_word():
    assert standards_table("pcie").row_count == 6
    assert standards_table("Bluetooth").row_count == 3


def test_filter_without_match_names_close_keys():
    with pytest.raises(BoardError) as info:
        standards_table("pcie gen 44")
    assert "pcie-gen4" in info.value.hint


def test_view_dispatches_key_to_panel_and_word_to_table():
    assert isinstance(standards_view(), Table)
    assert isinstance(standards_view("PCIe Gen4 reference"), Panel)
    assert isinstance(standards_view("ethernet"), Table)


def test_panel_shows_sources_confidence_and_rms_reading():
    text = _text(standards_view("pcie-gen1"))
    assert "PCI Express CEM 1.1" in text and "published" in text
    assert "86 ps p-p" in text and "as RMS" in text and "6.11 ps" in text


def test_panel_marks_board_overrides():
    budget = resolve_budget("sata", {"ppm": "±100 ppm"}, "consumer[3]")
    text = _text(standard_panel(budget))
    assert "±100 ppm  (board)" in text and "consumer[3]" in text


@pytest.mark.parametrize(
    ("error", "text"),
    [
        ((F(-3, 10**4), F(3, 10**4)), "±300 ppm"),
        ((F(-1, 200), F(0)), "-5000..0 ppm"),
        ((F(-1), F(0)), "-100..0 %"),
        ((F(-1, 10**7), F(1, 10**7)), "±0.1 ppm"),
        (None, "—"),
    ],
)
def test_error_range_text(error, text):
    assert format_error_range(error) == text
