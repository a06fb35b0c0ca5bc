"""CSV: the consumer table, one row per consumer, for spreadsheets and scripts.

The columns are the keys of ``consumers[]`` in the JSON contract
(``docs/json-output.md``), in the same order and with the same values, so a
script can switch between the two; ``source_chain`` is joined with ``" > "``.
Budget results add their ``json_fields()`` keys as further columns: a nested
table becomes dotted columns (``jitter.rms_s``), a list is written as JSON text. Written per RFC 4180 by Python's
``csv`` module: comma separated, quoted where needed, CRLF line ends.
"""

from __future__ import annotations

import csv as _csv
import io
import json as _json
from typing import Any

from clockplan.analysis import Analysis
from clockplan.report.json import analysis_document

__all__ = ["CHAIN_SEPARATOR", "consumer_rows", "render_csv"]

#: Joins the nodes of ``source_chain`` in one cell.
CHAIN_SEPARATOR = " > "


def _cell(value: Any) -> str:
    if value is None:
        return ""
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, (dict, tuple)) or (isinstance(value, list) and not all(isinstance(v, str) for v in value)):
        return _json.dumps(value, ensure_ascii=False, sort_keys=True)
    if isinstance(value, list):
        return CHAIN_SEPARATOR.join(value)
    return str(value)


def _table_paths(value: Any, prefix: str = "") -> set[str]:
    """Every key path that holds a non-empty table somewhere in ``value``."""
    paths: set[str] = set()
    if isinstance(value, dict):
        for key, item in value.items():
            if isinstance(item, dict) and item:
                paths.add(prefix + key)
                paths |= _table_paths(item, f"{prefix}{key}.")
    return paths


def _flatten(doc: dict[str, Any], tables: set[str], prefix: str = "") -> dict[str, Any]:
    """Nested tables become dotted columns (``jitter.rms_s``), as a spreadsheet wants them.

    A table that one consumer has and another lacks (null) leaves the other's
    dotted cells empty, rather than adding a column of its own.
    """
    flat: dict[str, Any] = {}
    for key, value in doc.items():
        path = prefix + key
        if isinstance(value, dict) and value:
            flat.update(_flatten(value, tables, f"{path}."))
        elif not (path in tables and value is None):
            flat[path] = value
    return flat


def consumer_rows(analysis: Analysis) -> tuple[list[str], list[list[str]]]:
    """The header and the rows of the CSV: JSON consumer keys, then any budget keys.

    Examples
    --------
    >>> header, rows = consumer_rows(result)  # doctest: +SKIP
    >>> header[:3]  # doctest: +SKIP
    ['id', 'source_chain', 'target_hz']
    """
    documents = analysis_document(analysis)["consumers"]
    tables = set().union(*(_table_paths(doc) for doc in documents)) if documents else set()
    consumers = [_flatten(doc, tables) for doc in documents]
    header: list[str] = []
    for doc in consumers:
        header += [key for key in doc if key not in header]
    rows = [[_cell(doc.get(key)) for key in header] for doc in consumers]
    return header, rows


def render_csv(analysis: Analysis) -> str:
    """The consumer table as CSV text.

    Examples
    --------
    >>> import csv, io
    >>> rows = list(csv.DictReader(io.StringIO(render_csv(result))))  # doctest: +SKIP
    >>> rows[0]["status"]  # doctest: +SKIP
    'pass'
    """
    header, rows = consumer_rows(analysis)
    buffer = io.StringIO(newline="")
    writer = _csv.writer(buffer)
    writer.writerow(header)
    writer.writerows(rows)
    return buffer.getvalue()
