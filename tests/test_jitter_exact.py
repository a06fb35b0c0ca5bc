"""The board's jitter integral is exact, and phase noise outside the listed offsets is read and flagged.

References outside the code under test:

- the exact integral of a piecewise power-law profile is ``rms_jitter`` (itself
  checked against published worked examples and closed forms in
  ``test_jitter_integrate.py``);
- ``scipy.integrate.quad`` (adaptive Gauss-Kronrod quadrature) with the
  breakpoints given, on shaped densities written out here from their
  definitions: ``|H|**2`` and ``|1 - H|**2`` from ``scipy.signal.freqs`` of the
  loop's polynomials, the PLL floor ``FOM + 10 log10 f_PFD + 20 log10 N`` plus the
  flicker term ``FOM_1/f + 20 log10 f_VCO - 10 log10 f`` (common practice), and
  the MASH modulator noise ``(2 pi)**2 / (12 f_PFD) * (2 sin(pi f / f_PFD))**(2 (m - 1))``
  (the textbook result, from memory);
- closed forms: ``integral of f**-2`` and ``f**-1``; and, for the type-II
  second-order loop with damping 1, ``|1 - H|**2 = x**4 / (1 + x**2)**2`` with
  ``x = f / f_n``, whose integrals against ``f**-2`` and ``f**0`` are
  ``(atan x - x / (1 + x**2)) / 2`` and ``x - 3/2 atan x + x / (2 (1 + x**2))``
  (partial fractions, checked by differentiation);
- a free-running oscillator's phase noise rises toward its carrier, at least
  20 dB/decade (white frequency noise) below its listed points (Leeson, "A
  simple model of feedback oscillator noise spectrum", Proc. IEEE, 1966).

The boards and profiles are invented test data.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import HealthCheck, assume, given, settings
from hypothesis import strategies as st

from clockplan.analysis import analyze
from clockplan.boardfile import parse_board
from clockplan.jitter import rms_jitter
from clockplan.jitter import stage as jitter_stage_module
from clockplan.jitter.chain import (
    REFINE_TOLERANCE,
    add_noise,
    combine,
    divide,
    log_grid,
    loop_corners_hz,
    refine_grid,
    source_chain,
    truncate,
)
from clockplan.jitter.integrate import integrate_log_curve
from clockplan.jitter.loop import second_order_loop
from clockplan.jitter.profile import PhaseNoiseProfile, interpolate_log

integrate = pytest.importorskip("scipy.integrate")
signal = pytest.importorskip("scipy.signal")


# --------------------------------------------------------------------------- helpers


def _points_text(points) -> str:
    return "[" + ", ".join(f"[{f!r}, {level!r}]" for f, level in points) + "]"


def _reference_board(points, carrier_hz, band, *, floor=None, divider=None) -> str:
    noise = _points_text(points)
    if floor is not None:
        noise = f"{{ points = {noise}, floor = {floor!r} }}"
    source = "ref"
    text = f"""
[board]
name = "exact test"
temperature = ["25 C", "25 C"]

[[reference]]
id = "ref"
frequency = {carrier_hz!r}
phase_noise = {noise}
"""
    frequency = carrier_hz
    if divider is not None:
        text += f"""
[[divider]]
id = "div"
input = "ref"
ratio = [1, 64]
settings = {{ ratio = {divider} }}
"""
        source, frequency = "div", carrier_hz / divider
    return text + f"""
