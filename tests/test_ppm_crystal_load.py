"""Crystal load capacitance, pulling and standard capacitor values against closed forms (IEC 60122-1, IEC 60063)."""

import math
from fractions import Fraction

import pytest
from scipy.optimize import brentq

from clockplan.errors import BoardError
from clockplan.ppm.crystal_load import (
    CrystalLoad,
    load_resonance_offset,
    nearest_load_capacitors,
    pulling,
    series_load,
    trim_sensitivity,
)
from clockplan.eseries import exact_values as series_values

pF = Fraction(1, 10**12)
fF = Fraction(1, 10**15)


def _bvd_load_resonance(fs, c1, c0, load):
    """Load resonance of the lossless Butterworth-Van Dyke crystal model, found numerically.

    The crystal (L1-C1 branch in parallel with C0) in series with the load resonates where its
    reactance cancels the load's: X_crystal(f) = 1/(2 pi f CL). scipy.optimize.brentq finds it
    between series and parallel resonance.
    """
    l1 = 1 / ((2 * math.pi * fs) ** 2 * c1)

    def net_reactance(f):
        w = 2 * math.pi * f
        x_branch = w * l1 - 1 / (w * c1)
        x_c0 = -1 / (w * c0)
        x_crystal = x_branch * x_c0 / (x_branch + x_c0)
        return x_crystal - 1 / (w * load)

    fa = fs * math.sqrt(1 + c1 / c0)
    return brentq(net_reactance, fs * (1 + 1e-12), fa * (1 - 1e-12), xtol=1e-12, rtol=1e-15)


def test_series_load_of_two_capacitors_and_stray():
    # CL = C1*C2/(C1+C2) + Cstray (series capacitors plus stray; common practice; e.g. 18 pF + 18 pF with 3 pF stray = 12 pF).
    assert series_load(18 * pF, 18 * pF, 3 * pF) == 12 * pF
    assert series_load(22 * pF, 33 * pF, 2 * pF) == Fraction(66, 5) * pF + 2 * pF


# Worked examples (our own numbers), checked two independent ways:
#   first-order form  D = C1 / (2 (C0 + CL))  (load resonance frequency offset, IEC 60122-1; from memory)
#   numerical root of the Butterworth-Van Dyke model with scipy.optimize.brentq.
WORKED = [
    # c1, c0, specified, actual
    (20 * fF, 5 * pF, 20 * pF, Fraction(37, 2) * pF),
    (5 * fF, 2 * pF, 12 * pF, 10 * pF),
    (3 * fF, Fraction(3, 2) * pF, 8 * pF, 9 * pF),
    (15 * fF, 4 * pF, 18 * pF, 32 * pF),
]


@pytest.mark.parametrize("c1, c0, specified, actual", WORKED)
def test_pulling_matches_bvd_root_and_first_order_form(c1, c0, specified, actual):
    ours = pulling(c1, c0, specified, actual)
    fs = 10e6
    f_spec = _bvd_load_resonance(fs, float(c1), float(c0), float(specified))
    f_actual = _bvd_load_resonance(fs, float(c1), float(c0), float(actual))
    assert ours == pytest.approx(f_actual / f_spec - 1, rel=1e-6, abs=1e-12)
    first_order = float(c1 / (2 * (c0 + actual)) - c1 / (2 * (c0 + specified)))
    # The first-order form differs by second-order terms, (C1/(C0+CL))² / 8 at most.
    assert ours == pytest.approx(first_order, abs=float(c1 / (c0 + min(actual, specified))) ** 2 / 4)


def test_load_offset_worked_example():
    # C1 = 20 fF, C0 = 5 pF, CL = 20 pF: C1/(2(C0+CL)) = 20e-15 / 50e-12 = 400 ppm (first-order form);
    # the exact BVD value is slightly lower.
    offset = load_resonance_offset(20 * fF, 5 * pF, 20 * pF)
    assert offset == pytest.approx(400e-6, rel=1e-3)
    assert offset == pytest.approx(_bvd_load_resonance(10e6, 20e-15, 5e-12, 20e-12) / 10e6 - 1, rel=1e-6)


