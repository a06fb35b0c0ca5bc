"""Loop-filter design: the designed filter, put back into the loop, does what was asked.

References used here:
- scipy.signal (freqs, bode) evaluates the same transfer functions independently;
- a nodal analysis written here with numpy.linalg (circuit theory, common practice)
  checks the sympy-derived filter impedance;
- the closed-form design equations of Banerjee, *PLL Performance, Simulation,
  and Design* (chapter "Fundamental Loop Filter Design Equations"), transcribed
  from memory, reproduce the method on a worked example.
"""

from __future__ import annotations

import itertools
import math

import numpy as np
import pytest
from scipy import optimize, signal

from clockplan.errors import ClockplanError, InfeasibleError
from clockplan.eseries import series_tolerance
from clockplan.loopfilter.design import (
    FilterDesign,
    LoopSpec,
    design_filter,
    design_second_order,
    design_third_order,
    snap_design,
)
from clockplan.loopfilter.response import loop_margins, open_loop_polynomials

# Invented loops (demo data): charge pump A, Kvco Hz/V, N, PFD Hz.
LOOPS = [
    LoopSpec(2.5e-3, 30e6, 100, 25e6),
    LoopSpec(0.5e-3, 100e6, 4000, 1e6),
    LoopSpec(5e-3, 15e6, 48, 50e6),
]
TARGETS = [(20e3, 45.0), (100e3, 55.0), (50e3, 70.0)]  # bandwidth Hz, phase margin deg
CASES = [
    (spec, bw, pm, order, ratio)
    for spec, (bw, pm), (order, ratio) in itertools.product(LOOPS, TARGETS, [(2, 0.0), (3, 0.2), (3, 0.5), (3, 0.9)])
    if bw <= float(spec.f_pfd_hz) / 10
]


def _design(spec: LoopSpec, bw: float, pm: float, order: int, ratio: float) -> FilterDesign:
    if order == 2:
        return design_second_order(spec, bw, pm)
    return design_third_order(spec, bw, pm, pole_ratio=ratio)


@pytest.mark.parametrize(("spec", "bw", "pm", "order", "ratio"), CASES)
def test_designed_filter_crosses_0db_at_the_bandwidth_with_the_margin(spec, bw, pm, order, ratio) -> None:
    # scipy.signal.freqs evaluates G(s) at s = j*2*pi*bw independently of our code.
    design = _design(spec, bw, pm, order, ratio)
    num, den = open_loop_polynomials(design, spec)
    _, gain = signal.freqs(num, den, worN=[2 * math.pi * bw])
    assert abs(gain[0]) == pytest.approx(1.0, rel=1e-9)
    assert math.degrees(np.angle(-gain[0])) == pytest.approx(pm, abs=1e-7)


@pytest.mark.parametrize(("spec", "bw", "pm", "order", "ratio"), CASES[::3])
def test_crossover_found_by_scipy_bode_on_a_grid(spec, bw, pm, order, ratio) -> None:
    # scipy.signal.bode on a 1/2000-decade grid, 0 dB crossing interpolated linearly in log f.
    design = _design(spec, bw, pm, order, ratio)
    num, den = open_loop_polynomials(design, spec)
    w = 2 * math.pi * np.geomspace(bw / 10, bw * 10, 4001)
    _, mag_db, phase_deg = signal.bode((num, den), w=w)
    i = int(np.flatnonzero(mag_db < 0)[0])
    fraction = mag_db[i - 1] / (mag_db[i - 1] - mag_db[i])
    crossing = math.exp(math.log(w[i - 1]) + fraction * math.log(w[i] / w[i - 1])) / (2 * math.pi)
    margin = 180 + phase_deg[i - 1] + fraction * (phase_deg[i] - phase_deg[i - 1])
    assert crossing == pytest.approx(bw, rel=1e-5)
    assert margin == pytest.approx(pm, abs=1e-3)
    measured = loop_margins(design, spec)
    assert measured.crossover_hz == pytest.approx(crossing, rel=1e-5)
    assert measured.phase_margin_deg == pytest.approx(margin, abs=1e-3)


