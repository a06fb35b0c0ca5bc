"""The board as the accuracy stage sees it: each consumer's reference, spread, synthesis error and budget.

Every PLL and divider locked to a reference passes the reference's error
through unchanged and adds its own exact synthesis error, so a consumer's
chain reduces to three things: the reference at its root, the exact
synthesis error of the whole chain (``actual / target - 1``, computed by the
exact audit), and the spread of any spreading PLL output on the way.
Consumers on different references get their own chains.

A reference without accuracy keys gets the typical figures of its kind's
grade (``clockplan/data/oscillator_grades.toml``) where the kind has one
(``rc``, ``crystal``, ``xo``, ``tcxo``, ``ocxo``), the one commonly made at
its frequency (a 32.768 kHz crystal is a tuning-fork watch crystal, not a
megahertz AT-cut one), always marked as assumed; a ``vcxo`` or ``mems``
without figures is not checked.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from fractions import Fraction
from typing import TYPE_CHECKING

from clockplan.errors import BoardError
from clockplan.ppm.accuracy import ConsumerBudget
from clockplan.ppm.display import format_limits
from clockplan.ppm.grades import Grade
from clockplan.ppm.montecarlo import ConsumerChain
from clockplan.ppm.oscillator import OscillatorSpec
from clockplan.ppm.results import BASIS_BOARD, BASIS_NONE, BASIS_TYPICAL
from clockplan.ppm.spread import SpreadAllowance, SpreadSpectrum

if TYPE_CHECKING:
    from clockplan.analysis import Analysis
    from clockplan.parts import Board, Reference
    from clockplan.standards.model import StandardBudget

__all__ = [
    "TYPICAL_GRADE",
    "GRADE_RANK",
    "consumer_budget",
    "ReferenceModel",
    "reference_models",
    "ConsumerLink",
    "consumer_links",
    "board_chains",
]

#: The grades whose typical figures stand in for a reference of this kind without accuracy data: the
#: first one commonly made at the reference's frequency, else the last (the megahertz grade).
TYPICAL_GRADE = {
    "rc": ("lf-rc", "rc"),
    "crystal": ("watch-crystal", "xo"),
    "xo": ("xo",),
    "tcxo": ("rtc-tcxo", "tcxo"),
    "ocxo": ("ocxo",),
}
#: Where each kind sits on the grade ladder (on-chip RC < crystal/XO < TCXO < OCXO).
GRADE_RANK = {"rc": 0, "crystal": 1, "xo": 1, "vcxo": 1, "mems": 1, "tcxo": 2, "ocxo": 3}


def _allowance(spread: tuple[Fraction, Fraction], rate: tuple[Fraction, Fraction] | None) -> SpreadAllowance | None:
    """A standard's allowed sweep ``(min, max)`` as a mode and depth.

    An asymmetric sweep that crosses zero (not a shape any standard we know
    uses) is read as the largest centre-spread inside it: never more than allowed.
    """
    low, high = spread
    if low == high == 0:
        return None
    if high == 0:
        return SpreadAllowance("down", -low, rate)
    if low == 0:
        return SpreadAllowance("up", high, rate)
    return SpreadAllowance("center", 2 * min(-low, high), rate)


def consumer_budget(budget: "StandardBudget | None") -> ConsumerBudget | None:
    """The ppm core's budget for a consumer's resolved standard budget; ``None`` when it sets no tolerance.

    Examples
    --------
    >>> from clockplan.standards import get_standard
    >>> pcie = consumer_budget(get_standard("pcie-gen3"))
    >>> pcie.tolerance[1] * 10**6, pcie.spread_allowance.mode, pcie.spread_allowance.max_depth * 10**6
    (Fraction(300, 1), 'down', Fraction(5000, 1))
    """
    if budget is None or budget.ppm is None:
        return None
    allowance = _allowance(budget.spread, budget.spread_rate_hz) if budget.spread is not None else None
    return ConsumerBudget(budget.ppm, allowance)


def _budget_source(budget: "StandardBudget") -> str:
    if budget.key != "inline":
        return f"{budget.key}, {budget.confidence}"
    derived = budget.notes.split(":", 1)[0] if budget.notes else ""
    return derived or "board file"


@dataclass(frozen=True)
class ReferenceModel:
    """A board reference with the accuracy figures the stage uses and where they come from."""

    reference: "Reference"
    index: int
    spec: OscillatorSpec | None
    basis: str
    grade: Grade | None = None


def _key(board: "Board", index: int, name: str) -> tuple[str, int | None]:
    key = f"reference[{index}].{name}"
    return key, board.lines.get(key) or board.lines.get(f"reference[{index}]")


def _typical_grade(reference: "Reference", by_name: dict[str, Grade]) -> Grade | None:
    """The typical grade for a reference without data: its kind's grade made at its frequency."""
    candidates = [by_name[name] for name in TYPICAL_GRADE.get(reference.kind, ()) if name in by_name]
    made = [grade for grade in candidates if grade.made_at(reference.frequency)]
    if made:
        return made[0]
    return candidates[-1] if candidates else None


