"""What every report says, as plain text cells: the one source for all formats.

The terminal, Markdown, HTML and CSV renderers draw the same tables, the
same summary and the same tree from here, so a number reads the same in each.
Nothing in this module styles anything: status is always a word (``PASS``,
``warn``, ``unchecked``, ``FAIL``), so meaning never depends on colour. A
consumer with a budget that could not be computed is ``unchecked``, never
``PASS`` (:mod:`clockplan.verdicts`).

Budget results (``ConsumerResult.accuracy`` and ``.jitter``) join in through
small optional hooks, documented in ``DEVELOPERS.md``:

``table_cells() -> dict[str, str]``
    extra columns for the consumer table;
``budget_margin() -> tuple[float, str] | None``
    the fraction of the budget left (``0.38`` = 38 % left, negative = over)
    and a short text such as ``"+62 ppm of ±100 ppm"``.
"""

from __future__ import annotations

import math
from collections.abc import Iterable
from dataclasses import dataclass
from fractions import Fraction
from typing import Any

from clockplan.analysis import Analysis, ConsumerResult
from clockplan.findings import Finding, Severity
from clockplan.margins import synthesis_headroom
from clockplan.verdicts import unchecked_consumers
from clockplan.units import format_exact, format_frequency, format_ppm

__all__ = [
    "Column",
    "TextTable",
    "Margin",
    "TreeNode",
    "Summary",
    "STATUS_WORDS",
    "VERDICT_WORDS",
    "POLICY_TEXT",
    "NO_MARGINS",
    "NO_MARGINS_UNCHECKED",
    "status_of",
    "consumer_status",
    "board_verdict",
    "status_codes",
    "format_tolerance",
    "consumer_margins",
    "worst_margins",
    "extra_cells",
    "consumers_table",
    "settings_table",
    "operating_mode",
    "findings_table",
    "clock_tree",
    "tree_text",
    "summarize",
    "ExtraSection",
    "extra_sections",
    "WIDE_COLUMNS",
    "compact_consumers_table",
    "format_share",
    "unused_outputs",
    "thin_consumers",
    "budget_origin",
    "budgets_table",
]

#: From this many columns the terminal shows the full consumer table; below it, one line per consumer.
WIDE_COLUMNS = 160

#: The words a status can be; reports may colour them but never replace them.
STATUS_WORDS = ("PASS", "warn", "unchecked", "FAIL")
#: The board verdict's words: no error and every budget checked, some budget not checked, an error.
VERDICT_WORDS = ("PASS", "UNCHECKED", "FAIL")

#: How the summary names the board's ``accuracy_policy`` (docs/frequency-accuracy.md).
POLICY_TEXT = {
    "worst-case": "worst case (every tolerance at its limit, at the worst temperature and age; the default)",
    "statistical": (
        "statistical total (RSS), as the board asks (accuracy_policy = \"statistical\"): "
        "a board with its parts at their limits may still fail"
    ),
}

#: What the summary says when no consumer has a margin to show.
NO_MARGINS = "none to show (every target is exact and no ppm or jitter budget is set)"
#: The same when budgets are set but none could be computed.
NO_MARGINS_UNCHECKED = "none to show (every target is exact; the ppm or jitter budgets set are unchecked)"



@dataclass(frozen=True)
class Column:
    """A table column: its header and whether numbers in it align right."""

    header: str
    align: str = "left"


@dataclass(frozen=True)
class TextTable:
    """A titled table of plain text cells.

    ``status_column`` is the index of a column holding a status or severity
    word, which renderers may colour (the word itself stays).
    """

    title: str
    columns: tuple[Column, ...]
    rows: tuple[tuple[str, ...], ...]
    status_column: int | None = None

    @property
    def headers(self) -> tuple[str, ...]:
        """The column headers in order."""
        return tuple(c.header for c in self.columns)


@dataclass(frozen=True)
class Margin:
    """How much of one budget a consumer has left.

    ``headroom`` is the fraction of the budget still free: ``0.25`` means a
    quarter left, ``0`` exactly at the limit, negative over it; ``-inf``
    marks an exact target that is missed (there is no budget to be inside).
    """

    kind: str
    consumer: str
    headroom: float
    text: str

    @property
    def describe(self) -> str:
        """``'38 % left'``, ``'over by 12 %'``, ``'41x the budget'`` or ``'exact target missed'``."""
        return format_share(self.headroom)