def _nodal_impedance(design: FilterDesign, w: float) -> complex:
    """V(tune)/I(pump) by nodal analysis; nodes: pump, R1-C1 junction, tune (order 3)."""
    nodes = 3 if design.order == 3 else 2
    y = np.zeros((nodes, nodes), dtype=complex)

    def stamp(a: int | None, b: int | None, admittance: complex) -> None:
        for i, j, sign in ((a, a, 1), (b, b, 1), (a, b, -1), (b, a, -1)):
            if i is not None and j is not None:
                y[i, j] += sign * admittance

    s = 1j * w
    stamp(0, None, s * design.c2)
    stamp(0, 1, 1 / design.r1)
    stamp(1, None, s * design.c1)
    if design.order == 3:
        stamp(0, 2, 1 / design.r3)
        stamp(2, None, s * design.c3)
    current = np.zeros(nodes, dtype=complex)
    current[0] = 1.0
    voltages = np.linalg.solve(y, current)
    return complex(voltages[-1] if design.order == 3 else voltages[0])


@pytest.mark.parametrize(
    "design",
    [
        FilterDesign(2, r1=1.5e3, c1=22e-9, c2=1.8e-9),
        FilterDesign(3, r1=820.0, c1=6.8e-9, c2=270e-12, r3=6.2e3, c3=39e-12),
        FilterDesign(3, r1=10e3, c1=1e-6, c2=10e-9, r3=100.0, c3=100e-9),  # heavy loading of R3-C3
    ],
)
def test_symbolic_impedance_matches_nodal_analysis(design: FilterDesign) -> None:
    # Circuit theory (nodal analysis, common practice) against the sympy-derived Z(s):
    # G(s) = K Z(s)/s, so Z(s) = G(s) * s / K.
    spec = LoopSpec(1e-3, 10e6, 10, 10e6)
    num, den = open_loop_polynomials(design, spec)
    for f in (1e2, 1e4, 3e5, 1e7):
        s = 2j * math.pi * f
        z = np.polyval(num, s) / np.polyval(den, s) * s / spec.loop_constant
        assert z == pytest.approx(_nodal_impedance(design, 2 * math.pi * f), rel=1e-10)


# Worked example of the published method (Banerjee, "PLL Performance, Simulation,
# and Design", fundamental loop filter design equations; equations from memory).
# The book's part names map to ours as: book C1 -> c2, book C2 -> c1, book R2 -> r1,
# book C3 -> c3, book R3 -> r3.  Inputs recalled from the book's design example
# (from memory); its printed part values were not at hand, so the book's equations
# are evaluated here and compared with our sympy-derived design.
EXAMPLE = {"kphi": 4e-3, "kvco": 20e6, "n": 4500, "fpd": 200e3, "fc": 10e3, "phi": 47.8, "t31": 0.6, "gamma": 1.136}


def _book_second_order(kphi, kvco, n, fc, phi):
    wc, p = 2 * math.pi * fc, math.radians(phi)
    t1 = (1 / math.cos(p) - math.tan(p)) / wc
    t2 = 1 / (wc**2 * t1)
    a0 = kphi * kvco / (wc**2 * n) * math.sqrt((1 + (wc * t2) ** 2) / (1 + (wc * t1) ** 2))
    c1 = a0 * t1 / t2
    c2 = a0 - c1
    return {"c2": c1, "c1": c2, "r1": t2 / c2}


def _book_third_order(kphi, kvco, n, fc, phi, t31, gamma):
    wc, p = 2 * math.pi * fc, math.radians(phi)

    def phase(t1: float) -> float:
        return (
            math.atan(gamma / (wc * t1 * (1 + t31))) - math.atan(wc * t1) - math.atan(wc * t1 * t31) - p
        )

    t1 = optimize.brentq(phase, 1e-12 / wc, 10 / wc, xtol=1e-30, rtol=1e-15)  # scipy root finder
    t3 = t1 * t31
    t2 = gamma / (wc**2 * (t1 + t3))
    a0 = (
        kphi * kvco / (wc**2 * n)
        * math.sqrt((1 + (wc * t2) ** 2) / ((1 + (wc * t1) ** 2) * (1 + (wc * t3) ** 2)))
    )
    a1, a2 = a0 * (t1 + t3), a0 * t1 * t3
    c1 = a2 / t2**2 * (1 + math.sqrt(1 + t2 / a2 * (t2 * a0 - a1)))
    c3 = (-(t2**2) * c1**2 + t2 * a1 * c1 - a2 * a0) / (t2**2 * c1 - a2)
    c2 = a0 - c1 - c3
    return {"c2": c1, "c1": c2, "r1": t2 / c2, "c3": c3, "r3": a2 / (c1 * c3 * t2)}