[[consumer]]
id = "clk"
source = "{source}"
frequency = {frequency!r}
jitter = "1 ns"
jitter_band = [{band[0]!r}, {band[1]!r}]
"""


def _listed_density(points, floor=None):
    """L(f) from listed points, written out: straight in dB against log f between points;
    below the first point the first segment's slope, rising at least 20 dB/decade toward
    the carrier; beyond the last point held, or still rising (docs/jitter.md)."""
    logs = np.log10([p[0] for p in points])
    levels = np.array([p[1] for p in points], dtype=float)
    first = (levels[1] - levels[0]) / (logs[1] - logs[0]) if len(points) > 1 else 0.0
    last = (levels[-1] - levels[-2]) / (logs[-1] - logs[-2]) if len(points) > 1 else 0.0

    def density(f: float) -> float:
        x = math.log10(f)
        if x < logs[0]:
            level = levels[0] + min(first, -20.0) * (x - logs[0])
        elif x > logs[-1]:
            level = levels[-1] + max(last, 0.0) * (x - logs[-1])
        else:
            level = float(np.interp(x, logs, levels))
        if level > 100.0:  # far past any physical reading (and past a float's range soon after)
            return math.inf
        return 10 ** (level / 10) + (0.0 if floor is None else 10 ** (floor / 10))

    return density


def _quad_power(density, band, breakpoints) -> float:
    """Adaptive quadrature over ln f with every breakpoint inside the band given."""
    a, b = math.log(band[0]), math.log(band[1])
    points = sorted({math.log(p) for p in breakpoints if band[0] < p < band[1]})
    value, _ = integrate.quad(
        lambda u: density(math.exp(u)) * math.exp(u), a, b, points=points, limit=4000, epsabs=0, epsrel=1e-11
    )
    return value


def _seconds(power: float, carrier_hz: float) -> float:
    return math.sqrt(2 * power) / (2 * math.pi * carrier_hz)


# --------------------------------------------------------------------------- reference-only boards: exact


@st.composite
def _profiles(draw):
    count = draw(st.integers(1, 6))
    logs = sorted(set(round(x, 3) for x in draw(st.lists(st.floats(0.0, 9.6), min_size=count, max_size=count))))
    levels = [draw(st.floats(-185.0, -70.0)) for _ in logs]
    if draw(st.booleans()):
        # A narrow peak written as three points, between the decades of any fixed grid.
        center = draw(st.floats(0.3, 9.3))
        half = draw(st.floats(1e-4, 3e-3))
        height = draw(st.floats(10.0, 70.0))
        base = draw(st.floats(-180.0, -120.0))
        kept = [(x, v) for x, v in zip(logs, levels) if abs(x - center) > 2 * half]
        kept += [(center - half, base), (center, base + height), (center + half, base)]
        kept.sort()
        logs, levels = [x for x, _ in kept], [v for _, v in kept]
    if draw(st.booleans()) and len(logs) >= 2:
        # A steep interior drop: two points a hundredth of a decade apart, tens of dB apart.
        i = draw(st.integers(0, len(logs) - 2))
        if logs[i + 1] - logs[i] > 0.02:
            logs.insert(i + 1, logs[i] + 0.01)
            levels.insert(i + 1, levels[i] - draw(st.floats(20.0, 60.0)))
    points = [(10.0**x, v) for x, v in zip(logs, levels)]
    floor = draw(st.none() | st.floats(-200.0, -150.0))
    return points, floor


@st.composite
def _bands(draw):
    low = 10.0 ** draw(st.floats(0.0, 8.5))
    high = low * 10.0 ** draw(st.floats(0.05, 10.0 - math.log10(low)))
    return low, min(high, 1e10)


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(_profiles(), _bands(), st.sampled_from([None, 4]))
def test_reference_only_board_equals_rms_jitter(profile, band, divider):
    # Reference: rms_jitter, the exact integral of the same listed profile, read past its
    # points the way the board reads it ("conservative").
    points, floor = profile
    assume(band[1] > band[0] * 1.001)
    # Keep the extension below 0 dBc/Hz: beyond it no reading is physical (and densities
    # are capped far above it so they stay finite).
    density = _listed_density(points, floor)
    assume(density(band[0]) < 1.0 and density(band[1]) < 1.0)
    carrier = 20e9
    board = parse_board(_reference_board(points, carrier, band, floor=floor, divider=divider))
    jitter = analyze(board).consumer("clk").jitter
    expected = rms_jitter(
        PhaseNoiseProfile.from_points(points, floor_dbc_hz=floor), carrier, *band, extrapolation="conservative"
    )
    assert jitter.rms_seconds == pytest.approx(expected, rel=1e-6)


def test_narrow_peak_between_grid_points_is_counted():
    # Regression: a peak 60 dB high and 0.008 decade wide, between two points of the
    # 50-per-decade grid the board used to sample every profile on (10**4 and 10**4.02).
    peak = [(1e3, -150.0), (10**4.006, -150.0), (10**4.01, -90.0), (10**4.014, -150.0), (1e7, -150.0)]
    band, carrier = (1e3, 1e7), 100e6
    exact = rms_jitter(peak, carrier, *band)
    without_peak = rms_jitter([(1e3, -150.0), (1e7, -150.0)], carrier, *band)
    assert exact**2 > 2 * without_peak**2  # the peak carries over half the noise
    # The old reading: the profile sampled on the fixed grid, power law between samples.
    grid = log_grid(1.0, 1e9)
    sampled = PhaseNoiseProfile.from_points(peak).density_at(grid)
    old_power = float(integrate_log_curve(np.log(grid), np.log(sampled), *band))
    old = _seconds(old_power, carrier)
    peak_variance = exact**2 - without_peak**2
    assert old**2 - without_peak**2 < 0.1 * peak_variance  # it lost over 90 % of the peak
    board = parse_board(_reference_board(peak, carrier, band))
    assert analyze(board).consumer("clk").jitter.rms_seconds == pytest.approx(exact, rel=1e-9)


# --------------------------------------------------------------------------- through PLL shaping: quadrature

PLL_BOARD = """
[board]
name = "shaped test"
temperature = ["25 C", "25 C"]

