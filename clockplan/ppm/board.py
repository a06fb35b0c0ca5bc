"""The board as the accuracy stage sees it: each consumer's reference, spread, synthesis error and budget.

Every PLL and divider locked to a reference passes the reference's error
through unchanged and adds its own exact synthesis error, so a consumer's
chain reduces to three things: the reference at its root, the exact
synthesis error of the whole chain (``actual / target - 1``, computed by the
exact audit), and the spread the chain inherits (made by a PLL on the way,
which reaches every output of it, or by an output that spreads alone:
:mod:`clockplan.spreading`). A PLL further down passes the whole sweep.
Consumers on different references get their own chains.

A reference without accuracy keys gets the typical figures of its kind's
grade (``clockplan/data/oscillator_grades.toml``) where the kind has one
(``rc``, ``crystal``, ``xo``, ``tcxo``, ``ocxo``), always marked as assumed;
a ``vcxo`` or ``mems`` without figures is not checked. Figures whose
stability band is not rated over the board's temperature range (the
board's or the typical grade's) are not used either: the band says nothing
outside its rated range (basis ``unrated-band``; the stage reports it).
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
from clockplan.ppm.results import BASIS_BOARD, BASIS_NONE, BASIS_TYPICAL, BASIS_UNRATED
from clockplan.ppm.spread import SpreadSpectrum
from clockplan.ppm.temperature import NO_TEMPERATURE_MODEL, StabilityBand
from clockplan.spreading import SpreadSource, spread_allowance, spreads_on_chain

if TYPE_CHECKING:
    from clockplan.analysis import Analysis
    from clockplan.parts import Board, Reference
    from clockplan.standards.model import StandardBudget

__all__ = [
    "TYPICAL_GRADE",
    "GRADE_RANK",
    "consumer_budget",
    "band_rated_over",
    "ReferenceModel",
    "reference_models",
    "ConsumerLink",
    "consumer_links",
    "board_chains",
]

#: The grade whose typical figures stand in for a reference of this kind without accuracy data.
TYPICAL_GRADE = {"rc": "rc", "crystal": "xo", "xo": "xo", "tcxo": "tcxo", "ocxo": "ocxo"}
#: Where each kind sits on the grade ladder (on-chip RC < crystal/XO < TCXO < OCXO).
GRADE_RANK = {"rc": 0, "crystal": 1, "xo": 1, "vcxo": 1, "mems": 1, "tcxo": 2, "ocxo": 3}


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
    return ConsumerBudget(budget.ppm, spread_allowance(budget))


def _budget_source(budget: "StandardBudget") -> str:
    if budget.key != "inline":
        return f"{budget.key}, {budget.confidence}"
    derived = budget.notes.split(":", 1)[0] if budget.notes else ""
    return derived or "board file"


def band_rated_over(spec: OscillatorSpec, temperature_c: tuple[float, float]) -> bool:
    """False when ``spec``'s stability band is not rated over ``temperature_c`` (a curve, or no data: True).

    Examples
    --------
    >>> from clockplan.units import parse_ppm
    >>> band = StabilityBand(*parse_ppm("±1 ppm"), rated_c=(0.0, 70.0))
    >>> spec = OscillatorSpec("tcxo", parse_ppm("±2 ppm"), band)
    >>> band_rated_over(spec, (0.0, 70.0)), band_rated_over(spec, (-40.0, 85.0))
    (True, False)
    """
    band = spec.temperature
    if not isinstance(band, StabilityBand) or band == NO_TEMPERATURE_MODEL:
        return True
    return band.rated_over(*temperature_c)


@dataclass(frozen=True)
class ReferenceModel:
    """A board reference with the accuracy figures the stage uses and where they come from.

    ``unrated`` holds the figures that were not used (basis ``unrated-band``):
    their stability band is not rated over the board's temperature range.
    """

    reference: "Reference"
    index: int
    spec: OscillatorSpec | None
    basis: str
    grade: Grade | None = None
    unrated: OscillatorSpec | None = None


def _key(board: "Board", index: int, name: str) -> tuple[str, int | None]:
    key = f"reference[{index}].{name}"
    return key, board.lines.get(key) or board.lines.get(f"reference[{index}]")


def reference_models(board: "Board", grades: Sequence[Grade]) -> tuple[ReferenceModel, ...]:
    """Each reference's figures: the board's, else its kind's typical grade, else none.

    Figures whose stability band is not rated over the board's temperature
    range are kept aside (``unrated``), with the basis ``unrated-band`` and no ``spec``.

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
                if "temperature" in board.unstated:
                    from clockplan.ppm.conditions import TEMPERATURE_HINT

                    # The table is not wrong: the board never said where it runs (the 25 °C stand-in).
                    raise BoardError(
                        f"reference {reference.id!r} has a temperature table, but the board states no operating "
                        "temperature", file=board.source_file, key="board.temperature",
                        line=board.lines.get("board"), hint=TEMPERATURE_HINT,
                    ) from None
                key, line = _key(board, index, "temperature_curve")
                raise err.located(file=board.source_file, key=key, line=line) from None
            if band_rated_over(spec, board.temperature_c):
                models.append(ReferenceModel(reference, index, spec, BASIS_BOARD))
            else:
                models.append(ReferenceModel(reference, index, None, BASIS_UNRATED, unrated=spec))
        elif reference.kind in TYPICAL_GRADE and TYPICAL_GRADE[reference.kind] in by_name:
            grade = by_name[TYPICAL_GRADE[reference.kind]]
            if band_rated_over(grade.spec, board.temperature_c):
                models.append(ReferenceModel(reference, index, grade.spec, BASIS_TYPICAL, grade))
            else:
                models.append(ReferenceModel(reference, index, None, BASIS_UNRATED, grade, unrated=grade.spec))
        else:
            models.append(ReferenceModel(reference, index, None, BASIS_NONE))
    return tuple(models)


@dataclass(frozen=True)
class ConsumerLink:
    """One consumer's chain reduced to what its frequency error depends on.

    ``synthesis_error`` is ``None`` when a setting upstream is missing;
    ``budget`` is ``None`` when the consumer sets no frequency tolerance.
    ``spread_source`` says where the inherited ``spread`` is made (a board
    holds at most one spread per clock path, :func:`clockplan.spreading.check_spreads`).
    """

    id: str
    reference: str
    synthesis_error: Fraction | None
    spread: SpreadSpectrum | None
    budget: ConsumerBudget | None
    budget_source: str
    spread_source: SpreadSource | None = None


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
        spreads = spreads_on_chain(board, analysis.graph, result.chain)
        links.append(
            ConsumerLink(
                id=result.id,
                reference=result.chain[0],
                synthesis_error=result.synthesis_error,
                spread=spreads[0].spread if spreads else None,
                budget=budget,
                budget_source=_budget_source(consumer.budget) if budget is not None else "",
                spread_source=spreads[0] if spreads else None,
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
