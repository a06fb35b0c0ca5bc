"""Which frequencies can share one VCO: the standards' families, checked against sympy and brute force."""

from __future__ import annotations

import itertools
from fractions import Fraction

import pytest
import sympy
from hypothesis import given, settings
from hypothesis import strategies as st

from clockplan.synth.classes import ConsumerClass
from clockplan.synth.compat import VcoCompat, low_ratio, needs_low_divider
from clockplan.synth.library import default_library, parse_library
from tests.synth_helpers import pll_template

MHZ = Fraction(10**6)


def _classes(frequencies, tolerance=Fraction(0)):
    return [ConsumerClass(i, Fraction(f), tolerance, (f"c{i}",)) for i, f in enumerate(frequencies)]


def _sympy_lcm(frequencies) -> Fraction:
    value = sympy.lcm([sympy.Rational(f.numerator, f.denominator) for f in frequencies])
    return Fraction(int(value.p), int(value.q))


# Families that share a VCO, with where their frequencies come from.
SHARING = [
    # IEEE 802.3 clause 36 (1000BASE-X, 125 MHz), clause 49 (10GBASE-R, 156.25 MHz); PCI Express refclk 100 MHz
    [125 * MHZ, Fraction(15625, 100) * MHZ, 100 * MHZ],
    # 256, 512 and 1024 x 48 kHz audio master clocks (common practice; AES5 48 kHz) and the 64 x 48 kHz bit clock
    [Fraction(12_288_000), Fraction(24_576_000), Fraction(49_152_000), Fraction(3_072_000)],
    # SMPTE ST 292 / CTA-861: 148.5 and 74.25 MHz, one family
    [Fraction(148_500_000), Fraction(74_250_000)],
    # the 1/1.001 family among itself (SMPTE ST 424 at 59.94 Hz)
    [Fraction(148_500_000) / Fraction(1001, 1000), Fraction(74_250_000) / Fraction(1001, 1000)],
]


@pytest.mark.parametrize("frequencies", SHARING)
def test_families_share_one_vco_at_the_lowest_common_multiple_in_range(frequencies):
    template = default_library().pll("int-synth-4")
    compat = VcoCompat(_classes(frequencies), default_library().divider)
    result = compat.check(template, range(len(frequencies)))
    assert result.ok
    # The reference: scan the whole multiples of sympy's lcm of the output frequencies (a low one lifted
    # by its plain divider) and take the first in the VCO range whose quotients the output dividers allow.
    lifted = [f * (compat.low_ratio(template, i) or 1) for i, f in enumerate(frequencies)]
    step = _sympy_lcm(lifted)
    first = next(
        m * step
        for m in range(1, 10**6)
        if template.vco.lo <= m * step <= template.vco.hi and all((m * step / f).numerator in template.output_divider for f in lifted)
    )
    assert result.vco_hz == first


def test_ethernet_and_pcie_references_share_a_vco_at_2_5_ghz():
    # 125 MHz (IEEE 802.3 1000BASE-X), 156.25 MHz (IEEE 802.3 10GBASE-R), 100 MHz (PCI Express refclk):
    # lcm 2.5 GHz, the only multiple inside 2.4..3.2 GHz.
    frequencies = SHARING[0]
    assert sympy.ilcm(*[int(f) for f in frequencies]) == 2_500_000_000
    result = VcoCompat(_classes(frequencies), None).check(default_library().pll("int-synth-4"), (0, 1, 2))
    assert result.vco_hz == 2_500_000_000


def test_the_two_frame_rate_families_never_share_a_vco():
    # SMPTE ST 424: 148.5 MHz and 148.5/1.001 MHz. Their lcm is 148.5 GHz, far above any VCO range.
    frequencies = [Fraction(148_500_000), Fraction(148_500_000) / Fraction(1001, 1000)]
    assert _sympy_lcm(frequencies) == 148_500_000_000
    compat = VcoCompat(_classes(frequencies), default_library().divider)
    for template in default_library().plls:
        verdict = compat.check(template, (0, 1))
        assert not verdict.ok and "148.5 GHz" in verdict.reason


