"""A PLL's loop filter on a board: found, completed with the plan's N and PFD, evaluated.

What ``clockplan loop BOARD PLL`` runs. N and the PFD frequency come from the
analysed settings, never from the ``loop_filter`` table; the jitter of the
consumers the PLL feeds (with this filter in the loop) is shown beside it.
"""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

from clockplan.errors import BoardError, did_you_mean
from clockplan.parts import Pll

if TYPE_CHECKING:
    from rich.console import Group

    from clockplan.analysis import Analysis
    from clockplan.loopfilter.evaluate import LoopFilterResult

__all__ = ["board_loop_filter", "loop_document", "loop_view"]


def _find_pll(analysis: "Analysis", pll_id: str) -> tuple[int, Pll]:
    board = analysis.board
    for index, pll in enumerate(board.plls):
        if pll.id == pll_id:
            return index, pll
    ids = [pll.id for pll in board.plls]
    if pll_id in board.all_ids():
        message = f"{pll_id!r} is not a PLL"
    else:
        message = f"no PLL {pll_id!r} on the board"
    hint = did_you_mean(pll_id, ids) or ("the PLLs are " + ", ".join(ids) if ids else "the board has no PLL")
    raise BoardError(message, file=board.source_file, hint=hint)


def board_loop_filter(analysis: "Analysis", pll_id: str) -> "LoopFilterResult":
    """Evaluate the loop filter of PLL ``pll_id`` at the N and PFD frequency of ``analysis``.

    Raises
    ------
    BoardError
        No such PLL (with the closest ids), no ``loop_filter`` table, or no
        settings yet for the PLL.

    Examples
    --------
    >>> from clockplan.analysis import analyze  # doctest: +SKIP
    >>> from clockplan.boardfile import load_board  # doctest: +SKIP
    >>> result = board_loop_filter(analyze(load_board("boards/sampling-receiver.toml")), "conv_synth")  # doctest: +SKIP
    >>> result.chosen.order  # doctest: +SKIP
    3
    """
    from clockplan.loopfilter.evaluate import evaluate_loop_filter

    index, pll = _find_pll(analysis, pll_id)
    board = analysis.board
    key = f"pll[{index}]"
    if pll.loop_filter is None:
        raise BoardError(
            f"PLL {pll_id} has no loop_filter table",
            file=board.source_file,
            key=key,
            line=board.lines.get(key),
            hint="add a [pll.loop_filter] table below its [[pll]] section with charge_pump, kvco, "
            "bandwidth and phase_margin (docs/loop-filter.md)",
        )
    point = analysis.frequencies.plls.get(pll_id)
    if point is None:
        raise BoardError(
            f"PLL {pll_id} has no settings yet: the loop filter needs N and the PFD frequency from the plan",
            file=board.source_file,
            key=f"{key}.settings",
            line=board.lines.get(f"{key}.settings") or board.lines.get(key),
            hint="run 'clockplan plan' first, or give the PLL's settings (r, n and every output divider)",
        )
    config = pll.loop_filter
    return evaluate_loop_filter(config, config.spec(point.setting.n, point.pfd_hz))


def _fed_consumers(analysis: "Analysis", pll_id: str) -> list[Any]:
    return [c for c in analysis.consumers if pll_id in c.chain and c.jitter is not None]


def loop_document(analysis: "Analysis", pll_id: str, result: "LoopFilterResult") -> dict[str, Any]:
    """The JSON document of ``clockplan loop``: :func:`result_document` plus the PLL and its consumers' jitter.

    Examples
    --------
    >>> loop_document(analysis, "conv_synth", result)["pll"]  # doctest: +SKIP
    'conv_synth'
    """
    from clockplan.loopfilter.evaluate import result_document

    document = {"pll": pll_id, "board": {"name": analysis.board.name, "file": analysis.board.source_file}}
    document.update(result_document(result))
    document["consumers"] = [
        {
            "id": c.id,
            "jitter_rms_s": c.jitter.rms_seconds,
            "jitter_band_hz": list(c.jitter.band_hz),
            "jitter_budget_s": c.jitter.budget_seconds,
            "jitter_dominant": c.jitter.dominant,
            "loop_filter_jitter_s": dict(c.jitter.contributions()).get(f"{pll_id} loop filter"),
        }
        for c in _fed_consumers(analysis, pll_id)
    ]
    return document


def loop_view(analysis: "Analysis", pll_id: str, result: "LoopFilterResult") -> "Group":
    """What ``clockplan loop`` prints: the filter report, then the jitter of the consumers it feeds."""
    from rich.console import Group
    from rich.table import Table

    from clockplan.jitter.consumer import format_band
    from clockplan.loopfilter.render import render_loop_filter
    from clockplan.units import format_time

    parts: list[Any] = [render_loop_filter(result)]
    consumers = _fed_consumers(analysis, pll_id)
    if consumers:
        table = Table(title=f"Jitter of the clocks {pll_id} feeds, with this filter", title_justify="left")
        hottest = f"{analysis.board.temperature_c[1]:g} °C"
        for header in ("consumer", "band", "jitter", "budget", f"of which filter R noise ({hottest})", "dominant"):
            table.add_column(header, justify="left" if header in ("consumer", "band", "dominant") else "right")
        for consumer in consumers:
            jitter = consumer.jitter
            cells = jitter.table_cells()
            filter_noise = dict(jitter.contributions()).get(f"{pll_id} loop filter")
            table.add_row(
                consumer.id,
                format_band(jitter.band_hz),
                cells["jitter"],
                cells["jitter budget"],
                format_time(filter_noise) if filter_noise is not None else "-",
                cells["jitter dominant"],
            )
        parts.append(table)
    return Group(*parts)