[[reference]]
id = "ref"
frequency = "25 MHz"
phase_noise = {{ points = [[10, -88], [100, -118], [1000, -138], [10000, -150], [100000, -154], [1000000, -156]], floor = -165 }}

[[pll]]
id = "syn"
input = "ref"
vco = ["1 GHz", "4 GHz"]
pfd = ["1 MHz", "100 MHz"]
n = [8, 4095]
mode = "fractional"
max_denominator = 4194303
outputs.out = {{ divider = [1, 64] }}
settings = {{ r = 1, n = "{n}", outputs = {{ out = 1 }} }}
loop = {loop}
noise = {{ fom = -224, flicker_fom = -262, modulator_order = 3, vco_phase_noise = {{ points = [[10000, -80], [100000, -106], [1000000, -130], [10000000, -150]], floor = -158 }} }}

[[consumer]]
id = "clk"
source = "syn.out"
frequency = "{f_out}"
jitter = "1 ns"
jitter_band = [{low!r}, {high!r}]
"""

REF_POINTS = [(10, -88), (100, -118), (1e3, -138), (1e4, -150), (1e5, -154), (1e6, -156)]
VCO_POINTS = [(1e4, -80), (1e5, -106), (1e6, -130), (1e7, -150)]
THIRD_ORDER = (
    "{ open_loop_numerator = [2.26e10, 1.42e15], open_loop_denominator = [5.3e-7, 1.0, 0.0, 0.0] }"
)


def _power(num, den, f_hz: float) -> float:
    _, h = signal.freqs(num, den, worN=[2 * math.pi * f_hz])
    return float(abs(h[0]) ** 2)


@pytest.mark.parametrize(
    ("loop", "band"),
    [
        ('{ bandwidth = "100 kHz", damping = 0.707 }', (12e3, 20e6)),
        ('{ bandwidth = "100 kHz", damping = 0.707 }', (10.0, 6.144e6)),
        ('{ bandwidth = "2 kHz", damping = 0.3 }', (1e3, 60e6)),  # a peaking loop, band past f_PFD / 2
        (THIRD_ORDER, (12e3, 20e6)),
    ],
)
def test_shaped_contributors_match_adaptive_quadrature(loop, band):
    n = "72.25"
    f_vco = 25e6 * 72.25
    text = PLL_BOARD.format(n=n, loop=loop, f_out=f"{f_vco!r} Hz", low=band[0], high=band[1])
    board = parse_board(text)
    jitter = analyze(board).consumer("clk").jitter
    response = board.part("syn").loop
    closed = (response.open_num, np.polyadd(response.open_num, response.open_den))
    error = (response.open_den, np.polyadd(response.open_num, response.open_den))
    reference, vco = _listed_density(REF_POINTS, -165), _listed_density(VCO_POINTS, -158)
    f_pfd, m = 25e6, 72.25
    floor = 10 ** ((-224 + 10 * math.log10(f_pfd) + 20 * math.log10(m)) / 10)

    def in_band(f):
        return floor + 10 ** ((-262 + 20 * math.log10(f_vco) - 10 * math.log10(f)) / 10)

    def modulator(f):
        return (2 * math.pi) ** 2 / (12 * f_pfd) * (2 * math.sin(math.pi * f / f_pfd)) ** 4

    densities = {
        "ref reference": lambda f: reference(f) * m**2 * _power(*closed, f),
        "syn floor": lambda f: in_band(f) * _power(*closed, f),
        "syn modulator": lambda f: modulator(f) * _power(*closed, f),
        "syn VCO": lambda f: vco(f) * _power(*error, f),
    }
    corners = list(loop_corners_hz(response))
    breakpoints = [p for p, _ in REF_POINTS + VCO_POINTS] + corners + [k * f_pfd / 2 for k in range(1, 8)]
    total = 0.0
    seconds = dict(jitter.contributions())
    for name, density in densities.items():
        power = _quad_power(density, band, breakpoints)
        total += power
        if power > 1e-3 * (jitter.result.rms_phase_rad**2 / 2):  # each contributor that matters
            assert seconds[name] == pytest.approx(_seconds(power, f_vco), rel=1e-4), name
    assert jitter.rms_seconds == pytest.approx(_seconds(total, f_vco), rel=1e-4)


# --------------------------------------------------------------------------- outside the listed offsets


def _finding(analysis, code="jitter-extrapolated"):
    return [f for f in analysis.findings if f.code == code]


def test_below_the_first_point_the_first_slope_continues():
    # Closed form: a -20 dB/decade profile p1 (f/f1)**-2 integrates over [a, b] to
    # p1 f1**2 (1/a - 1/b); listed only from f1 = 10 kHz, the band starts at 1 kHz.
    points, band, carrier = [(1e4, -120.0), (1e5, -140.0)], (1e3, 1e5), 100e6
    p1, f1 = 1e-12, 1e4
    expected = _seconds(p1 * f1**2 * (1 / band[0] - 1 / band[1]), carrier)
    analysis = analyze(parse_board(_reference_board(points, carrier, band)))
    jitter = analysis.consumer("clk").jitter
    assert jitter.rms_seconds == pytest.approx(expected, rel=1e-9)
    # Held flat (the old reading) it would be p1 (f1 - a) below f1: far less.
    flat = _seconds(p1 * (f1 - band[0]) + p1 * f1**2 * (1 / f1 - 1 / band[1]), carrier)
    assert flat < 0.6 * expected
    (warning,) = _finding(analysis)
    assert warning.severity.value == "warning" and warning.node == "ref"
    assert "10 kHz to 100 kHz" in warning.message and "clk over 1 kHz..100 kHz" in warning.message


def test_a_shallow_first_segment_still_rises_20_db_per_decade_below_it():
    # -10 dB/decade listed (p1 (f/f1)**-1), extended at -20 dB/decade: closed form
    # p1 f1**2 (1/a - 1/f1) + p1 f1 ln(b / f1).
    points, band, carrier = [(1e4, -120.0), (1e5, -130.0)], (100.0, 1e5), 100e6
    p1, f1 = 1e-12, 1e4
    expected = _seconds(p1 * f1**2 * (1 / band[0] - 1 / f1) + p1 * f1 * math.log(band[1] / f1), carrier)
    jitter = analyze(parse_board(_reference_board(points, carrier, band))).consumer("clk").jitter
    assert jitter.rms_seconds == pytest.approx(expected, rel=1e-9)


def test_beyond_the_last_point_falling_noise_is_held_and_rising_noise_continues():
    carrier, band = 100e6, (1e4, 1e6)
    # Falling -10 dB/decade to 100 kHz, then held: p1 f1 ln(f2/f1) + p2 (b - f2).
    falling = [(1e4, -130.0), (1e5, -140.0)]
    held = 1e-13 * 1e4 * math.log(10) + 1e-14 * (1e6 - 1e5)
    jitter = analyze(parse_board(_reference_board(falling, carrier, band))).consumer("clk").jitter
    assert jitter.rms_seconds == pytest.approx(_seconds(held, carrier), rel=1e-9)
    # Rising +10 dB/decade to 100 kHz, and on: p1 (f/f1) integrates to p1 (b**2 - a**2) / (2 f1).
    rising = [(1e4, -140.0), (1e5, -130.0)]
    continued = 1e-14 * (1e6**2 - 1e4**2) / (2 * 1e4)
    jitter = analyze(parse_board(_reference_board(rising, carrier, band))).consumer("clk").jitter
    assert jitter.rms_seconds == pytest.approx(_seconds(continued, carrier), rel=1e-9)


VCO_BOARD = """
[board]
name = "vco listed from 1 MHz"
temperature = ["25 C", "25 C"]

