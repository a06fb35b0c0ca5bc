"""The analysis pipeline: settings -> exact frequencies -> budgets -> findings.

:func:`analyze` is what ``clockplan audit`` (and ``plan``, after solving) runs.
It builds the graph, propagates exact frequencies, checks every constraint,
then hands the result to each budget stage in turn (ppm, jitter); each stage
returns a new :class:`Analysis` with its per-consumer results and findings.
Last, :func:`clockplan.verdicts.judge` marks the budgets no stage could check.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass, field, replace
from fractions import Fraction
from typing import TYPE_CHECKING, Any

from clockplan.audit import check_settings
from clockplan.findings import Finding, Severity, worst_severity
from clockplan.frequency import Frequencies, propagate, synthesis_error
from clockplan.graph import build_graph, chain_to
from clockplan.parts import Board, Settings
from clockplan.verdicts import judge

if TYPE_CHECKING:
    import networkx as nx

__all__ = ["AnalysisOptions", "ConsumerResult", "Analysis", "Stage", "analyze", "STAGES", "CAVEAT"]

#: Printed with every report: the numbers are estimates for planning.
CAVEAT = (
    "Budgets are planning estimates: the part datasheets and the governing standard decide. "
    "Verify the clock tree on hardware over temperature before release."
)


@dataclass(frozen=True)
class AnalysisOptions:
    """Knobs for the budget stages (Monte Carlo size, seed, progress callback, deadline).

    ``deadline`` is a ``time.monotonic()`` instant after which a long stage (the
    Monte Carlo) stops early and says so in its result and a finding.
    ``loop_bandwidth_hz`` is the bandwidth of the in-band spur check for a PLL
    that states none (None: the default of :mod:`clockplan.plan.spurs`).
    """

    samples: int = 0
    seed: int | None = None
    progress: Callable[[float], None] | None = None
    deadline: float | None = None
    loop_bandwidth_hz: Fraction | None = None


@dataclass(frozen=True)
class ConsumerResult:
    """Everything computed for one consumer.

    ``synthesis_error`` is exact (``actual / target - 1``); ``accuracy`` and
    ``jitter`` are filled by the budget stages when the board gives the data.
    ``unchecked`` names the budgets (``"ppm"``, ``"jitter"``) the consumer has a
    limit for but no result on (:mod:`clockplan.verdicts`): never a PASS.
    """

    id: str
    chain: tuple[str, ...]
    target_hz: Fraction
    actual_hz: Fraction | None
    synthesis_error: Fraction | None
    accuracy: Any = None
    jitter: Any = None
    unchecked: tuple[str, ...] = ()


@dataclass(frozen=True)
class Analysis:
    """The result of analysing a board with a set of settings."""

    board: Board
    settings: Settings
    frequencies: Frequencies
    consumers: tuple[ConsumerResult, ...]
    findings: tuple[Finding, ...]
    graph: Any = field(default=None, compare=False, repr=False)
    extras: dict[str, Any] = field(default_factory=dict, compare=False)

    def consumer(self, consumer_id: str) -> ConsumerResult:
        """The result for one consumer."""
        for result in self.consumers:
            if result.id == consumer_id:
                return result
        raise KeyError(consumer_id)

    def with_consumer(self, result: ConsumerResult) -> "Analysis":
        """A copy with one consumer's result replaced."""
        consumers = tuple(result if c.id == result.id else c for c in self.consumers)
        return replace(self, consumers=consumers)

    def with_findings(self, findings: list[Finding]) -> "Analysis":
        """A copy with ``findings`` appended."""
        return replace(self, findings=self.findings + tuple(findings))

    @property
    def worst(self) -> Severity | None:
        """The most serious finding's severity, or None."""
        return worst_severity(self.findings)

    @property
    def has_errors(self) -> bool:
        """True if any finding is an error."""
        return self.worst is Severity.ERROR


#: A budget stage takes an analysis and returns it enriched.
Stage = Callable[[Analysis, AnalysisOptions], Analysis]

