"""Findings: the problems (and notes) an analysis reports, one per fact."""

from __future__ import annotations

from dataclasses import dataclass
from enum import Enum

__all__ = ["Severity", "Finding", "worst_severity"]


class Severity(str, Enum):
    """How serious a finding is; ``error`` breaks a constraint or a budget."""

    INFO = "info"
    WARNING = "warning"
    ERROR = "error"

    @property
    def rank(self) -> int:
        """0 for info, 1 for warning, 2 for error."""
        return ("info", "warning", "error").index(self.value)


@dataclass(frozen=True)
class Finding:
    """One problem or note.

    Parameters
    ----------
    severity
        error, warning or info.
    code
        A short stable code such as ``vco-range`` (documented in docs/json-output.md).
    node
        The part (or ``pll.output``) it concerns.
    message
        What is wrong and how to fix it.
    """

    severity: Severity
    code: str
    node: str
    message: str


def worst_severity(findings: "list[Finding] | tuple[Finding, ...]") -> Severity | None:
    """The most serious severity among ``findings``, or None if there are none."""
    if not findings:
        return None
    return max((f.severity for f in findings), key=lambda s: s.rank)
