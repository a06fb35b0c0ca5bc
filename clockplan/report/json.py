"""The JSON document: a stable contract for CI scripts and other tools.

Documented key by key in ``docs/json-output.md``. Keys listed there are
stable; new keys may be added. Exact values travel as strings (``"p/q"``),
numbers as JSON numbers; an exact zero error is the integer ``0``.
"""

from __future__ import annotations

import json as _json
from fractions import Fraction
from typing import Any

from clockplan.analysis import CAVEAT, Analysis, ConsumerResult
from clockplan.units import format_exact

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
    }
    for extra in (result.accuracy, result.jitter):
        if extra is not None and hasattr(extra, "json_fields"):
            doc.update(extra.json_fields())
    return doc


def _plls(analysis: Analysis) -> list[dict[str, Any]]:
    plls = []
    for pll in analysis.board.plls:
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
            }
        )
    return plls


def _chain_status(analysis: Analysis, consumer_id: str) -> str:
    from clockplan.report.content import consumer_status

    return {"PASS": "pass", "warn": "warn", "FAIL": "fail"}[consumer_status(analysis, consumer_id)]


def _spur_offset(point) -> Fraction | None:
    from clockplan.plan.spurs import boundary_spur_offset

    return boundary_spur_offset(point.pfd_hz, point.setting.n)


def _status(analysis: Analysis, node: str) -> str:
    severities = {f.severity.value for f in analysis.findings if f.node == node}
    return "fail" if "error" in severities else "warn" if "warning" in severities else "pass"


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
        },
        "verdict": "fail" if analysis.has_errors else "pass",
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
    """Serialise deterministically (same input, byte-identical output)."""
    return _json.dumps(document, indent=2, ensure_ascii=False, allow_nan=False) + "\n"
