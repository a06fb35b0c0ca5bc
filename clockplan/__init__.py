"""clockplan: plan and audit the clock tree of an electronic board."""

from clockplan.errors import BoardError, ClockplanError, InfeasibleError, UnitError

__all__ = ["BoardError", "ClockplanError", "InfeasibleError", "UnitError"]
__version__ = "0.1.0"
