"""``clockplan new``: a commented starter board file to edit into your own.

The starter is a small invented board that audits clean, with a comment on
every key, so that the first edit starts from something that works. It is
never written over an existing file.
"""

from __future__ import annotations

from pathlib import Path

from clockplan.fileio import atomic_create_text

__all__ = ["STARTER_BOARD", "starter_text", "write_starter"]

STARTER_BOARD = '''\
# A clockplan board file (TOML). Every key is described in docs/board-format.md.
# This starter is an invented board: replace its parts with yours.
#
#   clockplan audit THIS_FILE              check it (exit status 0 = no error finding)
#   clockplan explain THIS_FILE eth_phy    see why one consumer passes or fails
#
# Quantities are text with units and are read exactly: "24 MHz", "148.5/1.001 MHz",
# "±20 ppm", "-40 C". A bare number is in SI units (Hz for a frequency).

[board]
name = {name}
temperature = ["-40 C", "85 C"]   # operating range [coldest, hottest]
lifetime = "10 years"             # how long the reference ages
# accuracy_policy = "statistical" # ppm budgets are judged worst case unless you ask for the RSS total

# A reference oscillator: the root of every clock chain.
[[reference]]
id = "ref"                        # a letter, then letters, digits, _ or -
frequency = "24 MHz"
kind = "xo"                       # crystal, xo, vcxo, tcxo, ocxo, mems or rc

# A PLL: f_pfd = f_in / R, f_vco = f_pfd x N, f_out = f_vco / D for each output.
# Ranges come from the part's datasheet; settings are your design (leave them
# out, or some of them, and `clockplan plan` chooses them).
[[pll]]
id = "sys_pll"
input = "ref"
vco = ["2.5 GHz", "3.2 GHz"]      # VCO range
pfd = ["10 MHz", "100 MHz"]       # phase-detector frequency range
r = [1, 16]                       # allowed input dividers
n = [16, 255]                     # feedback ratio range
mode = "integer"                  # or "fractional" (then give denominator or max_denominator)
outputs.eth = {{ divider = [4, 256] }}
outputs.core = {{ divider = {{ min = 4, max = 256, step = 2 }} }}   # even dividers only
# 24 MHz / 1 x 125 = 3 GHz; / 24 = 125 MHz and / 30 = 100 MHz, both exact.
settings = {{ r = 1, n = 125, outputs = {{ eth = 24, core = 30 }} }}

# A plain integer divider.
[[divider]]
id = "uart_div"
input = "sys_pll.core"            # a PLL is used through one of its outputs: "pll.output"
ratio = [1, 4096]
settings = {{ ratio = 54 }}         # 100 MHz / 54 = 1.85185... MHz

# A fanout buffer copies one clock to several loads.
[[buffer]]
id = "core_fanout"
input = "sys_pll.core"
outputs = 4                       # how many loads it can drive

# Consumers: the loads that need a clock.
[[consumer]]
id = "eth_phy"
source = "sys_pll.eth"
frequency = "125 MHz"
standard = "1000BASE-T"           # the standards library supplies its ppm and jitter budget

[[consumer]]
id = "soc_core"
source = "core_fanout"
frequency = "100 MHz"

[[consumer]]
id = "fpga_ref"
source = "core_fanout"
frequency = "100 MHz"

[[consumer]]
id = "uart"
description = "UART baud clock, 16 x 115200 baud"
source = "uart_div"
frequency = "1.8432 MHz"
max_synthesis_error = "±2 %"      # a UART tolerates a few percent; the default is exact
'''


def _toml_string(text: str) -> str:
    escaped = text.replace("\\", "\\\\").replace('"', '\\"')
    return '"' + "".join(ch if ch.isprintable() else f"\\u{ord(ch):04x}" for ch in escaped) + '"'


def starter_text(name: str = "My board") -> str:
    """The starter board file's text, with ``name`` as the board name.

    Examples
    --------
    >>> starter_text("Bench unit").splitlines()[10]
    'name = "Bench unit"'
    """
    return STARTER_BOARD.format(name=_toml_string(name))


def write_starter(path: str | Path, name: str = "My board") -> Path:
    """Write the starter board to ``path``, which must not exist yet.

    The file appears whole or not at all (written beside it, then linked into
    place, which fails rather than replace a file that appeared meanwhile).

    Raises
    ------
    ClockplanError
        ``path`` exists, or its folder does not, or it cannot be written.

    Examples
    --------
    >>> write_starter("boards/my-board.toml")  # doctest: +SKIP
    PosixPath('boards/my-board.toml')
    """
    return atomic_create_text(path, starter_text(name), what="clockplan new")