def _accuracy_stage(analysis: Analysis, options: AnalysisOptions) -> Analysis:
    # Imported on use: the ppm package brings numpy, which the CLI must not load at start-up.
    from clockplan.ppm.stage import accuracy_stage

    return accuracy_stage(analysis, options)


#: The budget stages run after the exact frequency audit, in order.
STAGES: list[Stage] = [_accuracy_stage]


def _jitter_stage(analysis: Analysis, options: AnalysisOptions) -> Analysis:
    # Imported on first use: the jitter model needs numpy.
    from clockplan.jitter.stage import jitter_stage

    return jitter_stage(analysis, options)


STAGES.append(_jitter_stage)


def _consumer_results(board: Board, graph: "nx.DiGraph", freqs: Frequencies) -> tuple[ConsumerResult, ...]:
    results = []
    for consumer in board.consumers:
        actual = freqs.nodes.get(consumer.id)
        error = synthesis_error(actual, consumer.frequency) if actual is not None else None
        chain = tuple(chain_to(graph, consumer.id)[:-1])
        results.append(ConsumerResult(consumer.id, chain, consumer.frequency, actual, error))
    return tuple(results)


def analyze(board: Board, settings: Settings | None = None, options: AnalysisOptions | None = None) -> Analysis:
    """Analyse ``board`` with ``settings`` (default: the settings its file gives).

    Examples
    --------
    >>> from clockplan.boardfile import load_board  # doctest: +SKIP
    >>> result = analyze(load_board("boards/industrial-gateway.toml"))  # doctest: +SKIP
    >>> result.consumer("phy0").synthesis_error  # doctest: +SKIP
    Fraction(0, 1)
    """
    settings = settings if settings is not None else board.given_settings()
    options = options or AnalysisOptions()
    graph = build_graph(board)
    freqs = propagate(board, graph, settings)
    analysis = Analysis(
        board=board,
        settings=settings,
        frequencies=freqs,
        consumers=_consumer_results(board, graph, freqs),
        findings=tuple(check_settings(board, settings, freqs, options.loop_bandwidth_hz, graph)),
        graph=graph,
    )
    for stage in STAGES:
        analysis = stage(analysis, options)
    return judge(_non_finite_findings(analysis))


def _non_finite(value: Any, path: str) -> list[str]:
    """The paths inside ``value`` (a JSON-like result) whose float is NaN or infinite."""
    found: list[str] = []
    stack = [(value, path)]
    while stack:
        item, where = stack.pop()
        if isinstance(item, float) and not math.isfinite(item):
            found.append(f"{where} = {item}")
        elif isinstance(item, dict):
            stack += [(v, f"{where}.{k}") for k, v in item.items()]
        elif isinstance(item, (list, tuple)):
            stack += [(v, f"{where}[{i}]") for i, v in enumerate(item)]
    return sorted(found)


def _non_finite_findings(analysis: Analysis) -> Analysis:
    """An error finding for every budget figure that came out NaN or infinite (never a silent NaN).

    The load-time ranges (:mod:`clockplan.limits`) keep inputs physical, so this
    should not fire; if a model still overflows, the consumer's verdict fails
    with the figure named instead of printing ``nan`` as a pass.
    """
    findings = []
    for result in analysis.consumers:
        for name in ("accuracy", "jitter"):
            part = getattr(result, name, None)
            if part is None or not hasattr(part, "json_fields"):
                continue
            for where in _non_finite(part.json_fields(), name):
                findings.append(Finding(
                    Severity.ERROR, "non-finite", result.id,
                    f"{result.id}: the {name} budget computed {where}: a value outside what the model can "
                    "handle; the budget is not judged. Check the part figures on its chain",
                ))
    for key, extra in analysis.extras.items():
        if hasattr(extra, "json_fields"):
            for where in _non_finite(extra.json_fields(), key):
                findings.append(Finding(
                    Severity.ERROR, "non-finite", key,
                    f"{key}: computed {where}: a value outside what the model can handle; check the board's figures",
                ))
    return analysis.with_findings(findings) if findings else analysis