[[reference]]
id = "ref"
frequency = "25 MHz"
phase_noise = [["1 Hz", -250]]

[[pll]]
id = "syn"
input = "ref"
vco = ["1 GHz", "4 GHz"]
pfd = ["1 MHz", "100 MHz"]
n = [8, 4095]
outputs.out = { divider = [1, 64] }
settings = { r = 1, n = 100, outputs = { out = 1 } }
loop = { bandwidth = "100 kHz", damping = 1.0 }
noise = { vco_phase_noise = [["1 MHz", -120], ["10 MHz", -140]] }

[[consumer]]
id = "clk"
source = "syn.out"
frequency = "2.5 GHz"
jitter = "1 ps"
jitter_band = ["12 kHz", "20 MHz"]
"""


def test_vco_listed_above_the_loop_bandwidth_keeps_its_noise_and_warns():
    # The VCO is -20 dB/decade listed, C f**-2 with C = 1e-12 * (1 MHz)**2, and below its
    # first point the conservative reading continues it. With damping 1 the VCO sees
    # |1 - H|**2 = x**4 / (1 + x**2)**2 (x = f / f_n), so its power has the closed form
    # (C / f_n) * [atan x - x / (1 + x**2)] / 2 between the band's x values.
    analysis = analyze(parse_board(VCO_BOARD))
    jitter = analysis.consumer("clk").jitter
    response = analysis.board.part("syn").loop
    f_n = math.sqrt(response.open_num[-1]) / (2 * math.pi)
    c = 1e-12 * 1e6**2
    x1, x2 = 12e3 / f_n, 20e6 / f_n

    def primitive(x):
        return (math.atan(x) - x / (1 + x * x)) / 2

    power = c / f_n * (primitive(x2) - primitive(x1))
    seconds = dict(jitter.contributions())["syn VCO"]
    assert seconds == pytest.approx(_seconds(power, 2.5e9), rel=1e-4)
    # Held flat below 1 MHz (the old reading) the VCO loses over half its noise: there
    # L = 1e-12 and the integral of x**4 / (1 + x**2)**2 is x - 3/2 atan x + x / (2 (1 + x**2)).
    def flat_primitive(x):
        return x - 1.5 * math.atan(x) + x / (2 * (1 + x * x))

    x0 = 1e6 / f_n
    flat = 1e-12 * f_n * (flat_primitive(x0) - flat_primitive(x1)) + c / f_n * (primitive(x2) - primitive(x0))
    assert flat < 0.5 * power
    (warning,) = _finding(analysis)
    assert warning.node == "syn" and "VCO" in warning.message
    assert "1 MHz to 10 MHz" in warning.message and "12 kHz..20 MHz" in warning.message


def test_no_warning_when_the_band_starts_on_the_first_point():
    # Boundary: a band edge on the first listed offset reads nothing outside the data.
    points, carrier = [(1e4, -120.0), (1e5, -140.0)], 100e6
    analysis = analyze(parse_board(_reference_board(points, carrier, (1e4, 1e5))))
    assert not _finding(analysis)
    analysis = analyze(parse_board(_reference_board(points, carrier, (9.99e3, 1e5))))
    assert not _finding(analysis)  # read outside, but far below 1 % of the variance


def test_the_warning_threshold_is_inclusive(monkeypatch):
    points, carrier, band = [(1e4, -120.0), (1e5, -140.0)], 100e6, (5e3, 1e5)
    board = parse_board(_reference_board(points, carrier, band))
    jitter = analyze(board).consumer("clk").jitter
    share = float(jitter.chain.extrapolated_power(*band)[0]) / (jitter.result.rms_phase_rad**2 / 2)
    monkeypatch.setattr(jitter_stage_module, "EXTRAPOLATED_SHARE", share)
    assert len(_finding(analyze(board))) == 1
    monkeypatch.setattr(jitter_stage_module, "EXTRAPOLATED_SHARE", share * (1 + 1e-9))
    assert not _finding(analyze(board))


# --------------------------------------------------------------------------- the machinery


def test_conservative_extension_by_hand():
    ln_f = np.log([1e3, 1e4, 1e5])
    ln_p = np.log([1e-10, 1e-13, 1e-14])  # -30 then -10 dB/decade
    at = np.log([10.0, 1e3, 3e4, 1e6])
    levels = 10 * np.log10(np.exp(interpolate_log(ln_f, ln_p, at, "conservative")))
    # -30 dB/decade continued two decades down (+60 dB); the last point held.
    assert levels.round(9).tolist() == [-40.0, -100.0, round(-130 - 10 * math.log10(3), 9), -140.0]
    single = interpolate_log(np.log([1e3]), np.log([1e-10]), np.log([1e1, 1e5]), "conservative")
    assert (10 * np.log10(np.exp(single))).round(9).tolist() == [-60.0, -100.0]
    # The API reads the same way on request: p1 f1**2 (1/a - 1/b) for a -20 dB/decade profile.
    seconds = rms_jitter([(1e4, -120), (1e5, -140)], 100e6, 1e3, 1e5, extrapolation="conservative")
    assert seconds == pytest.approx(_seconds(1e-12 * 1e8 * (1 / 1e3 - 1 / 1e5), 100e6), rel=1e-12)


def test_refine_grid_leaves_power_laws_and_resolves_bends():
    grid = log_grid(1.0, 1e6)
    assert refine_grid(grid, [lambda f: 7.0 / f**3]).size == grid.size
    bend = refine_grid(grid, [lambda f: 1.0 + (1e3 / f) ** 4])  # white floor meeting a -40 dB/decade curve
    assert bend.size > grid.size and np.isin(grid, bend).all()
    # Every cell of the refined grid reads the bend within the tolerance at its middle.
    u = np.log(bend)
    ln_p = np.log(1.0 + (1e3 / bend) ** 4)
    middle = np.log(1.0 + (1e3 / np.exp((u[1:] + u[:-1]) / 2)) ** 4)
    assert np.max(np.abs(middle - (ln_p[1:] + ln_p[:-1]) / 2)) <= REFINE_TOLERANCE


def test_refine_grid_stops_at_a_zero():
    # sin**2 has a zero at 1 MHz, on the grid: the cells beside it refine toward it and stop.
    band = (1e5, 1.9e6)
    grid = refine_grid(np.union1d(log_grid(*band), [1e6]), [lambda f: np.sin(np.pi * f / 1e6) ** 2])
    assert grid.size < 2000
    exact = integrate.quad(lambda f: math.sin(math.pi * f / 1e6) ** 2, *band, points=[1e6], limit=500)[0]
    ln_values = np.log(np.maximum(np.sin(np.pi * grid / 1e6) ** 2, 1e-300))
    assert float(integrate_log_curve(np.log(grid), ln_values, *band)) == pytest.approx(exact, rel=1e-4)


def test_truncate_and_combine_keep_every_integral():
    profile = PhaseNoiseProfile.from_points([(10, -90), (1e3, -130), (1e5, -150)], floor_dbc_hz=-160)
    chain = source_chain("a", profile, 1e8, log_grid(1.0, 1e8))
    short = truncate(chain, 3e6)
    assert short.offsets_hz[-1] == 3e6
    assert truncate(chain, 1e8) is chain and truncate(chain, 2e8) is chain  # at or past the end: unchanged
    np.testing.assert_allclose(short.band_power(12e3, 3e6), chain.band_power(12e3, 3e6), rtol=1e-12)
    other = source_chain("b", PhaseNoiseProfile.from_points([(2e4, -140), (2e5, -155)]), 1e8, log_grid(1.0, 1e8, 20))
    both = combine(chain, other)  # different grids, same span
    expected = chain.band_power(12e3, 20e6).sum() + other.band_power(12e3, 20e6).sum()
    assert both.band_power(12e3, 20e6).sum() == pytest.approx(expected, rel=1e-12)
    # Same-named contributors add up, and their sum is resolved on the grid.
    same = combine(chain, source_chain("a", PhaseNoiseProfile.flat(-140), 1e8, log_grid(1.0, 1e8)))
    added = chain.band_power(12e3, 20e6)[0] + 1e-14 * (20e6 - 12e3)
    assert same.band_power(12e3, 20e6)[0] == pytest.approx(added, rel=1e-12)


def test_add_noise_as_a_function_refines_and_divide_keeps_the_white_part():
    chain = source_chain("a", PhaseNoiseProfile.flat(-150), 1e8, log_grid(1.0, 1e8))
    bump = second_order_loop(1e5, damping=0.2)

    def density(f):
        return 1e-13 * bump.closed_loop_power(f)

    out = add_noise(chain, "bump", density)
    assert out.offsets_hz.size > chain.offsets_hz.size
    exact = integrate.quad(lambda f: float(density(np.array([f]))[0]), 1e3, 1e7, points=loop_corners_hz(bump), limit=500)[0]
    assert out.band_power(1e3, 1e7)[1] == pytest.approx(exact, rel=1e-4)
    divided = divide(out, 10, floor_dbc_hz=-170)
    assert divided.flat.tolist() == pytest.approx([1e-15 / 100, 0.0, 1e-17])
