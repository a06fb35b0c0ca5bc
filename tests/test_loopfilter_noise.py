"""Loop-filter resistor noise at the PLL output.

References: the equipartition theorem for thermal noise on capacitors (kT/C
noise; H. Nyquist, "Thermal agitation of electric charge in conductors", Phys. Rev. 32, 1928), integrated with scipy.integrate.quad;
an independent nodal analysis of the closed loop written here with
numpy.linalg (circuit and feedback theory, common practice).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import integrate

from clockplan.errors import ClockplanError
from clockplan.loopfilter.closed_form import resistor_noise_transfer
from clockplan.loopfilter.design import FilterDesign, LoopSpec, design_filter
from clockplan.loopfilter.noise import (
    BOLTZMANN,
    loop_filter_phase_noise,
    loop_filter_phase_noise_dbc,
    resistor_phase_noise,
)

SPEC = LoopSpec(2.5e-3, 30e6, 100, 25e6)  # invented demo loop
DESIGNS = [
    design_filter(SPEC, 100e3, 55, order=2),
    design_filter(SPEC, 100e3, 55, order=3),
    FilterDesign(3, r1=10e3, c1=1e-6, c2=10e-9, r3=100.0, c3=100e-9),
]


@pytest.mark.parametrize("design", DESIGNS)
def test_integrated_tuning_noise_obeys_equipartition(design: FilterDesign) -> None:
    # Equipartition with the charge pump open: the capacitors share one conserved
    # total charge, so <V_i V_j> = kT (delta_ij / C_i - 1 / C_total); at the tuning
    # node <V^2> = kT (1/C_tune - 1/C_total), whatever the resistor values.
    temperature = 300.0
    parts = design.components()
    c_tune = parts["c3"] if design.order == 3 else parts["c2"]
    c_total = sum(v for k, v in parts.items() if k.startswith("c"))
    expected = BOLTZMANN * temperature * (1 / c_tune - 1 / c_total)

    def density(log_f: float) -> float:
        f = math.exp(log_f)
        total = 0.0
        for name in (k for k in parts if k.startswith("r")):
            transfer = resistor_noise_transfer(design.order, name, 2j * math.pi * f, *parts.values())
            total += 4 * BOLTZMANN * temperature * parts[name] * abs(transfer) ** 2
        return total * f  # df = f d(ln f)

    value, _ = integrate.quad(density, math.log(1e-3), math.log(1e13), limit=400, epsrel=1e-10)
    assert value == pytest.approx(expected, rel=1e-6)


def _closed_loop_noise(design: FilterDesign, spec: LoopSpec, resistor: str, f: float, kelvin: float) -> float:
    """S_phi from nodal analysis of the whole loop with a series noise source in ``resistor``.

    Unknowns: pump node, R1-C1 junction, tuning node (order 3), output phase.
    """
    s = 2j * math.pi * f
    order3 = design.order == 3
    size = 4 if order3 else 3
    pump, junction, tune, phase = 0, 1, 2 if order3 else 0, size - 1
    a = np.zeros((size, size), dtype=complex)
    b = np.zeros(size, dtype=complex)

    def branch(p: int, q: int, admittance: complex, source: float) -> None:
        # current p -> q = admittance * (V_p - V_q - source)
        a[p, p] += admittance
        a[p, q] -= admittance
        a[q, q] += admittance
        a[q, p] -= admittance
        b[p] += admittance * source
        b[q] -= admittance * source

    a[pump, pump] += s * design.c2
    branch(pump, junction, 1 / design.r1, 1.0 if resistor == "r1" else 0.0)
    a[junction, junction] += s * design.c1
    if order3:
        branch(pump, tune, 1 / design.r3, 1.0 if resistor == "r3" else 0.0)
        a[tune, tune] += s * design.c3
    # Charge pump: current Icp/(2 pi) * (0 - phase/N) flows into the pump node.
    a[pump, phase] += float(spec.charge_pump_a) / (2 * math.pi * float(spec.n))
    # VCO: phase = 2 pi Kvco V_tune / s.
    a[phase, phase] = 1.0
    a[phase, tune] -= 2 * math.pi * float(spec.kvco_hz_per_v) / s
    solution = np.linalg.solve(a, b)
    resistance = getattr(design, resistor)
    return 4 * BOLTZMANN * kelvin * resistance * abs(solution[phase]) ** 2


@pytest.mark.parametrize("design", DESIGNS)
def test_output_noise_matches_nodal_analysis_of_the_closed_loop(design: FilterDesign) -> None:
    offsets = np.geomspace(100.0, 100e6, 25)
    for resistor in (k for k in design.components() if k.startswith("r")):
        ours = resistor_phase_noise(design, SPEC, resistor, offsets, temperature_c=26.85)
        reference = [_closed_loop_noise(design, SPEC, resistor, f, 300.0) for f in offsets]
        np.testing.assert_allclose(ours, reference, rtol=1e-8)


def test_noise_scales_with_absolute_temperature() -> None:
    # Johnson-Nyquist: the density 4kTR is proportional to T in kelvin.
    offsets = [1e4, 1e5, 1e6]
    hot = loop_filter_phase_noise(DESIGNS[1], SPEC, offsets, temperature_c=125.0)
    room = loop_filter_phase_noise(DESIGNS[1], SPEC, offsets, temperature_c=25.0)
    np.testing.assert_allclose(hot / room, (125 + 273.15) / (25 + 273.15), rtol=1e-12)


def test_total_is_the_power_sum_and_dbc_is_half_the_density() -> None:
    offsets = np.array([3e3, 3e4, 3e5])
    total = loop_filter_phase_noise(DESIGNS[1], SPEC, offsets)
    parts = sum(resistor_phase_noise(DESIGNS[1], SPEC, r, offsets) for r in ("r1", "r3"))
    np.testing.assert_allclose(total, parts, rtol=1e-12)
    # L(f) = 10 log10(S_phi / 2), IEEE Std 1139 small-angle definition.
    np.testing.assert_allclose(loop_filter_phase_noise_dbc(DESIGNS[1], SPEC, offsets), 10 * np.log10(total / 2))


def test_noise_is_band_pass_around_the_loop_bandwidth() -> None:
    # Type-2 loop: +20 dB/decade far inside (flat tuning noise x Kvco/f x |E| ~ f^2),
    # falling outside; the peak lies near the loop bandwidth (100 kHz here).
    offsets = np.geomspace(10.0, 100e6, 701)
    level = loop_filter_phase_noise_dbc(DESIGNS[0], SPEC, offsets)
    inside_slope = (level[100] - level[0]) / math.log10(offsets[100] / offsets[0])
    assert inside_slope == pytest.approx(20.0, abs=0.5)
    assert 30e3 < offsets[int(np.argmax(level))] < 300e3


@pytest.mark.parametrize(
    ("call", "key"),
    [
        (lambda: resistor_phase_noise(DESIGNS[0], SPEC, "r3", [1e3]), "r3"),
        (lambda: resistor_phase_noise(DESIGNS[1], SPEC, "c1", [1e3]), "c1"),
        (lambda: loop_filter_phase_noise(DESIGNS[1], SPEC, [0.0, 1e3]), "offsets"),
        (lambda: loop_filter_phase_noise(DESIGNS[1], SPEC, [1e3], temperature_c=-300), "temperature"),
    ],
)
def test_bad_noise_requests_raise(call, key: str) -> None:
    with pytest.raises(ClockplanError) as caught:
        call()
    assert caught.value.key == key and caught.value.hint
