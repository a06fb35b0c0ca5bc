"""Constraint checks on a set of settings: every limit a datasheet states.

Each check returns findings; none raises. A missing setting is itself a
finding (``unset``), so a half-planned board still reports what it can.
"""

from __future__ import annotations

import math
from fractions import Fraction
from typing import Any

from clockplan.extremes import Band, PllBand, pll_bands
from clockplan.findings import Finding, Severity
from clockplan.frequency import Frequencies, synthesis_error
from clockplan.margins import DEFAULT_MARGIN_WARNING, format_margin_warning, is_thin, synthesis_headroom
from clockplan.parts import Board, Consumer, FrequencyRange, Pll, Settings
from clockplan.plan.spurs import DEFAULT_LOOP_BANDWIDTH_HZ, spur_findings
from clockplan.units import format_exact, format_frequency, format_ppm

__all__ = ["check_settings", "check_pll", "check_consumer_frequency", "check_consumer_standard", "check_range_extremes"]


#: How far (as a ratio, either way) a consumer may run from the nearest nominal frequency of its
#: standard before ``standard-frequency`` warns: a factor of two (our choice: it keeps the
#: neighbouring reference frequencies parts accept, and catches unit slips of 1000).
FAR_FROM_NOMINAL = Fraction(2)


def _range_text(span: FrequencyRange) -> str:
    return f"{format_frequency(span.lo)} to {format_frequency(span.hi)}"


def _error(code: str, node: str, message: str) -> Finding:
    return Finding(Severity.ERROR, code, node, message)


def check_pll(pll: Pll, settings: Settings, freqs: Frequencies) -> list[Finding]:
    """Check one PLL's settings against its ranges and its mode.

    Examples
    --------
    A VCO at 3.3 GHz on a part whose VCO spans 2.4 to 3.2 GHz gives a
    ``vco-range`` error.
    """
    setting = settings.plls.get(pll.id)
    if setting is None:
        return [_error("unset", pll.id, f"PLL {pll.id} has no complete settings (r, n and every output divider); give them in the board file or run 'clockplan plan'")]
    findings: list[Finding] = []
    if setting.r not in pll.ref_divider:
        findings.append(_error("r-range", pll.id, f"R = {setting.r} is not allowed (R: {pll.ref_divider.describe()}); choose an allowed R"))
    findings += _check_n(pll, setting.n)
    for out in pll.outputs:
        divider = setting.dividers.get(out.name)
        if divider is None:
            findings.append(_error("unset", f"{pll.id}.{out.name}", f"output {out.name} of {pll.id} has no divider setting"))
        elif divider not in out.divider:
            findings.append(_error("divider-range", f"{pll.id}.{out.name}", f"output divider {divider} is not allowed ({out.divider.describe()})"))
    point = freqs.plls.get(pll.id)
    if point is None:
        return findings
    if pll.input_range is not None and point.input_hz not in pll.input_range:
        findings.append(_error("input-range", pll.id, f"input {format_frequency(point.input_hz)} is outside the part's input range {_range_text(pll.input_range)}"))
    if point.pfd_hz not in pll.pfd:
        findings.append(_error("pfd-range", pll.id, f"PFD {format_frequency(point.pfd_hz)} is outside {_range_text(pll.pfd)}; change R so that input/R lands in the range"))
    if point.vco_hz not in pll.vco:
        findings.append(_error("vco-range", pll.id, f"VCO {format_frequency(point.vco_hz)} is outside {_range_text(pll.vco)}; change N (and the output dividers) so the VCO lands in the range"))
    return findings


def _check_n(loop: Pll, ratio: Fraction) -> list[Finding]:
    findings = []
    if not loop.feedback_min <= ratio <= loop.feedback_max:
        findings.append(_error("n-range", loop.id, f"N = {format_exact(ratio)} is outside {format_exact(loop.feedback_min)}..{format_exact(loop.feedback_max)}"))
    if ratio.denominator != 1:
        if loop.mode == "integer":
            findings.append(_error("n-fraction", loop.id, f"N = {format_exact(ratio)} has a fractional part but the PLL is integer-N; use a whole N or a fractional-N part"))
        elif loop.denominator is not None and not loop.denominator.allows(ratio):
            findings.append(_error("denominator", loop.id, f"N = {format_exact(ratio)} needs denominator {ratio.denominator}, which the part cannot make ({loop.denominator.describe()})"))
    return findings