def test_a_frequency_below_the_output_dividers_gets_a_plain_divider():
    template = default_library().pll("int-synth-4")
    uart = Fraction(1_843_200)
    assert needs_low_divider(template, uart)
    b = low_ratio(template, default_library().divider, uart)
    # The output dividers must reach f * b from the whole VCO range; the smallest power of two that does.
    smallest = -(-template.vco.hi // (uart * template.output_divider.hi))
    powers = [2**k for k in range(20) if 2**k >= smallest]
    assert b == powers[0]
    assert uart * b * template.output_divider.hi >= template.vco.hi
    assert uart * b * template.output_divider.lo <= template.vco.lo


def test_a_windowed_frequency_shares_a_vco_inside_its_window():
    # A UART clock allowed ±2 % (16 x 115200 baud) beside the 25 MHz Ethernet reference.
    classes = [ConsumerClass(0, Fraction(25_000_000), Fraction(0), ("phy",)), ConsumerClass(1, Fraction(1_843_200), Fraction(2, 100), ("uart",))]
    template = default_library().pll("int-synth-4")
    compat = VcoCompat(classes, default_library().divider)
    verdict = compat.check(template, (0, 1))
    assert verdict.ok
    b = compat.low_ratio(template, 1)
    divider = verdict.vco_hz / (Fraction(1_843_200) * b)
    nearest = min(range(template.output_divider.lo, template.output_divider.hi + 1), key=lambda d: abs(verdict.vco_hz / (d * b) / Fraction(1_843_200) - 1))
    assert abs(verdict.vco_hz / (nearest * b) / Fraction(1_843_200) - 1) <= Fraction(2, 100)
    assert divider > 0


POOL = [Fraction(10**7) * Fraction(a, b) for a in (1, 2, 3, 4, 5, 6, 8, 9, 10, 12, 15, 16) for b in (1, 2, 3, 4, 5, 7)]


@settings(max_examples=60, deadline=None, derandomize=True)
@given(st.lists(st.sampled_from(sorted(set(POOL))), min_size=2, max_size=5, unique=True))
def test_sharing_is_hereditary(frequencies):
    # What lets the search prune: a set that shares a VCO has every subset sharing it too.
    library = default_library()
    compat = VcoCompat(_classes(frequencies), library.divider)
    for template in library.plls:
        if compat.check(template, range(len(frequencies))).ok:
            for size in range(1, len(frequencies)):
                for subset in itertools.combinations(range(len(frequencies)), size):
                    assert compat.check(template, subset).ok


_SMALL = "\n".join(
    pll_template(name, mode, ("400 MHz", "800 MHz"), ("1 MHz", "10 MHz"), 10, (10, 800), (1, 64))
    for name, mode in (("small-int", "integer"), ("small-frac", "fractional"))
)


def _brute_force_exact(template, input_hz, frequencies) -> bool:
    """Every R and every N on the template's grid (whole, or k/8): some plan makes every output exact."""
    step = 8 if template.mode == "fractional" else 1
    for r in template.ref_divider:
        pfd = input_hz / r
        if pfd not in template.pfd:
            continue
        for k in range(int(template.feedback_min) * step, int(template.feedback_max) * step + 1):
            v = pfd * Fraction(k, step)
            if v not in template.vco:
                continue
            if all((v / f).denominator == 1 and (v / f).numerator in template.output_divider for f in frequencies):
                return True
    return False


@settings(max_examples=40, deadline=None, derandomize=True)
@given(st.lists(st.sampled_from(sorted(set(POOL))), min_size=1, max_size=3, unique=True), st.sampled_from(["small-int", "small-frac"]))
def test_exact_plan_precheck_agrees_with_brute_force(frequencies, name):
    template = parse_library(_SMALL).pll(name)
    if any(needs_low_divider(template, f) for f in frequencies):
        return  # the brute force below has no plain divider
    compat = VcoCompat(_classes(frequencies), None)
    input_hz = Fraction(10**7)
    assert compat.exact_from(template, range(len(frequencies)), input_hz) == _brute_force_exact(template, input_hz, frequencies)