def reference_models(board: "Board", grades: Sequence[Grade]) -> tuple[ReferenceModel, ...]:
    """Each reference's figures: the board's, else its kind's typical grade, else none.

    Raises
    ------
    BoardError
        A temperature table that does not cover the board's temperature range,
        located at the reference's key.
    """
    by_name = {grade.name: grade for grade in grades}
    models = []
    for index, reference in enumerate(board.references):
        spec = reference.oscillator
        if spec is not None:
            try:
                spec.temperature.extremes(*board.temperature_c)
            except BoardError as err:
                key, line = _key(board, index, "temperature_curve")
                raise err.located(file=board.source_file, key=key, line=line) from None
            models.append(ReferenceModel(reference, index, spec, BASIS_BOARD))
        elif (grade := _typical_grade(reference, by_name)) is not None:
            models.append(ReferenceModel(reference, index, grade.spec, BASIS_TYPICAL, grade))
        else:
            models.append(ReferenceModel(reference, index, None, BASIS_NONE))
    return tuple(models)


@dataclass(frozen=True)
class ConsumerLink:
    """One consumer's chain reduced to what its frequency error depends on.

    ``synthesis_error`` is ``None`` when a setting upstream is missing;
    ``budget`` is ``None`` when the consumer sets no frequency tolerance.
    ``extra_spreads`` names spreading outputs further up the chain than the
    one used (only the nearest is modelled).
    """

    id: str
    reference: str
    synthesis_error: Fraction | None
    spread: SpreadSpectrum | None
    budget: ConsumerBudget | None
    budget_source: str
    extra_spreads: tuple[str, ...] = ()


def _spreads(analysis: "Analysis", chain: Sequence[str]) -> list[tuple[str, SpreadSpectrum]]:
    """Spreading outputs on a chain, nearest to the consumer first."""
    graph = analysis.graph
    found = []
    for node in reversed(chain):
        attributes = graph.nodes[node]
        if attributes["role"] == "pll_output" and attributes["part"].spread is not None:
            found.append((node, attributes["part"].spread))
    return found


def consumer_links(analysis: "Analysis") -> tuple[ConsumerLink, ...]:
    """Every consumer's reference, exact synthesis error, spread and ppm budget, board order.

    Raises
    ------
    BoardError
        A budget that does not contain 0 (a ``ppm`` override such as ``"10..20 ppm"``),
        located at the consumer's ``ppm`` key.
    """
    board = analysis.board
    links = []
    for index, result in enumerate(analysis.consumers):
        consumer = board.part(result.id)
        try:
            budget = consumer_budget(consumer.budget)
        except BoardError:
            key = f"consumer[{index}].ppm"
            raise BoardError(
                f"the budget {format_limits(consumer.budget.ppm)} does not contain 0 (the nominal frequency)",
                file=board.source_file,
                key=key,
                line=board.lines.get(key) or board.lines.get(f"consumer[{index}]"),
                hint="a budget is an error range around nominal, e.g. '±100 ppm' or '-50..+30 ppm'",
            ) from None
        spreads = _spreads(analysis, result.chain)
        links.append(
            ConsumerLink(
                id=result.id,
                reference=result.chain[0],
                synthesis_error=result.synthesis_error,
                spread=spreads[0][1] if spreads else None,
                budget=budget,
                budget_source=_budget_source(consumer.budget) if budget is not None else "",
                extra_spreads=tuple(node for node, _ in spreads[1:]),
            )
        )
    return tuple(links)


def board_chains(
    models: Sequence[ReferenceModel], links: Sequence[ConsumerLink]
) -> tuple[list[OscillatorSpec], list[ConsumerChain]]:
    """The Monte Carlo's view: references with figures, and one chain per judged consumer on them.

    Examples
    --------
    ``specs, chains = board_chains(reference_models(board, load_grades()), consumer_links(analysis))``
    then ``monte_carlo_yield(specs, chains, board.temperature_c, board.lifetime_s)``.
    """
    usable = [m for m in models if m.spec is not None]
    slot = {m.reference.id: i for i, m in enumerate(usable)}
    chains = [
        ConsumerChain(slot[link.reference], link.synthesis_error, link.budget, link.spread, name=link.id)
        for link in links
        if link.reference in slot and link.budget is not None and link.synthesis_error is not None
    ]
    return [m.spec for m in usable], chains