def check_consumer_frequency(
    consumer: Consumer, actual_hz: Fraction | None, margin_warning: Fraction = DEFAULT_MARGIN_WARNING
) -> list[Finding]:
    """Compare a consumer's achieved frequency with its target and allowed synthesis error.

    Inside the allowed error with less than ``margin_warning`` of it left is a
    ``synthesis-margin`` warning (the margin policy, :func:`clockplan.margins.is_thin`).
    """
    if actual_hz is None:
        return [_error("unset", consumer.id, f"the frequency of {consumer.id} is unknown because a part upstream has no settings")]
    error = synthesis_error(actual_hz, consumer.frequency)
    if error == 0:
        return []
    text = f"achieves {format_frequency(actual_hz)} for a {format_frequency(consumer.frequency)} target ({format_ppm(error)})"
    if abs(error) > consumer.max_synthesis_error:
        allowed = "0 (exact)" if consumer.max_synthesis_error == 0 else "±" + format_ppm(consumer.max_synthesis_error).lstrip("+")
        return [_error("frequency", consumer.id, f"{text}, beyond the allowed synthesis error of {allowed}; re-plan, or set max_synthesis_error if the consumer tolerates it")]
    headroom = synthesis_headroom(error, consumer.max_synthesis_error)
    if is_thin(headroom, margin_warning):
        allowed = "±" + format_ppm(consumer.max_synthesis_error).lstrip("+")
        return [Finding(
            Severity.WARNING, "synthesis-margin", consumer.id,
            f"{text}: inside its allowed synthesis error of {allowed} with only {float(headroom) * 100:.3g} % of it left "
            f"(less than {format_margin_warning(margin_warning)}, the board's margin_warning); re-plan for a closer "
            "frequency, or confirm the consumer tolerates it",
        )]
    return [Finding(Severity.INFO, "inexact", consumer.id, f"{text}, within its allowed synthesis error")]


def _band_text(band: PllBand, vco: bool) -> str:
    """What moves the frequency: the reference's worst case, and any spread sweeps."""
    low, high = band.reference_band
    basis = {"board": "the board's figures", "typical": "its kind's typical figures, assumed"}.get(band.reference_basis, "no figures")
    parts = [f"reference {band.reference} at {format_ppm(low)}..{format_ppm(high)} ({basis}, worst case over the "
             "board's temperature range and lifetime)"]
    sweeps = [band.upstream_sweep] + ([band.sweep] if vco else [])
    sweep = (min(s[0] for s in sweeps), max(s[1] for s in sweeps))
    if sweep != (0, 0):
        parts.append(f"a spread sweep of {format_ppm(sweep[0])}..{format_ppm(sweep[1])}")
    return " and ".join(parts)


def _edge_finding(code: str, pll: Pll, what: str, nominal: Fraction, span: FrequencyRange, band: Band,
                  cause: str, fix: str) -> Finding | None:
    """An error when ``nominal`` is inside ``span`` but ``nominal * (1 + band)`` leaves it; None otherwise."""
    low_hz, high_hz = nominal * (1 + band[0]), nominal * (1 + band[1])
    if high_hz > span.hi:
        excess, edge, side = high_hz - span.hi, span.hi, "above the top"
    elif low_hz < span.lo:
        excess, edge, side = span.lo - low_hz, span.lo, "below the bottom"
    else:
        return None
    return _error(code, pll.id, (
        f"{what} {format_frequency(nominal)} is inside {_range_text(span)} at nominal, but {cause} take it "
        f"{format_frequency(excess)} ({format_ppm(excess / edge).lstrip('+')}) {side} edge {format_frequency(edge)}; {fix}"))


def check_range_extremes(board: Board, freqs: Frequencies, bands: dict[str, PllBand]) -> list[Finding]:
    """Input, PFD and VCO ranges checked over the reference's error band and the spread sweeps.

    A frequency already outside its range at nominal has its own finding
    (``vco-range``...) and is not repeated. Exact: a VCO exactly at its top
    edge passes with a zero band and fails with any positive error.
    """
    findings: list[Finding] = []
    fix = "plan with a margin from the edge ('clockplan plan' keeps it), or use a more accurate reference"
    for pll in board.plls:
        point, band = freqs.plls.get(pll.id), bands.get(pll.id)
        if point is None or band is None:
            continue
        checks: list[tuple[str, str, Fraction, FrequencyRange, Band, bool]] = [
            ("pfd-range-extremes", "PFD", point.pfd_hz, pll.pfd, band.input, False),
            ("vco-range-extremes", "VCO", point.vco_hz, pll.vco, band.vco, True),
        ]
        if pll.input_range is not None:
            checks.insert(0, ("input-range-extremes", "input", point.input_hz, pll.input_range, band.input, False))
        for code, what, nominal, span, moved, vco in checks:
            if nominal not in span:
                continue
            finding = _edge_finding(code, pll, what, nominal, span, moved, _band_text(band, vco), fix)
            if finding is not None:
                findings.append(finding)
    return findings


