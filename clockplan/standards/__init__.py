"""Clock requirements of interfaces: a shipped table of standards and budgets derived from the design.

* :func:`get_standard` looks an interface up by key or alias
  (``"PCIe Gen4 reference"``), :func:`find_standards` filters the table.
* :func:`resolve_budget` merges a board consumer's inline fields over its
  standard (or builds a budget from inline fields alone).
* :mod:`clockplan.standards.derived` computes UART, CAN, RTC and converter budgets.
* :mod:`clockplan.standards.render` draws the table for the command line (imports rich).

Importing this package reads nothing: the table is loaded on first use.
"""

from clockplan.standards.derived import (
    can_oscillator_tolerance,
    converter_jitter_for_snr,
    rtc_drift_for_ppm,
    rtc_ppm_for_drift,
    snr_for_jitter,
    uart_baud_error,
    uart_best_divider,
    uart_frame_bits,
    uart_tolerance,
)
from clockplan.standards.model import CONFIDENCE_LEVELS, StandardBudget
from clockplan.standards.resolve import BUDGET_FIELDS, resolve_budget
from clockplan.standards.table import all_standards, find_standards, get_standard, standard_keys

__all__ = [
    "BUDGET_FIELDS",
    "CONFIDENCE_LEVELS",
    "StandardBudget",
    "all_standards",
    "can_oscillator_tolerance",
    "converter_jitter_for_snr",
    "find_standards",
    "get_standard",
    "resolve_budget",
    "rtc_drift_for_ppm",
    "rtc_ppm_for_drift",
    "snr_for_jitter",
    "standard_keys",
    "uart_baud_error",
    "uart_best_divider",
    "uart_frame_bits",
    "uart_tolerance",
]
