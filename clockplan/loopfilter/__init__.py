"""Passive loop filters for charge-pump PLLs: design, E-series fitting, loop response, noise.

Submodules:

- :mod:`~clockplan.loopfilter.symbolic` -- sympy derivation of Z(s), G(s) and the design equations;
- :mod:`~clockplan.loopfilter.closed_form` -- the derived results as plain formulas (what runs);
- :mod:`~clockplan.loopfilter.design` -- :class:`LoopSpec`, :class:`FilterDesign`, design and snapping;
- :mod:`~clockplan.loopfilter.response` -- open/closed-loop polynomials in s, margins, lock time;
- :mod:`~clockplan.loopfilter.noise` -- resistor thermal noise at the output;
- :mod:`~clockplan.loopfilter.board` -- the board file's ``loop_filter`` table;
- :mod:`~clockplan.loopfilter.evaluate` -- design, snap and measure in one step;
- :mod:`~clockplan.loopfilter.render` -- rich tables for the CLI.

Importing this package is cheap: numpy and rich load only when a function
that needs them is first used; sympy only for the derivation itself, never on
the design, analysis or CLI path.
"""

from __future__ import annotations

from importlib import import_module
from typing import Any

__all__ = [
    "LoopSpec",
    "FilterDesign",
    "design_filter",
    "design_second_order",
    "design_third_order",
    "snap_design",
    "LoopFilterConfig",
    "parse_loop_filter",
    "closed_loop_polynomials",
    "error_polynomials",
    "open_loop_polynomials",
    "loop_margins",
    "lock_time",
    "loop_filter_phase_noise",
    "LoopFilterResult",
    "evaluate_loop_filter",
    "render_loop_filter",
]

_HOME = {
    "LoopSpec": "design",
    "FilterDesign": "design",
    "design_filter": "design",
    "design_second_order": "design",
    "design_third_order": "design",
    "snap_design": "design",
    "LoopFilterConfig": "board",
    "parse_loop_filter": "board",
    "closed_loop_polynomials": "response",
    "error_polynomials": "response",
    "open_loop_polynomials": "response",
    "loop_margins": "response",
    "lock_time": "response",
    "loop_filter_phase_noise": "noise",
    "LoopFilterResult": "evaluate",
    "evaluate_loop_filter": "evaluate",
    "render_loop_filter": "render",
}


def __getattr__(name: str) -> Any:
    # Lazy exports (PEP 562) keep `import clockplan.loopfilter` free of numpy and rich.
    if name in _HOME:
        return getattr(import_module(f"clockplan.loopfilter.{_HOME[name]}"), name)
    raise AttributeError(f"module 'clockplan.loopfilter' has no attribute {name!r}")