def check_consumer_standard(consumer: Consumer) -> list[Finding]:
    """A ``standard-frequency`` warning when the consumer's frequency is far from all its standard's nominal ones.

    Far means more than a factor :data:`FAR_FROM_NOMINAL` from every listed
    nominal frequency: many parts take one of several reference frequencies
    near the listed ones (a PHY at 20 MHz where 19.2 MHz and 24 MHz are
    listed), but 32.768 MHz on a 32.768 kHz real-time-clock standard means the
    standard's figures were not written for this clock, or a unit slip: the
    finding names the nearest nominal and the ratio. A standard that lists no
    nominal frequency is not checked.

    Examples
    --------
    A consumer at 32.768 MHz under ``rtc-32k`` (32.768 kHz) gets the warning,
    naming the exact ratio 1000.
    """
    budget = consumer.budget
    nominals = tuple(getattr(budget, "nominal_hz", ()) or ())
    if not nominals:
        return []
    f = consumer.frequency
    nearest = min(nominals, key=lambda n: abs(math.log(f / n)))
    ratio = f / nearest
    if FAR_FROM_NOMINAL ** -1 <= ratio <= FAR_FROM_NOMINAL:
        return []
    slip = ""
    for factor, words in ((10**3, "kHz/MHz or Hz/kHz"), (10**6, "Hz/MHz or kHz/GHz"), (10**9, "Hz/GHz")):
        if ratio in (factor, Fraction(1, factor)):
            slip = f" (exactly {format_exact(ratio)} times: a unit slip, {words}?)"
    title = getattr(budget, "title", None) or consumer.standard or "its standard"
    listed = ", ".join(format_frequency(n) for n in nominals)
    return [Finding(Severity.WARNING, "standard-frequency", consumer.id, (
        f"{consumer.id} runs at {format_frequency(f)}, far from every frequency its standard ({title}) lists: "
        f"{listed}; nearest {format_frequency(nearest)}{slip}. Its budgets were written for those frequencies: "
        "check the consumer's frequency, or give it the standard (or inline budget) that fits"))]


def check_settings(
    board: Board, settings: Settings, freqs: Frequencies, loop_bandwidth_hz: Fraction | float | None = None,
    graph: Any = None,
) -> list[Finding]:
    """Every constraint check on the board, in board order.

    ``loop_bandwidth_hz`` is the loop bandwidth assumed for the in-band spur
    check of a PLL that states none (``--loop-bandwidth``; None: the default,
    :data:`~clockplan.plan.spurs.DEFAULT_LOOP_BANDWIDTH_HZ`). ``plan`` runs the
    same check, so both commands raise the same ``spur-in-band`` warnings.
    """
    findings: list[Finding] = []
    for pll in board.plls:
        findings += check_pll(pll, settings, freqs)
    findings += spur_findings(board.plls, freqs, DEFAULT_LOOP_BANDWIDTH_HZ if loop_bandwidth_hz is None else loop_bandwidth_hz)
    if board.plls:
        if graph is None:
            from clockplan.graph import build_graph

            graph = build_graph(board)
        findings += check_range_extremes(board, freqs, pll_bands(board, graph))
    for divider in board.dividers:
        ratio = settings.dividers.get(divider.id)
        if ratio is None:
            findings.append(_error("unset", divider.id, f"divider {divider.id} has no ratio setting; give settings.ratio or run 'clockplan plan'"))
        elif ratio not in divider.ratio:
            findings.append(_error("divider-range", divider.id, f"ratio {ratio} is not allowed ({divider.ratio.describe()})"))
    for consumer in board.consumers:
        findings += check_consumer_frequency(consumer, freqs.nodes.get(consumer.id), board.margin_warning)
        findings += check_consumer_standard(consumer)
    return findings