def test_worked_example_second_order_reproduces_the_book_equations() -> None:
    e = EXAMPLE
    spec = LoopSpec(e["kphi"], e["kvco"], e["n"], e["fpd"])
    ours = design_second_order(spec, e["fc"], e["phi"]).components()
    book = _book_second_order(e["kphi"], e["kvco"], e["n"], e["fc"], e["phi"])
    for name, value in book.items():
        assert ours[name] == pytest.approx(value, rel=1e-9), name


@pytest.mark.parametrize(("t31", "gamma"), [(EXAMPLE["t31"], EXAMPLE["gamma"]), (0.3, 1.0), (0.9, 1.5)])
def test_worked_example_third_order_reproduces_the_book_equations(t31: float, gamma: float) -> None:
    e = EXAMPLE
    spec = LoopSpec(e["kphi"], e["kvco"], e["n"], e["fpd"])
    ours = design_third_order(spec, e["fc"], e["phi"], pole_ratio=t31, gamma=gamma).components()
    book = _book_third_order(e["kphi"], e["kvco"], e["n"], e["fc"], e["phi"], t31, gamma)
    for name, value in book.items():
        assert ours[name] == pytest.approx(value, rel=1e-8), name


@pytest.mark.parametrize("phi", [30.0, 45.0, 60.0, 75.0])
def test_second_order_zero_to_pole_ratio(phi: float) -> None:
    # Lead-compensator identity (K. Ogata, Modern Control Engineering, 5th ed., 2010; from memory):
    # the phase-margin method's zero and pole are a factor
    # (1 + sin φ)/(1 - sin φ) apart, e.g. (1+√2)^2 ≈ 5.83 at 45° (common practice).
    spec = LoopSpec(1e-3, 50e6, 200, 10e6)
    design = design_second_order(spec, 50e3, phi)
    zero_time = design.r1 * design.c1
    pole_time = design.r1 * design.c1 * design.c2 / (design.c1 + design.c2)
    s = math.sin(math.radians(phi))
    assert zero_time / pole_time == pytest.approx((1 + s) / (1 - s), rel=1e-9)


@pytest.mark.parametrize("order", [2, 3])
def test_gamma_one_puts_the_phase_peak_near_the_crossover(order: int) -> None:
    # Phase of G from scipy.signal.freqs; slope by central difference in ln(f).
    spec = LOOPS[0]
    design = design_filter(spec, 100e3, 55, order=order, pole_ratio=0.2)
    num, den = open_loop_polynomials(design, spec)

    def slope_at(f: float) -> float:
        w = 2 * math.pi * f * np.exp([-0.01, 0.01])
        _, gain = signal.freqs(num, den, worN=w)
        phase = np.unwrap(np.angle(gain))
        return float(phase[1] - phase[0]) / 0.02  # rad per neper of frequency

    flank = abs(slope_at(300e3))
    # Order 2: the peak is exactly at the crossover (sympy: Tz = 1/(wc^2 T1));
    # order 3: the book's rule puts it close (slope a tenth of the flank's or less).
    assert abs(slope_at(100e3)) < (1e-9 if order == 2 else 0.1 * flank)


