"""Merging a board consumer's inline fields over its standard, and inline derived budgets."""

from __future__ import annotations

from fractions import Fraction as F

import pytest

from clockplan.errors import BoardError, InfeasibleError
from clockplan.standards import get_standard, resolve_budget
from clockplan.standards.derived import can_oscillator_tolerance, uart_baud_error, uart_tolerance

PPM = F(1, 10**6)


def test_standard_alone_is_the_table_entry():
    assert resolve_budget("PCIe Gen4 reference", {"name": "ssd", "frequency": "100 MHz"}, "consumer[0]") == get_standard(
        "pcie-gen4"
    )


def test_override_replaces_only_the_given_fields():
    budget = resolve_budget("pcie-gen4", {"ppm": "±100 ppm", "jitter_band": ["12 kHz", "20 MHz"]}, "consumer[1]")
    base = get_standard("pcie-gen4")
    assert budget.ppm == (-100 * PPM, 100 * PPM)
    assert budget.jitter_band_hz == (F(12_000), F(20_000_000))
    assert (budget.spread, budget.jitter_rms_s) == (base.spread, base.jitter_rms_s)
    assert budget.overridden == ("jitter_band", "ppm")
    assert "board overrides" in budget.source and "consumer[1]" in budget.source


def test_tighter_override_is_not_flagged_but_looser_one_is():
    tighter = resolve_budget("1000base-t", {"ppm": "±50 ppm", "jitter": "1 ps"}, "consumer[2]")
    assert "may not comply" not in tighter.notes
    looser = resolve_budget("1000base-t", {"ppm": "±200 ppm"}, "consumer[2]")
    assert "loosens ppm" in looser.notes and "may not comply" in looser.notes


def test_spread_can_be_switched_off():
    budget = resolve_budget("sata", {"spread": False}, "consumer[0]")
    assert budget.spread is None
    assert budget.frequency_error_range() == (-350 * PPM, 350 * PPM)


def test_inline_budget_without_standard():
    budget = resolve_budget(None, {"ppm": "-50..+30 ppm", "jitter": "300 fs", "jitter_band": ["12 kHz", "20 MHz"]},
                            "consumer[5]")
    assert budget.key == "inline" and budget.confidence == "board"
    assert budget.ppm == (-50 * PPM, 30 * PPM)
    assert budget.jitter_rms_s == pytest.approx(300e-15)
    assert "consumer[5]" in budget.source


def test_no_standard_and_no_fields_means_no_budget():
    assert resolve_budget(None, {"name": "led", "frequency": "1 kHz"}, "consumer[0]") is None


def test_inline_can_bit_timing():
    # Hartwich and Bassemir's worked example (iCC 1999) again, written in a board.
    table = {"can": {"prop_seg": 1, "phase_seg1": 4, "phase_seg2": 4, "sjw": 4}}
    budget = resolve_budget(None, table, "consumer[0]")
    assert budget.ppm == (-F(1, 63), F(1, 63)) == (-can_oscillator_tolerance(1, 4, 4, 4), can_oscillator_tolerance(1, 4, 4, 4))


def test_inline_rtc_target_of_86_4_ms_a_day_is_one_ppm():
    budget = resolve_budget(None, {"rtc": {"drift": "86.4 ms", "per": "day"}}, "consumer[0]")
    assert budget.ppm == (-PPM, PPM)


def test_inline_uart_without_baud_gives_the_per_end_allowance():
    budget = resolve_budget(None, {"uart": {"frame": "8N1", "oversampling": 16}}, "consumer[0]")
    assert budget.ppm == (-uart_tolerance(10, 16), uart_tolerance(10, 16))


def test_inline_uart_with_baud_takes_the_divider_error_out_of_the_clock_range():
    consumer = {"frequency": "48 MHz", "uart": {"frame": "8N1", "oversampling": 16, "baud": 115200}}
    budget = resolve_budget(None, consumer, "consumer[4]")
    tolerance = uart_tolerance(10, 16)
    divider_error = uart_baud_error(F(48_000_000), 26, 16, 115200)
    # At either end of the clock range, clock error and divider error compound to exactly the allowance.
    assert (1 + budget.ppm[0]) * (1 + divider_error) - 1 == -tolerance
    assert (1 + budget.ppm[1]) * (1 + divider_error) - 1 == tolerance


def test_inline_uart_with_an_impossible_divider_is_infeasible():
    consumer = {"frequency": "16 MHz", "uart": {"frame": "8N1", "baud": 115200}}
    with pytest.raises(InfeasibleError) as info:
        resolve_budget(None, consumer, "consumer[4]")
    assert info.value.key == "consumer[4].uart.baud"


def test_inline_converter_gives_a_jitter_limit():
    budget = resolve_budget(None, {"converter": {"snr": "64.04 dB", "f_in": "100 MHz"}}, "consumer[0]")
    assert budget.jitter_rms_s == pytest.approx(1e-12, rel=1e-3)


@pytest.mark.parametrize(
    ("standard", "fields", "key"),
    [
        (None, {"ppm": "20"}, "consumer[7].ppm"),
        (None, {"ppm": "±20 pmp"}, "consumer[7].ppm"),
        (None, {"jitter": "fast"}, "consumer[7].jitter"),
        (None, {"jitter_band": ["20 MHz", "12 kHz"]}, "consumer[7].jitter_band"),
        (None, {"jitter_band": ["12 kHz"]}, "consumer[7].jitter_band"),
        (None, {"spread_rate": ["30 kHz", "33 kilohertz"]}, "consumer[7].spread_rate[1]"),
        (None, {"uart": {"frmae": "8N1"}}, "consumer[7].uart.frmae"),
        (None, {"uart": {"frame": "8X1"}}, "consumer[7].uart.frame"),
        (None, {"uart": "8N1"}, "consumer[7].uart"),
        (None, {"can": {"prop_seg": 1, "phase_seg1": 2, "phase_seg2": 2, "sjw": 3}}, "consumer[7].can.sjw"),
        (None, {"can": {"prop_seg": 1, "phase_seg1": 4, "sjw": 4}}, "consumer[7].can"),
        (None, {"rtc": {"drift": "1 s", "per": "1 fortnight"}}, "consumer[7].rtc.per"),
        (None, {"ppm": "±1 ppm", "rtc": {"drift": "1 s"}}, "consumer[7].rtc"),
        (None, {"jitter": "1 ps", "converter": {"snr": "70 dB", "f_in": "1 MHz"}}, "consumer[7].converter"),
        ("pcie-gen44", {}, "consumer[7].standard"),
        (42, {}, "consumer[7].standard"),
    ],
)
def test_bad_values_raise_board_error_with_the_key_path(standard, fields, key):
    with pytest.raises(BoardError) as info:
        resolve_budget(standard, fields, "consumer[7]")
    assert info.value.key == key


def test_consumer_must_be_a_table():
    with pytest.raises(BoardError):
        resolve_budget("sata", ["ppm"], "consumer[0]")  # type: ignore[arg-type]