def test_trim_sensitivity_is_the_derivative():
    # TS = -C1 / (2 (C0 + CL)²) (IEC 60122-1 trim sensitivity; from memory): 20 fF, 5 pF, 20 pF -> -16 ppm/pF.
    assert trim_sensitivity(20 * fF, 5 * pF, 20 * pF) * 1e-12 * 1e6 == pytest.approx(-16.0, rel=1e-12)
    step = 1e-15
    numeric = (load_resonance_offset(20e-15, 5e-12, 20e-12 + step) - load_resonance_offset(20e-15, 5e-12, 20e-12 - step)) / (2 * step)
    assert numeric == pytest.approx(trim_sensitivity(20 * fF, 5 * pF, 20 * pF), rel=2e-3)


def test_crystal_load_range_brackets_nominal_and_lower_load_pulls_up():
    network = CrystalLoad(12 * pF, 5 * fF, 2 * pF, 18 * pF, 18 * pF, 3 * pF, Fraction(1, 20), pF)
    low, high = network.pulling_range()
    assert network.pulling() == 0.0  # 18 pF pair + 3 pF stray is exactly the specified 12 pF
    assert low < 0 < high
    assert network.load_range == (Fraction(171, 20) * pF + 2 * pF, Fraction(189, 20) * pF + 4 * pF)


@pytest.mark.parametrize(
    "kwargs, match",
    [
        (dict(cap_a=0 * pF), "cap_a"),
        (dict(cap_tolerance=Fraction(1)), "tolerance"),
        (dict(stray_tolerance=5 * pF), "stray tolerance"),
    ],
)
def test_crystal_load_rejects_impossible_values(kwargs, match):
    base = dict(specified_load=12 * pF, motional_c1=5 * fF, shunt_c0=2 * pF, cap_a=18 * pF, cap_b=18 * pF, stray=3 * pF)
    with pytest.raises(BoardError, match=match):
        CrystalLoad(**(base | kwargs))


def test_nearest_capacitors_hit_exact_load_with_zero_residual():
    # 12 pF crystal, 3 pF stray: two 18 pF capacitors give 9 + 3 = 12 pF exactly.
    best = nearest_load_capacitors(12 * pF, 5 * fF, 2 * pF, stray=3 * pF, series="E12")[0]
    assert (best.cap_a, best.cap_b, best.load, best.residual) == (18 * pF, 18 * pF, 12 * pF, 0.0)


def test_nearest_capacitors_residual_is_the_pulling_and_unequal_pairs_can_do_better():
    # 9 pF crystal, 2.5 pF stray: needs 13 pF per side; E12 has 12 and 15 pF.
    equal = nearest_load_capacitors(9 * pF, 4 * fF, Fraction(3, 2) * pF, stray=Fraction(5, 2) * pF, series="E12", count=5)
    assert equal[0].cap_a == 12 * pF
    assert equal[0].residual == pytest.approx(pulling(4 * fF, Fraction(3, 2) * pF, 9 * pF, equal[0].load), rel=1e-15)
    assert equal[0].residual > 0  # 8.5 pF load is below 9 pF: the crystal runs fast
    unequal = nearest_load_capacitors(9 * pF, 4 * fF, Fraction(3, 2) * pF, stray=Fraction(5, 2) * pF, series="E12", equal=False)
    assert abs(unequal[0].load - 9 * pF) <= abs(equal[0].load - 9 * pF)
    # Brute force over all E12 pairs agrees on the best reachable load.
    values = series_values("E12", pF, 100 * pF)
    best = min(abs(series_load(a, b, Fraction(5, 2) * pF) - 9 * pF) for a in values for b in values)
    assert abs(unequal[0].load - 9 * pF) == best


def test_nearest_capacitors_refuse_stray_above_load():
    with pytest.raises(BoardError, match="stray"):
        nearest_load_capacitors(4 * pF, 5 * fF, 2 * pF, stray=5 * pF)