@dataclass(frozen=True)
class TreeNode:
    """One node of the clock tree as reports draw it."""

    id: str
    role: str
    label: str
    status: str | None
    children: tuple["TreeNode", ...]


@dataclass(frozen=True)
class Summary:
    """The head of a report: what board, what conditions, how it went."""

    board: str
    file: str | None
    references: tuple[str, ...]
    conditions: str
    margins: tuple[Margin, ...]
    failing: tuple[str, ...]
    verdict: str
    errors: int
    warnings: int
    consumers: int
    unchecked: tuple[str, ...] = ()
    accuracy_policy: str | None = None
    monte_carlo: str | None = None
    thin: tuple[str, ...] = ()
    margin_warning: str | None = None
    unused: tuple[str, ...] = ()

    @property
    def counts(self) -> str:
        """``'1 error(s), 0 warning(s), 6 consumer(s)'``, and ``', 2 unchecked'`` when budgets were not checked."""
        text = f"{self.errors} error(s), {self.warnings} warning(s), {self.consumers} consumer(s)"
        return text + (f", {len(self.unchecked)} unchecked" if self.unchecked else "")

    @property
    def lead_facts(self) -> tuple[tuple[str, str], ...]:
        """What a reviewer reads first: the yield, the failing, unchecked and thin consumers."""
        facts = []
        if self.monte_carlo is not None:
            facts.append(("Monte Carlo", self.monte_carlo))
        if self.failing:
            facts.append(("failing", "; ".join(self.failing)))
        if self.unchecked:
            facts.append(("unchecked", "; ".join(self.unchecked)))
        if self.thin:
            facts.append(("thin margin", "; ".join(self.thin)))
        return tuple(facts)

    @property
    def context_facts(self) -> tuple[tuple[str, str], ...]:
        """What the verdict was judged under: the policy applied, then the references, conditions, unused outputs."""
        facts = []
        if self.accuracy_policy is not None:
            facts.append(("ppm policy", POLICY_TEXT.get(self.accuracy_policy, self.accuracy_policy)))
        if self.margin_warning is not None:
            facts.append(("margin warning", self.margin_warning))
        facts += [("references", "; ".join(self.references)), ("conditions", self.conditions)]
        if self.unused:
            facts.append(("unused outputs", "; ".join(self.unused)))
        return tuple(facts)

    @property
    def facts(self) -> tuple[tuple[str, str], ...]:
        """Every ``(label, text)`` line after the title and verdict: the lead facts, then the context.

        Reports print the worst margins between the two (:attr:`lead_facts`,
        :attr:`margin_lines`, :attr:`context_facts`).
        """
        return self.lead_facts + self.context_facts

    @property
    def margin_lines(self) -> tuple[str, ...]:
        """One line per worst margin, e.g. ``'synthesis: uart_clk 32.1 % left (-1.357 % of ±2 %)'``."""
        if not self.margins:
            return (NO_MARGINS_UNCHECKED if self.unchecked else NO_MARGINS,)
        return tuple(f"{m.kind}: {m.consumer} {m.describe} ({m.text})" for m in self.margins)


def _three_digits(value: float) -> str:
    """``value`` to three significant digits, no exponent, no trailing zeros (``0.0123``, ``12.3``, ``4,100``)."""
    if value == 0:
        return "0"
    digits = max(0, 2 - math.floor(math.log10(abs(value))))
    rounded = round(value, digits)
    if rounded != 0 and math.floor(math.log10(abs(rounded))) > math.floor(math.log10(abs(value))):
        digits = max(0, digits - 1)  # 99.96 rounds up to 100.0: keep three digits, not four
        rounded = round(value, digits)
    text = f"{rounded:,.{digits}f}"
    return text.rstrip("0").rstrip(".") if "." in text else text


