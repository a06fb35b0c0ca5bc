"""Grade advice that fits the part: the reference's frequency and the consumer's kind (issue 14, item 7).

Facts of the trade used here, common practice (quoted from memory, no
governing document): a 32.768 kHz real-time clock runs from a tuning-fork
watch crystal (about -0.034 ppm/°C² from 25 °C) or a kHz temperature-
compensated oscillator, on microwatts, often from a backup battery; oven
oscillators are megahertz parts that draw watts; AT-cut crystals, XOs and
TCXOs are megahertz parts. The RTC budget comes from the timekeeping target:
a drift d per day is d / 86400 s of fractional error (1 ppm is 86.4 ms a day).
"""

import json
from fractions import Fraction

import pytest

from clockplan.analysis import analyze
from clockplan.boardfile import parse_board
from clockplan.cli import main
from clockplan.ppm.grades import ALWAYS_ON_BELOW_HZ, advise_grade, applicable_grades, load_grades

RTC_BOARD = '''
[board]
name = "rtc test"
temperature = ["-40 C", "85 C"]
lifetime = "10 years"

[[reference]]
id = "xtal32k"
frequency = "32.768 kHz"
kind = "crystal"
tolerance = "±20 ppm"
temperature_curve = {{ model = "tuning-fork" }}
aging = {{ first_year = "±3 ppm", per_year = "±1 ppm" }}

[[consumer]]
id = "rtc"
source = "xtal32k"
frequency = "32.768 kHz"
rtc = {{ drift = "{drift}", per = "day" }}
'''


def _advice(text: str):
    analysis = analyze(parse_board(text))
    return analysis, analysis.extras["references"].references[0]


def _said(advice) -> str:
    """What the advice proposes and quotes: its text and every grade it lists (label, figures, power)."""
    fields = advice.json_fields()
    return json.dumps([fields["advice_text"], fields["advice_label"], fields["grades"]], ensure_ascii=False)


def test_a_tight_rtc_is_never_offered_an_oven():
    # 0.2 s a day is ±2.3 ppm: before, the ladder climbed to the OCXO (±0.3 ppm, 8.4 W warming).
    analysis, advice = _advice(RTC_BOARD.format(drift="0.2 s"))
    assert [g.name for g in advice.grades] == ["lf-rc", "watch-crystal", "rtc-tcxo"]
    assert advice.advice.grade is None and advice.verdict == "no grade fits"
    said = _said(advice)
    assert "OCXO" not in said and "oven" not in said.lower() and " W" not in said and "mW" not in said
    assert all(grade["power"]["steady_w"] <= 5e-6 for grade in advice.json_fields()["grades"])
    finding = next(f for f in analysis.findings if f.code == "ppm-budget")
    assert "OCXO" not in finding.message and "real-time-clock TCXO" in finding.message


def test_a_loose_rtc_gets_microwatt_figures_not_a_megahertz_tcxo():
    # 2 s a day is ±23.15 ppm: the watch crystal's 20 + 143.65 + 12 ppm misses it; the kHz TCXO's
    # 3 + 3 + (1 + 9 x 1) = 16 ppm keeps 7.15 ppm (31 %), more than the 20 % margin. Before, the megahertz
    # TCXO (6 mW) was advised.
    _, advice = _advice(RTC_BOARD.format(drift="2 s"))
    assert advice.advice.grade.name == "rtc-tcxo"
    text = advice.advice.text
    assert "5 µW" in text and "mW" not in text and "6 mW" not in _said(advice)
    assert dict(advice.advice.tried) == {"lf-rc": False, "watch-crystal": False, "rtc-tcxo": True}


def test_a_kilohertz_consumer_on_a_megahertz_reference_gets_no_oven():
    # A 25 MHz XO divided by 800 to 31.25 kHz for a timekeeping counter held to 0.1 s a day (±1.16 ppm):
    # the megahertz ladder reaches the oven, which is left out for an always-on kHz clock.
    text = '''
[board]
name = "divided rtc"
temperature = ["-40 C", "85 C"]

[[reference]]
id = "ref"
frequency = "25 MHz"
kind = "xo"
tolerance = "±20 ppm"
stability = "±25 ppm"
stability_range = "-40..85 C"

[[divider]]
id = "div"
input = "ref"
ratio = [1, 1024]
settings = { ratio = 800 }

[[consumer]]
id = "tick"
source = "div"
frequency = "31.25 kHz"
rtc = { drift = "0.1 s", per = "day" }
'''
    _, advice = _advice(text)
    assert [g.name for g in advice.grades] == ["rc", "xo", "tcxo"]
    assert advice.advice.grade is None
    assert any("no oven advised: tick is an always-on kHz clock" in note for note in advice.notes)
    # The same board with a megahertz consumer on the same budget is offered the oven (it fits: 0.31 ppm).
    mhz = text.replace('settings = { ratio = 800 }', 'settings = { ratio = 1 }').replace('frequency = "31.25 kHz"', 'frequency = "25 MHz"')
    mhz = mhz.replace('rtc = { drift = "0.1 s", per = "day" }', 'ppm = "±1.157 ppm"')
    assert _advice(mhz)[1].advice.grade.name == "ocxo"


