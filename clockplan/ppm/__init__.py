"""Frequency accuracy: reference oscillator models, ppm propagation, yield and grade advice.

Pure library code for the board-level analysis. Errors are fractional
(1 ppm = 1e-6); exact inputs stay exact (a 0 ppm synthesis error adds exactly
nothing). Budgets are planning estimates: the part datasheet and the
governing standard decide. See ``docs/frequency-accuracy.md``.
"""

from clockplan.ppm.accuracy import (
    OVEN_NOTE,
    PLANNING_NOTE,
    AccuracyResult,
    ConsumerBudget,
    Contribution,
    compose,
    consumer_accuracy,
    reference_contributions,
)
from clockplan.ppm.aging import SECONDS_PER_YEAR, AgingLinear, AgingLog
from clockplan.ppm.crystal_load import (
    CapacitorChoice,
    CrystalLoad,
    load_resonance_offset,
    nearest_load_capacitors,
    pulling,
    series_load,
    trim_sensitivity,
)
from clockplan.ppm.grades import DEFAULT_MARGIN, Grade, GradeAdvice, advise_grade, applicable_grades, load_grades
from clockplan.ppm.montecarlo import ConsumerChain, MonteCarloResult, monte_carlo_yield
from clockplan.ppm.oscillator import OSCILLATOR_KINDS, OscillatorPower, OscillatorSpec, supply_power, trim_range
from clockplan.ppm.parse import (
    parse_consumer_budget,
    parse_oscillator_spec,
    parse_spread,
    parse_spread_allowance,
    parse_temperature_range,
)
from clockplan.ppm.spread import SpreadAllowance, SpreadSpectrum, spread_fits
from clockplan.ppm.temperature import AtCutCurve, PointTable, StabilityBand, TuningForkCurve

__all__ = [
    "OVEN_NOTE",
    "PLANNING_NOTE",
    "AccuracyResult",
    "ConsumerBudget",
    "Contribution",
    "compose",
    "consumer_accuracy",
    "reference_contributions",
    "SECONDS_PER_YEAR",
    "AgingLinear",
    "AgingLog",
    "CapacitorChoice",
    "CrystalLoad",
    "load_resonance_offset",
    "nearest_load_capacitors",
    "pulling",
    "series_load",
    "trim_sensitivity",
    "DEFAULT_MARGIN",
    "Grade",
    "GradeAdvice",
    "advise_grade",
    "applicable_grades",
    "load_grades",
    "ConsumerChain",
    "MonteCarloResult",
    "monte_carlo_yield",
    "OSCILLATOR_KINDS",
    "OscillatorPower",
    "OscillatorSpec",
    "supply_power",
    "trim_range",
    "parse_consumer_budget",
    "parse_oscillator_spec",
    "parse_spread",
    "parse_spread_allowance",
    "parse_temperature_range",
    "SpreadAllowance",
    "SpreadSpectrum",
    "spread_fits",
    "AtCutCurve",
    "PointTable",
    "StabilityBand",
    "TuningForkCurve",
]