def format_share(headroom: float) -> str:
    """The share of a budget left, for people: three significant digits, never an exponent.

    ``headroom`` is ``1 - used / budget``. Up to twice the budget the overrun
    reads as a percentage; beyond it as a multiple of the budget, which a
    reviewer takes in at once (``41x the budget`` rather than ``over by 4e+03 %``).

    Examples
    --------
    >>> format_share(0.3214), format_share(0.0), format_share(-0.12)
    ('32.1 % left', '0 % left', 'over by 12 %')
    >>> format_share(-40.0), format_share(-1.0), format_share(float("-inf"))
    ('41x the budget', 'over by 100 %', 'exact target missed')
    """
    if math.isinf(headroom) or math.isnan(headroom):
        return "exact target missed" if headroom < 0 else "no budget to measure"
    if headroom < -1:
        return f"{_three_digits(1 - headroom)}x the budget"
    if headroom < 0:
        return f"over by {_three_digits(-headroom * 100)} %"
    return f"{_three_digits(headroom * 100)} % left"


def status_of(analysis: Analysis, node: str) -> str:
    """``FAIL`` if an error finding is on ``node``, ``warn`` for a warning, else ``PASS``."""
    severities = {f.severity for f in analysis.findings if f.node == node}
    if Severity.ERROR in severities:
        return "FAIL"
    return "warn" if Severity.WARNING in severities else "PASS"


def _status_findings(analysis: Analysis, consumer_id: str) -> list[Finding]:
    """The findings that set a consumer's status: errors on it or on any part of its chain
    (a PLL that cannot run fails its consumers), warnings on the consumer itself."""
    chain = set(analysis.consumer(consumer_id).chain)
    return [f for f in analysis.findings
            if (f.node == consumer_id and f.severity is not Severity.INFO)
            or (f.node in chain and f.severity is Severity.ERROR)]


def consumer_status(analysis: Analysis, consumer_id: str) -> str:
    """``FAIL`` for an error on the consumer or its chain; ``unchecked`` when a budget it has a limit
    for could not be computed; ``warn`` for a warning on it; else ``PASS``.

    The JSON ``status`` key is the consumer's own findings only (the contract);
    ``chain_status`` and every human report use this one. Both say
    ``unchecked`` rather than pass or warn for a budget not computed.
    """
    severities = {f.severity for f in _status_findings(analysis, consumer_id)}
    if Severity.ERROR in severities:
        return "FAIL"
    if analysis.consumer(consumer_id).unchecked:
        return "unchecked"
    return "warn" if Severity.WARNING in severities else "PASS"


def board_verdict(analysis: Analysis) -> str:
    """``FAIL`` on any error finding, else ``UNCHECKED`` when a consumer's budget was not computed, else ``PASS``."""
    if analysis.has_errors:
        return "FAIL"
    return "UNCHECKED" if unchecked_consumers(analysis) else "PASS"


def status_codes(analysis: Analysis, consumer_id: str) -> list[str]:
    """The codes of the findings behind a consumer's status, e.g. ``['ppm-budget', 'vco-range']``."""
    return sorted({f.code for f in _status_findings(analysis, consumer_id)})


def format_tolerance(fraction: Fraction | float) -> str:
    """A symmetric tolerance for people: ``'±2 %'`` from 0.1 % up, else ``'±20 ppm'``.

    Examples
    --------
    >>> format_tolerance(Fraction(1, 50))
    '±2 %'
    >>> format_tolerance(Fraction(1, 50000))
    '±20 ppm'
    """
    if fraction == 0:
        return "exact"
    magnitude = abs(float(fraction))
    if magnitude >= 1e-3:
        return f"±{magnitude * 100:.4g} %"
    return f"±{magnitude * 1e6:.4g} ppm"


def _synthesis_margin(analysis: Analysis, result: ConsumerResult) -> Margin | None:
    error = result.synthesis_error
    if error is None:
        return None
    allowed = analysis.board.part(result.id).max_synthesis_error
    if allowed == 0:
        if error == 0:
            return None  # an exact target met exactly: there is no budget to measure room in
        return Margin("synthesis", result.id, -math.inf, f"{format_ppm(error)} off an exact target")
    headroom = float(synthesis_headroom(error, allowed))
    shown = f"{float(error) * 100:+.4g} %" if abs(allowed) >= Fraction(1, 1000) else format_ppm(error)
    return Margin("synthesis", result.id, headroom, f"{shown} of {format_tolerance(allowed)}")


def _hook_margin(kind: str, consumer: str, budget: Any) -> Margin | None:
    hook = getattr(budget, "budget_margin", None)
    if budget is None or not callable(hook):
        return None
    answer = hook()
    if answer is None:
        return None
    headroom, text = answer
    return Margin(kind, consumer, float(headroom), str(text))