def test_third_order_free_choice_gives_the_largest_c3() -> None:
    # Hand-derived relation for a fixed A0, A1, A2, Tz with C2 chosen freely:
    # C1 = (A2/Tz - A1 + Tz*A0) / (Tz - A2/(Tz*C2)), C3 = A0 - C1 - C2.
    spec = LOOPS[0]
    design = design_third_order(spec, 100e3, 55, pole_ratio=0.5)
    a0, a1, a2, tz = design.coefficients()

    def c3_for(c2: float) -> float:
        c1 = (a2 / tz - a1 + tz * a0) / (tz - a2 / (tz * c2))
        return a0 - c1 - c2

    assert c3_for(design.c2) == pytest.approx(design.c3, rel=1e-9)
    for factor in (0.8, 0.95, 0.99, 1.01, 1.05, 1.25):
        assert c3_for(design.c2 * factor) < design.c3


@pytest.mark.parametrize("series", ["E12", "E24", "E96"])
@pytest.mark.parametrize(("spec", "bw", "pm", "order", "ratio"), CASES[::2])
def test_snapped_filter_stays_within_the_snapping_error(series, spec, bw, pm, order, ratio) -> None:
    design = _design(spec, bw, pm, order, ratio)
    snapped = snap_design(design, resistor_series=series, capacitor_series=series)
    worst = max(abs(math.log(snapped.components()[k] / v)) for k, v in design.components().items())
    # IEC 60063: snapping moves each part by at most about one series tolerance.
    assert worst <= 1.25 * series_tolerance(series)
    achieved = loop_margins(snapped, spec)
    # First-order sensitivity (common practice): the crossover goes roughly as
    # R1*C1/(C1+C2), so at most about twice the largest part error; each time
    # constant error d moves atan(w*T) by at most d/2 rad, with up to three
    # parts per time constant: pi/2 rad per unit error bounds the margin shift.
    assert abs(math.log(achieved.crossover_hz / bw)) <= 2 * worst
    assert abs(achieved.phase_margin_deg - pm) <= 90 * worst


def test_snap_design_uses_separate_series_for_resistors_and_capacitors() -> None:
    design = FilterDesign(3, r1=1234.0, c1=9.6e-9, c2=1.05e-9, r3=5.0e3, c3=41e-12)
    snapped = snap_design(design, resistor_series="E96", capacitor_series="E6")
    assert snapped.components() == {"r1": 1240.0, "c1": 1e-08, "c2": 1e-09, "r3": 4990.0, "c3": 4.7e-11}


@pytest.mark.parametrize(
    ("call", "error", "key"),
    [
        (lambda: design_second_order(LOOPS[0], 100e3, 90), InfeasibleError, "phase_margin"),
        (lambda: design_second_order(LOOPS[0], 100e3, -5), ClockplanError, "phase_margin"),
        (lambda: design_second_order(LOOPS[0], 0, 50), ClockplanError, "bandwidth"),
        (lambda: design_third_order(LOOPS[0], 100e3, 50, pole_ratio=0), ClockplanError, "pole_ratio"),
        (lambda: design_filter(LOOPS[0], 100e3, 50, order=4), ClockplanError, "order"),
        (lambda: design_second_order(LOOPS[0], 100e3, 50, gamma=-1), ClockplanError, "gamma"),
        (lambda: LoopSpec(-1e-3, 30e6, 100, 25e6), ClockplanError, "charge_pump_a"),
        (lambda: LoopSpec(1e-3, float("nan"), 100, 25e6), ClockplanError, "kvco_hz_per_v"),
        (lambda: FilterDesign(2, r1=1e3, c1=1e-9, c2=1e-10, r3=1.0, c3=None), ClockplanError, "r3"),
        (lambda: FilterDesign(3, r1=1e3, c1=1e-9, c2=1e-10), ClockplanError, "r3"),
        (lambda: FilterDesign(2, r1=0.0, c1=1e-9, c2=1e-10), ClockplanError, "r1"),
        (lambda: FilterDesign.from_components(2, {"r1": 1.0, "c1": 1.0, "c2": 1.0, "r9": 1.0}), ClockplanError, "r9"),
    ],
)
def test_bad_requests_raise_located_errors(call, error, key: str) -> None:
    with pytest.raises(error) as caught:
        call()
    assert caught.value.key == key
    assert caught.value.hint
