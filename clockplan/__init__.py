"""clockplan: plan and audit the clock tree of an electronic board.

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
    "analyze",
    "rms_jitter",
]
__version__ = "0.1.0"

_LAZY = {
    "load_board": "clockplan.boardfile",
    "parse_board": "clockplan.boardfile",
    "analyze": "clockplan.analysis",
    "rms_jitter": "clockplan.jitter",
}


def __getattr__(name: str) -> Any:
    module = _LAZY.get(name)
    if module is None:
        raise AttributeError(f"module 'clockplan' has no attribute {name!r}")
    import importlib

    return getattr(importlib.import_module(module), name)