def consumer_margins(analysis: Analysis, result: ConsumerResult) -> list[Margin]:
    """Every margin known for one consumer: synthesis, then ppm and jitter via their hooks."""
    found = [
        _synthesis_margin(analysis, result),
        _hook_margin("ppm", result.id, result.accuracy),
        _hook_margin("jitter", result.id, result.jitter),
    ]
    return [m for m in found if m is not None]


def worst_margins(analysis: Analysis) -> list[Margin]:
    """For each kind of budget, the consumer with the least room, in a fixed kind order."""
    worst: dict[str, Margin] = {}
    for result in analysis.consumers:
        for margin in consumer_margins(analysis, result):
            if margin.kind not in worst or margin.headroom < worst[margin.kind].headroom:
                worst[margin.kind] = margin
    return [worst[k] for k in ("synthesis", "ppm", "jitter") if k in worst]


def extra_cells(result: ConsumerResult) -> dict[str, str]:
    """The budget columns the accuracy and jitter results offer (``table_cells()``)."""
    cells: dict[str, str] = {}
    for extra in (result.accuracy, result.jitter):
        if extra is not None and hasattr(extra, "table_cells"):
            cells.update({str(k): str(v) for k, v in extra.table_cells().items()})
    return cells


def _extra_headers(results: Iterable[ConsumerResult]) -> list[str]:
    headers: list[str] = []
    for result in results:
        for header in extra_cells(result):
            if header not in headers:
                headers.append(header)
    return headers


def _margin_cell(margins: list[Margin]) -> str:
    if not margins:
        return "-"
    least = min(margins, key=lambda m: m.headroom)
    return f"{least.kind}: {least.describe}"


def consumers_table(analysis: Analysis) -> TextTable:
    """One row per consumer: target, achieved, synthesis error, budget cells, margin, status.

    Where each consumer's clock comes from is the tree's job (and the JSON's
    ``source_chain``); leaving it out keeps the table readable at 100 columns.
    """
    extra = _extra_headers(analysis.consumers)
    columns = [Column("consumer"), Column("target", "right"), Column("achieved", "right"),
               Column("synthesis error", "right")]
    columns += [Column(h, "right") for h in extra]
    columns += [Column("margin"), Column("status")]
    rows = []
    for result in analysis.consumers:
        cells = extra_cells(result)
        rows.append((
            result.id,
            format_frequency(result.target_hz),
            format_frequency(result.actual_hz) if result.actual_hz is not None else "unset",
            format_ppm(result.synthesis_error) if result.synthesis_error is not None else "-",
            *[cells.get(h, "-") for h in extra],
            _margin_cell(consumer_margins(analysis, result)),
            consumer_status(analysis, result.id),
        ))
    return TextTable("Consumers", tuple(columns), tuple(rows), status_column=len(columns) - 1)


def _compact_frequency(result: ConsumerResult) -> str:
    """The achieved frequency (``≈`` when inexact; the tree and the wide table give the target beside it)."""
    return format_frequency(result.actual_hz) if result.actual_hz is not None else "unset"


def _compact_margin(analysis: Analysis, result: ConsumerResult) -> str:
    """The worst margin; for a consumer with a budget not checked, that budget (its margin is unknown,
    so a margin that passes is never shown as its worst), unless a known margin already fails."""
    margins = consumer_margins(analysis, result)
    least = min(margins, key=lambda m: m.headroom) if margins else None
    if result.unchecked and (least is None or least.headroom >= 0):
        return ", ".join(result.unchecked) + ": unchecked"
    if least is not None and math.isinf(least.headroom):
        return least.describe  # only a synthesis margin is infinite: "exact target missed"
    return f"{least.kind}: {least.describe}" if least is not None else "-"


def compact_consumers_table(analysis: Analysis) -> TextTable:
    """One short line per consumer: id, frequency, status, and its worst margin with the budget's kind.

    The terminal's default below :data:`WIDE_COLUMNS` columns; every column is
    in :func:`consumers_table` (``--wide``, Markdown, HTML, CSV, JSON).
    """
    columns = (Column("consumer"), Column("frequency", "right"), Column("status"), Column("worst margin"))
    rows = tuple(
        (result.id, _compact_frequency(result), consumer_status(analysis, result.id),
         _compact_margin(analysis, result))
        for result in analysis.consumers
    )
    return TextTable("Consumers", columns, rows, status_column=2)


