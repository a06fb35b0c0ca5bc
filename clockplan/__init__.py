"""clockplan: plan and audit the clock tree of an electronic board.

Everything the command line does is a library call::

    import clockplan
    board = clockplan.load_board("boards/edge-router.toml")
    plan = clockplan.plan_board(board)
    analysis = clockplan.analyze(board, plan.settings)

The public API is re-exported here. Heavy parts (numpy-based jitter and ppm
computations) load on first use so that importing clockplan, and the
``clockplan`` command's start-up, stay fast.
"""

from typing import Any

from clockplan.errors import BoardError, ClockplanError, InfeasibleError, UnitError

__all__ = [
    "BoardError",
    "ClockplanError",
    "InfeasibleError",
    "UnitError",
    "load_board",
    "parse_board",
    "plan_board",
    "PlanOptions",
    "analyze",
    "AnalysisOptions",
    "analysis_document",
    "load_consumer_list",
    "synthesize",
    "SynthesisOptions",
    "rms_jitter",
]
__version__ = "0.1.0"

_LAZY = {
    "load_board": "clockplan.boardfile",
    "parse_board": "clockplan.boardfile",
    "plan_board": "clockplan.plan.board_planner",
    "PlanOptions": "clockplan.plan.board_planner",
    "analyze": "clockplan.analysis",
    "AnalysisOptions": "clockplan.analysis",
    "analysis_document": "clockplan.report.json",
    "load_consumer_list": "clockplan.synth",
    "synthesize": "clockplan.synth",
    "SynthesisOptions": "clockplan.synth",
    "rms_jitter": "clockplan.jitter",
}


def __getattr__(name: str) -> Any:
    module = _LAZY.get(name)
    if module is None:
        raise AttributeError(f"module 'clockplan' has no attribute {name!r}")
    import importlib

    return getattr(importlib.import_module(module), name)