def test_an_rtc_standard_counts_as_always_on_whatever_its_frequency():
    text = '''
[board]
name = "rtc standard"

[[reference]]
id = "ref"
frequency = "25 MHz"
kind = "xo"
tolerance = "±20 ppm"

[[consumer]]
id = "clock"
source = "ref"
frequency = "25 MHz"
standard = "RTC"
ppm = "±1 ppm"
'''
    _, advice = _advice(text)
    assert "ocxo" not in [g.name for g in advice.grades]
    # A budget derived from a timekeeping target is a real-time clock too, at any frequency.
    derived = text.replace('standard = "RTC"\nppm = "±1 ppm"', 'rtc = { drift = "0.1 s", per = "day" }')
    assert 'rtc = {' in derived
    assert "ocxo" not in [g.name for g in _advice(derived)[1].grades]
    # The same budget written as a plain ppm figure on a megahertz consumer is not: the oven is offered.
    plain = text.replace('standard = "RTC"\nppm = "±1 ppm"', 'ppm = "±1 ppm"')
    assert "ocxo" in [g.name for g in _advice(plain)[1].grades]


def test_a_kilohertz_crystal_without_data_is_assumed_a_watch_crystal():
    # Before, a 32.768 kHz crystal without figures took the megahertz XO's ±20 ppm + ±25 ppm band (57 ppm
    # over ten years) and passed ±100 ppm; a tuning fork is -143.65 ppm at -40 °C on top of its ±20 ppm.
    text = RTC_BOARD.format(drift="2 s").replace(
        'tolerance = "±20 ppm"\ntemperature_curve = { model = "tuning-fork" }\naging = { first_year = "±3 ppm", per_year = "±1 ppm" }\n', "")
    text = text.replace('rtc = { drift = "2 s", per = "day" }', 'ppm = "±100 ppm"')
    analysis = analyze(parse_board(text))
    rtc = analysis.consumer("rtc").accuracy
    assert rtc.basis == "typical-grade"
    # -20 ppm initial, -0.034 x 65² = -143.65 ppm at -40 °C, -12 ppm of aging (3 + 9 x 1): -175.65 ppm.
    assert float(rtc.result.worst_case) == pytest.approx(-175.65e-6, rel=1e-9)
    assert rtc.passes is False
    assert any(f.code == "ppm-assumed" and "32.768 kHz tuning-fork crystal" in f.message for f in analysis.findings)


@pytest.mark.parametrize("hz, names", [
    (Fraction(10_000), ["lf-rc", "watch-crystal"]),         # the low end of both ranges, inclusive
    (Fraction(200_000), ["lf-rc", "watch-crystal"]),        # the watch crystal's top, inclusive
    (Fraction(200_001), ["lf-rc"]),
    (Fraction(1_000_000), ["lf-rc", "rc", "xo", "tcxo"]),   # 1 MHz: both RC grades, no oven yet
    (Fraction(5_000_000), ["rc", "xo", "tcxo", "ocxo"]),    # the oven's low end, inclusive
    (Fraction(130_000_000), ["rc", "xo", "ocxo"]),          # above the TCXO's 100 MHz, the oven's top
    (Fraction(500_000_000), []),                            # nothing commonly made there
])
def test_grades_are_offered_at_their_frequency_range_ends(hz, names):
    assert [g.name for g in applicable_grades(load_grades(), hz)[0]] == names


def test_no_grade_made_at_the_frequency_says_so():
    consumer_text = RTC_BOARD.format(drift="2 s").replace('"32.768 kHz"', '"500 MHz"').replace(
        'temperature_curve = { model = "tuning-fork" }\n', "")
    _, advice = _advice(consumer_text)
    assert advice.grades == () and advice.verdict == "no grade fits"
    assert "commonly made" in advice.advice.text


@pytest.mark.parametrize("hz, always_on", [(ALWAYS_ON_BELOW_HZ - 1, True), (ALWAYS_ON_BELOW_HZ, False)])
def test_the_always_on_threshold_is_one_megahertz(hz, always_on):
    from clockplan.parts import Consumer
    from clockplan.ppm.stage import _always_on

    assert _always_on(Consumer("c", "ref", Fraction(hz))) is always_on


def test_advise_grade_with_a_frequency_tries_only_the_grades_made_there():
    from clockplan.ppm.accuracy import ConsumerBudget
    from clockplan.ppm.montecarlo import ConsumerChain
    from clockplan.units import parse_ppm

    tight = ConsumerChain(0, Fraction(0), ConsumerBudget(parse_ppm("±2 ppm")))
    advice = advise_grade(0, [tight], (-40, 85), 0.0, frequency_hz=Fraction(32_768))
    assert [name for name, _ in advice.tried] == ["lf-rc", "watch-crystal", "rtc-tcxo"] and advice.grade is None


def test_the_terminal_advice_table_names_what_was_left_out(tmp_path, capsys):
    path = tmp_path / "rtc.toml"
    path.write_text(RTC_BOARD.format(drift="2 s"), encoding="utf-8")
    main(["audit", str(path), "--no-color", "--width", "250"])
    out = capsys.readouterr().out
    advice = out[out.index("Reference advice"):]
    assert "real-time-clock TCXO" in advice and "left out: ocxo" in advice and "OCXO" not in advice


@pytest.mark.parametrize("hz, note", [
    (Fraction(25_000_000), None),                   # the whole megahertz ladder: nothing worth saying
    (Fraction(4_000_000), "left out: ocxo"),        # below the oven's 5 MHz: the top rung is missing
    (Fraction(32_768), "left out: ocxo"),
    (Fraction(500_000_000), "no grade in the table is commonly made at 500 MHz"),
])
def test_the_advice_notes_a_frequency_only_where_it_changes_the_ladder(hz, note):
    _, notes = applicable_grades(load_grades(), hz)
    assert notes == (() if note is None else (notes[0],)) and (note is None or note in notes[0])