#: How the notes of a budget derived from the board's figures begin (clockplan.standards.resolve).
_DERIVATIONS = ("Converter SNR", "UART", "CAN", "RTC")


def _derivations(notes: str) -> list[str]:
    """The sentences of a budget's notes that derive a figure from the board's own (SNR, baud, drift)."""
    import re

    sentences = re.split(r"(?<=\.)\s+(?=[A-Z])", notes.strip()) if notes else []
    return [s for s in sentences if s.startswith(_DERIVATIONS)]


def budget_origin(consumer: Any) -> str:
    """Where a consumer's ppm and jitter budget comes from, in one line.

    A standard's budget names its key, confidence and source (and the fields
    the board replaced); a budget the board derives from a converter's SNR,
    a baud rate or a drift shows that derivation (the figures and the result).

    Examples
    --------
    >>> budget_origin(board.part("adc_clk"))  # doctest: +SKIP
    'the board: Converter SNR 70 dB at 180 MHz input: jitter at most 280 fs RMS (...)'
    """
    budget = getattr(consumer, "budget", None)
    if budget is None:
        return "no ppm or jitter budget"
    derived = _derivations(getattr(budget, "notes", ""))
    if budget.key == "inline":
        return "the board's own figures" + (": " + " ".join(derived) if derived else "")
    text = f"standard {budget.key} (confidence: {budget.confidence})"
    if budget.source:
        text += f"; source: {budget.source}"
    if budget.overridden:
        text += f"; the board sets its own {', '.join(budget.overridden)}"
    if derived:
        text += ": " + " ".join(derived)
    return text


def budgets_table(analysis: Analysis) -> TextTable:
    """Each consumer's description (from the board file) and where its budget comes from."""
    columns = (Column("consumer"), Column("description"), Column("budget from"))
    rows = tuple(
        (result.id, getattr(analysis.board.part(result.id), "description", None) or "-",
         budget_origin(analysis.board.part(result.id)))
        for result in analysis.consumers
    )
    return TextTable("Budgets and where they come from", columns, rows)


def settings_table(analysis: Analysis) -> TextTable | None:
    """The settings of every PLL and plain divider, or None if the board has neither."""
    board = analysis.board
    if not board.plls and not board.dividers:
        return None
    from clockplan.plan.spurs import boundary_spur_offset

    columns = (Column("part"), Column("mode"), Column("R", "right"), Column("N", "right"),
               Column("PFD", "right"), Column("VCO", "right"), Column("spur offset", "right"), Column("output dividers"))
    rows = []
    for pll in board.plls:
        setting = analysis.settings.plls.get(pll.id)
        point = analysis.frequencies.plls.get(pll.id)
        rows.append((
            pll.id,
            operating_mode(pll, setting),
            str(setting.r) if setting else "-",
            format_exact(setting.n) if setting else "-",
            format_frequency(point.pfd_hz) if point else "-",
            format_frequency(point.vco_hz) if point else "-",
            # The integer-boundary spur of a fractional-N setting ("-" for an integer N).
            _frequency_or_dash(boundary_spur_offset(point.pfd_hz, point.setting.n) if point else None),
            ", ".join(f"{name}=/{d}" for name, d in setting.dividers.items()) if setting else "unset",
        ))
    for divider in board.dividers:
        ratio = analysis.settings.dividers.get(divider.id)
        rows.append((divider.id, "divider", "-", "-", "-", "-", "-", f"/{ratio}" if ratio else "unset"))
    return TextTable("Settings", columns, tuple(rows))


def operating_mode(pll: Any, setting: Any) -> str:
    """How a PLL runs with ``setting``: ``"frac-N"`` when N has a fraction, else ``"int-N"``.

    A fractional part at a whole N works as integer-N (its modulator idle, no
    fractional spurs), so it reads int-N too. Without a setting, the part's own mode.
    """
    if setting is None:
        return "frac-N" if pll.mode == "fractional" else "int-N"
    return "frac-N" if Fraction(setting.n).denominator != 1 else "int-N"


