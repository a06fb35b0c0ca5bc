"""The JSON document: a stable contract for CI scripts and other tools.

Documented key by key in ``docs/json-output.md``. Keys listed there are
stable; new keys may be added. Exact values travel as strings (``"p/q"``),
numbers as JSON numbers; an exact zero error is the integer ``0``.
"""

from __future__ import annotations

import json as _json
import math
from fractions import Fraction
from typing import Any

from clockplan.analysis import CAVEAT, Analysis, ConsumerResult
from clockplan.units import format_exact
from clockplan.verdicts import unchecked_consumers

__all__ = ["SCHEMA_VERSION", "analysis_document", "dumps", "number"]

SCHEMA_VERSION = 1


def number(value: Fraction | float | None) -> int | float | None:
    """A JSON number for an exact or float value; whole values become integers."""
    if value is None:
        return None
    if isinstance(value, Fraction) and value.denominator == 1:
        return value.numerator
    return float(value)


def _ppm(error: Fraction | None) -> int | float | None:
    if error is None:
        return None
    return number(error * 10**6)


def _consumer(result: ConsumerResult, status: str, chain_status: str) -> dict[str, Any]:
    doc: dict[str, Any] = {
        "id": result.id,
        "source_chain": list(result.chain),
        "target_hz": number(result.target_hz),
        "target_hz_exact": format_exact(result.target_hz),
        "actual_hz": number(result.actual_hz),
        "actual_hz_exact": format_exact(result.actual_hz) if result.actual_hz is not None else None,
        "synthesis_error_ppm": _ppm(result.synthesis_error),
        "synthesis_error_exact": format_exact(result.synthesis_error) if result.synthesis_error is not None else None,
        "status": status,
        "chain_status": chain_status,
        "unchecked": list(result.unchecked),
    }
    for extra in (result.accuracy, result.jitter):
        if extra is not None and hasattr(extra, "json_fields"):
            doc.update(extra.json_fields())
    return doc


def _loop_model(pll: Any) -> tuple[str | None, str | None]:
    """The PLL's loop model (short key) and the loop in words, as the jitter stage uses them."""
    if pll.loop is None and pll.loop_filter is None:
        return None, None
    from clockplan.jitter.tree import loop_model_of

    return (pll.loop.model if pll.loop is not None else "loop_filter"), loop_model_of(pll)


def _plls(analysis: Analysis) -> list[dict[str, Any]]:
    plls = []
    for pll in analysis.board.plls:
        model, summary = _loop_model(pll)
        setting = analysis.settings.plls.get(pll.id)
        point = analysis.frequencies.plls.get(pll.id)
        plls.append(
            {
                "id": pll.id,
                "mode": pll.mode,
                "r": setting.r if setting else None,
                "n": format_exact(setting.n) if setting else None,
                "pfd_hz": number(point.pfd_hz) if point else None,
                "vco_hz": number(point.vco_hz) if point else None,
                "vco_hz_exact": format_exact(point.vco_hz) if point else None,
                "outputs": dict(setting.dividers) if setting else {},
                "spur_offset_hz": number(_spur_offset(point)) if point else None,
                "loop_model": model,
                "loop": summary,
            }
        )
    return plls


def _chain_status(analysis: Analysis, consumer_id: str) -> str:
    from clockplan.report.content import consumer_status

    return {"PASS": "pass", "warn": "warn", "unchecked": "unchecked", "FAIL": "fail"}[consumer_status(analysis, consumer_id)]


def _spur_offset(point) -> Fraction | None:
    from clockplan.plan.spurs import boundary_spur_offset

    return boundary_spur_offset(point.pfd_hz, point.setting.n)


def _status(analysis: Analysis, node: str) -> str:
    severities = {f.severity.value for f in analysis.findings if f.node == node}
    if "error" in severities:
        return "fail"
    if analysis.consumer(node).unchecked:
        return "unchecked"
    return "warn" if "warning" in severities else "pass"


def _verdict(analysis: Analysis) -> str:
    from clockplan.report.content import board_verdict

    return board_verdict(analysis).lower()


def analysis_document(analysis: Analysis, command: str = "audit") -> dict[str, Any]:
    """The JSON-ready document for an analysis.

    Examples
    --------
    >>> doc = analysis_document(result)  # doctest: +SKIP
    >>> doc["consumers"][0]["synthesis_error_ppm"]  # doctest: +SKIP
    0
    """
    board = analysis.board
    doc: dict[str, Any] = {
        "schema": SCHEMA_VERSION,
        "command": command,
        "board": {
            "name": board.name,
            "file": board.source_file,
            "temperature_c": list(board.temperature_c),
            "lifetime_s": board.lifetime_s,
            "assumed_conditions": list(board.unstated),
            "accuracy_policy": board.accuracy_policy,
        },
        "verdict": _verdict(analysis),
        "unchecked": {"count": len(unchecked_consumers(analysis)), "consumers": list(unchecked_consumers(analysis))},
        "margin_warning": float(board.margin_warning),
        "consumers": [_consumer(c, _status(analysis, c.id), _chain_status(analysis, c.id)) for c in analysis.consumers],
        "plls": _plls(analysis),
        "dividers": [
            {"id": d.id, "ratio": analysis.settings.dividers.get(d.id), "output_hz": number(analysis.frequencies.nodes.get(d.id))}
            for d in board.dividers
        ],
        "findings": [
            {"severity": f.severity.value, "code": f.code, "node": f.node, "message": f.message} for f in analysis.findings
        ],
        "caveat": CAVEAT,
    }
    for key, value in analysis.extras.items():
        if hasattr(value, "json_fields"):
            doc[key] = value.json_fields()
    return doc


def dumps(document: dict[str, Any]) -> str:
    """Serialise deterministically (same input, byte-identical output).

    A float that is NaN or infinite (JSON has no such number) is written as
    ``null``: the analysis has already raised a ``non-finite`` error finding for
    any budget figure that came out so, and the writer never refuses a document.
    """
    try:
        return _json.dumps(document, indent=2, ensure_ascii=False, allow_nan=False) + "\n"
    except ValueError:
        return _json.dumps(_finite(document), indent=2, ensure_ascii=False, allow_nan=False) + "\n"


def _finite(value: Any) -> Any:
    """``value`` with every non-finite float replaced by None (recursively)."""
    if isinstance(value, float):
        return value if math.isfinite(value) else None
    if isinstance(value, dict):
        return {key: _finite(item) for key, item in value.items()}
    if isinstance(value, (list, tuple)):
        return [_finite(item) for item in value]
    return value
