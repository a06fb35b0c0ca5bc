"""The parts library: shipped templates, user files, restriction, located errors."""

from __future__ import annotations

import math
from fractions import Fraction
from importlib import resources

import pytest

from clockplan.errors import BoardError
from clockplan.ppm.grades import load_grades
from clockplan.synth.library import default_library, load_library, parse_library
from clockplan.units import parse_dbc

_EXTRA = """
[[buffer]]
name = "fanout-4"
label = "replacement"
outputs = 6
additive_jitter = "70 fs"
power = "0.1 W"
cost = 1

[[buffer]]
name = "fanout-16"
outputs = 16
power = "0.4 W"
cost = 3
"""


def test_shipped_library_says_its_figures_are_typical():
    text = resources.files("clockplan").joinpath("data/parts_library.toml").read_text(encoding="utf-8")
    assert "TYPICAL FIGURES, COMMON PRACTICE" in text and "not any maker's\n# data" in text
    library = default_library()
    assert library.oscillators and library.plls and library.dividers and library.buffers
    for template in library.plls + library.buffers + library.dividers:
        assert template.power_w > 0 and template.cost > 0


def test_grade_templates_take_the_grade_tables_figures():
    grades = {g.name: g for g in load_grades()}
    for name in ("xo", "tcxo", "ocxo"):
        template = default_library().oscillator(name)
        assert template.spec.initial == grades[name].spec.initial
        assert template.power_w == Fraction(grades[name].spec.power.steady_w)


@pytest.mark.parametrize("hz", [Fraction(50_000_000), Fraction(10_000_000), Fraction(12_288_000)])
def test_phase_noise_scales_by_20_log_n(hz):
    # A clock N times faster from the same resonator technology: phase noise up by 20 log10 N
    # (the 20 log N rule, common practice).
    template = default_library().oscillator("xo")
    base = template.phase_noise_points(template.phase_noise_at)
    scaled = template.phase_noise_points(hz)
    shift = 20 * math.log10(hz / template.phase_noise_at)
    for (offset, level), (offset2, level2) in zip(base, scaled):
        assert offset == offset2
        assert level2 == pytest.approx(level + shift, abs=0.006)


def test_user_library_adds_and_replaces(tmp_path):
    path = tmp_path / "mine.toml"
    path.write_text(_EXTRA, encoding="utf-8")
    merged = default_library().merged(load_library(path))
    names = merged.names()
    assert names.count("fanout-4") == 1 and "fanout-16" in names
    replaced = next(b for b in merged.buffers if b.name == "fanout-4")
    assert replaced.outputs == 6 and replaced.label == "replacement"
    assert replaced.additive_jitter.seconds == pytest.approx(70e-15)


def test_restriction_keeps_only_the_named_templates():
    library = default_library().restricted(["xo", "int-synth-4", "fanout-4"])
    assert library.names() == ["xo", "int-synth-4", "fanout-4"]
    assert library.divider is None


def test_restriction_names_an_unknown_template():
    with pytest.raises(BoardError) as err:
        default_library().restricted(["xo", "fanout4"])
    assert "fanout4" in err.value.message and "fanout-4" in err.value.hint


@pytest.mark.parametrize(
    "text, key, words",
    [
        ('[[pll]]\nname = "p"\nmode = "integer"\nvco = ["2 GHz", "1 GHz"]\npfd = ["1 MHz", "50 MHz"]\nn = [8, 100]\n'
         'outputs = 2\noutput_divider = [1, 8]\npower = "1 W"\ncost = 1\n', "pll[0].vco", "backwards"),
        ('[[buffer]]\nname = "b"\noutputs = 4\npower = "1 W"\ncost = 1\nadditive_jiter = "1 ps"\n', "buffer[0].additive_jiter", "unknown key"),
        ('[[divider]]\nname = "d"\nratio = [1, 8]\npower = "-1 W"\ncost = 1\n', "divider[0].power", "negative"),
        ('[[oscillator]]\nname = "o"\ngrade = "xo"\ntolerance = "1 ppm"\nfrequencies = ["10 MHz"]\ncost = 1\n', "oscillator[0].tolerance", "both"),
        ('[[switch]]\nname = "s"\n', "switch", "unknown section"),
    ],
)
def test_bad_library_entries_are_located(text, key, words):
    with pytest.raises(BoardError) as err:
        parse_library(text, "mine.toml")
    assert err.value.key == key and words in err.value.message and err.value.file == "mine.toml"
    assert err.value.line is not None or "[" not in key


def test_two_templates_with_one_name_are_refused():
    text = '[[buffer]]\nname = "b"\noutputs = 2\npower = "1 W"\ncost = 1\n' * 2
    with pytest.raises(BoardError, match="two part templates"):
        parse_library(text)


def test_template_levels_read_as_the_board_file_reads_them():
    # The same unit parser as a board's phase_noise: "-138 dBc/Hz" and -138 are one level.
    assert parse_dbc("-138 dBc/Hz") == parse_dbc(-138) == -138.0