def _frequency_or_dash(hz: Fraction | None) -> str:
    return format_frequency(hz) if hz is not None else "-"


def findings_table(analysis: Analysis) -> TextTable | None:
    """Every finding, most serious first (board order within a severity), or None."""
    if not analysis.findings:
        return None
    ordered = sorted(analysis.findings, key=lambda f: -f.severity.rank)
    rows = tuple((f.severity.value, f.code, f.node, f.message) for f in ordered)
    columns = (Column("severity"), Column("code"), Column("part"), Column("message"))
    return TextTable("Findings", columns, rows, status_column=0)


def _node_label(analysis: Analysis, node: str) -> tuple[str, str | None]:
    graph = analysis.graph
    role = graph.nodes[node]["role"]
    hz = analysis.frequencies.nodes.get(node)
    text = f"{node} ({role.replace('_', ' ')})"
    if hz is None:
        text += " unset"
    elif role == "pll":
        text += f" VCO {format_frequency(hz)}"
    else:
        text += f" {format_frequency(hz)}"
    if role != "consumer":
        return text, None
    status = consumer_status(analysis, node)
    result = analysis.consumer(node)
    if result.synthesis_error:
        text += f" (target {format_frequency(result.target_hz)})"
    return text, status


def clock_tree(analysis: Analysis) -> tuple[TreeNode, ...]:
    """The tree from each reference down to its consumers, children in name order."""
    graph = analysis.graph

    def grow(node: str) -> TreeNode:
        label, status = _node_label(analysis, node)
        children = tuple(grow(child) for child in sorted(graph.successors(node)))
        return TreeNode(node, graph.nodes[node]["role"], label, status, children)

    return tuple(grow(ref.id) for ref in analysis.board.references)


def tree_text(analysis: Analysis) -> str:
    """The clock tree as plain text with box-drawing branches (for code blocks and logs).

    Examples
    --------
    >>> print(tree_text(result))  # doctest: +SKIP
    Video format converter
    └── ref_27m (reference) 27 MHz
        ├── audio_pll (pll) VCO 491.4 MHz
    """
    lines = [analysis.board.name]

    def draw(node: TreeNode, prefix: str, last: bool) -> None:
        status = f" {node.status}" if node.status else ""
        lines.append(f"{prefix}{'└── ' if last else '├── '}{node.label}{status}")
        inner = prefix + ("    " if last else "│   ")
        for index, child in enumerate(node.children):
            draw(child, inner, index == len(node.children) - 1)

    roots = clock_tree(analysis)
    for index, root in enumerate(roots):
        draw(root, "", index == len(roots) - 1)
    return "\n".join(lines)


def _conditions(analysis: Analysis) -> str:
    from clockplan.ppm.conditions import conditions_text

    return conditions_text(analysis.board)


def summarize(analysis: Analysis) -> Summary:
    """The summary every report starts with.

    Examples
    --------
    >>> summarize(result).verdict  # doctest: +SKIP
    'FAIL'
    """
    errors = sum(f.severity is Severity.ERROR for f in analysis.findings)
    warnings = sum(f.severity is Severity.WARNING for f in analysis.findings)
    references = tuple(f"{r.id} {format_frequency(r.frequency)} ({r.kind})" for r in analysis.board.references)
    failing = [f"{r.id} ({', '.join(status_codes(analysis, r.id))})" for r in analysis.consumers
               if consumer_status(analysis, r.id) == "FAIL"]
    return Summary(
        board=analysis.board.name,
        file=analysis.board.source_file,
        references=references,
        conditions=_conditions(analysis),
        margins=tuple(worst_margins(analysis)),
        failing=tuple(failing),
        verdict=board_verdict(analysis),
        errors=errors,
        warnings=warnings,
        consumers=len(analysis.consumers),
        unchecked=tuple(f"{r.id} ({', '.join(r.unchecked)})" for r in analysis.consumers if r.unchecked),
        accuracy_policy=_applied_policy(analysis),
        monte_carlo=_monte_carlo_text(analysis),
        thin=tuple(thin_consumers(analysis)),
        margin_warning=_margin_warning_text(analysis),
        unused=tuple(unused_outputs(analysis)),
    )


def _monte_carlo_text(analysis: Analysis) -> str | None:
    """The whole-board yield of the Monte Carlo run, or None when none ran."""
    run = analysis.extras.get("monte_carlo")
    board_yield = getattr(run, "board_yield", None)
    if run is None or board_yield is None:
        return None
    if not math.isfinite(board_yield):
        return "no yield (the run gave no finite figure)"
    samples = getattr(run, "samples", 0)
    requested = getattr(run, "requested", 0) or samples
    boards = f"{samples:,} boards" if samples >= requested else f"{samples:,} of {requested:,} boards (time limit)"
    return f"{board_yield * 100:.2f} % of {boards} keep every ppm budget (frequency error only)"


def _margin_warning_text(analysis: Analysis) -> str:
    from clockplan.margins import format_margin_warning

    threshold = analysis.board.margin_warning
    if threshold == 0:
        return "off (margin_warning = \"0 %\")"
    return f"{format_margin_warning(threshold)} (a passing budget with less left is thin)"


def thin_consumers(analysis: Analysis) -> list[str]:
    """Consumers that pass a budget with less room than the board's ``margin_warning``, e.g. ``'sfp_a (jitter 9.5 % left)'``."""
    from clockplan.margins import is_thin

    threshold = analysis.board.margin_warning
    found = []
    for result in analysis.consumers:
        thin = [m for m in consumer_margins(analysis, result)
                if math.isfinite(m.headroom) and is_thin(m.headroom, threshold)]
        if thin:
            found.append(f"{result.id} ({', '.join(f'{m.kind} {m.describe}' for m in thin)})")
    return found


def unused_outputs(analysis: Analysis) -> list[str]:
    """PLL outputs given a divider (so running) that feed nothing, with the frequency they run at.

    A running output nobody uses still draws power and its edges can couple
    into the outputs that matter (spurs): worth turning off where the part allows.
    """
    graph = analysis.graph
    found = []
    for pll in analysis.board.plls:
        setting = analysis.settings.plls.get(pll.id)
        if setting is None:
            continue
        for name in setting.dividers:
            node = f"{pll.id}.{name}"
            if node in graph and not any(True for _ in graph.successors(node)):
                hz = analysis.frequencies.nodes.get(node)
                at = f" at {format_frequency(hz)}" if hz is not None else ""
                found.append(f"{node}{at} feeds nothing (it still draws power and can add spurs: "
                             "turn it off if the part allows)")
    return found


def _applied_policy(analysis: Analysis) -> str | None:
    """The board's accuracy policy when some frequency-error budget was judged under it, else None."""
    judged = any(getattr(r.accuracy, "judged", False) for r in analysis.consumers)
    return analysis.board.accuracy_policy if judged else None


@dataclass(frozen=True)
class ExtraSection:
    """A board-wide section a budget stage adds (``Analysis.extras``): a table, or preformatted text."""

    table: TextTable | None = None
    text: str | None = None


def _rendered_text(renderable: Any, width: int) -> str:
    import io

    from rich.console import Console

    class _AsciiBoxes(io.StringIO):
        # rich draws tables with ASCII rules for a non-UTF-8 stream; heavy box glyphs are missing
        # from many monospace fonts and break up in a browser or a code-hosting site.
        encoding = "ascii"

    buffer = _AsciiBoxes()
    Console(file=buffer, width=width, no_color=True, force_terminal=False, highlight=False).print(renderable)
    return "\n".join(line.rstrip() for line in buffer.getvalue().rstrip().splitlines())


def extra_sections(analysis: Analysis, width: int = 100) -> list[ExtraSection]:
    """The sections the budget stages put in ``Analysis.extras``, for the Markdown and HTML reports.

    An extra offering ``report_table() -> (title, headers, rows)`` becomes a
    table; one offering only ``rich_renderable()`` (its terminal view) is kept
    as preformatted text, so nothing a stage reports is left out.
    """
    sections = []
    for extra in analysis.extras.values():
        if callable(getattr(extra, "report_table", None)):
            title, headers, rows = extra.report_table()
            columns = tuple(Column(str(h)) for h in headers)
            sections.append(ExtraSection(table=TextTable(str(title), columns, tuple(tuple(map(str, r)) for r in rows))))
        elif callable(getattr(extra, "rich_renderable", None)):
            sections.append(ExtraSection(text=_rendered_text(extra.rich_renderable(), width)))
    return sections
