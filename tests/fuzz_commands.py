"""Command lines for the fuzz campaign: every command, with the files it reads.

:func:`command_case` turns a generated board (``tests/strategies.py``) into one
run of one command: ``audit``, ``plan`` (reports, ``--write``), ``explain``,
``diagram``, ``plots``, ``loop``, ``synthesize`` (the board's consumers as a
consumer list, with a parts library mutated from the shipped one), ``standards``
and ``new``, with options drawn too (time limits, alternatives, Monte Carlo
samples, formats). ``{name}`` in the argument list stands for the file or
folder of that name in the case's temporary folder. Invented inputs only.
"""

from __future__ import annotations

import tomllib
from dataclasses import dataclass, field
from importlib import resources

from tests.strategies import Picker, _key, _value, to_toml

__all__ = ["CommandCase", "COMMANDS", "command_case", "mutate_library", "consumer_list", "with_loop_filter"]

#: Every command of ``clockplan`` the campaign drives.
COMMANDS = ("audit", "plan", "explain", "diagram", "plots", "loop", "synthesize", "standards", "new")

#: Time limits drawn for the commands that take one (seconds).
TIME_LIMITS = ("0.05", "0.2", "0.5")

#: Values put in place of a number of the parts library: extremes, tiny, wrong sign, not a number.
_EXTREMES = ("0", "-1", "1e400", "5e-324", "1000000", "9223372036854775808", "nan", "inf", '"x"', "[]",
             "1e-30", "4294967297", "0.5")

#: Words for ``standards`` and names for ``new``: keys, near misses, control characters, long text.
_WORDS = ("PCIe", "pcie", "10GBASE-R", "SDI", "usb", "", " ", "ＰＣＩｅ", "x" * 500, "a\x1b[31mb", "line\nbreak",
          "[bold]markup[/]", "*", "../etc", "名前")


@dataclass(frozen=True)
class CommandCase:
    """One command run: its arguments (with ``{name}`` placeholders) and the files to write first."""

    command: str
    args: tuple[str, ...]
    files: dict[str, bytes] = field(default_factory=dict)

    @property
    def time_limit(self) -> float | None:
        """The ``--time-limit`` given, if any (the campaign checks the run ends near it)."""
        if "--time-limit" in self.args:
            return float(self.args[self.args.index("--time-limit") + 1])
        return None


def _ids(data: bytes, section: str) -> list[str]:
    """The ids of a board's ``[[section]]`` tables, or [] when the bytes are not such a board."""
    try:
        doc = tomllib.loads(data.decode("utf-8"))
    except (UnicodeDecodeError, tomllib.TOMLDecodeError, RecursionError):
        return []
    tables = doc.get(section)
    if not isinstance(tables, list):
        return []
    return [str(t["id"]) for t in tables if isinstance(t, dict) and isinstance(t.get("id"), str)]


def consumer_list(data: bytes) -> bytes:
    """The board's ``[board]`` and consumers (without sources) as a consumer list, else the bytes unchanged."""
    try:
        doc = tomllib.loads(data.decode("utf-8"))
    except (UnicodeDecodeError, tomllib.TOMLDecodeError, RecursionError):
        return data
    lines = []
    board = doc.get("board")
    if isinstance(board, dict):
        lines.append("[board]")
        lines += [f"{_key(k)} = {_value(v)}" for k, v in board.items()]
        lines.append("")
    for consumer in doc.get("consumer", []) if isinstance(doc.get("consumer"), list) else []:
        if not isinstance(consumer, dict):
            continue
        lines.append("[[consumer]]")
        lines += [f"{_key(k)} = {_value(v)}" for k, v in consumer.items() if k not in ("source",)]
        lines.append("")
    return "\n".join(lines).encode("utf-8") if lines else data


def mutate_library(pick: Picker) -> bytes:
    """The shipped parts library with one number replaced by an extreme, or a line dropped, or left as is."""
    text = resources.files("clockplan.data").joinpath("parts_library.toml").read_text(encoding="utf-8")
    lines = text.split("\n")
    numbered = [i for i, line in enumerate(lines) if "=" in line and not line.lstrip().startswith("#")
                and any(ch.isdigit() for ch in line.split("=", 1)[1])]
    kind = pick.choice(("none", "extreme", "drop", "outputs"))
    if kind == "extreme" and numbered:
        index = pick.choice(numbered)
        key = lines[index].split("=", 1)[0]
        lines[index] = f"{key}= {pick.choice(_EXTREMES)}"
    elif kind == "drop" and numbered:
        del lines[pick.choice(numbered)]
    elif kind == "outputs":  # a part of very many outputs (the layout's spare-output table)
        lines = [f"outputs = {pick.choice(('100000', '1000000', '0', '-3'))}" if line.startswith("outputs = ")
                 and pick.chance(0.3) else line for line in lines]
    return "\n".join(lines).encode("utf-8")


def with_loop_filter(pick: Picker, data: bytes, pll_id: str) -> bytes:
    """The board with a ``loop_filter`` table on PLL ``pll_id`` (plausible or extreme values), else unchanged.

    Generated boards carry no loop filter, and ``loop`` needs one: without it every ``loop`` run would
    stop at the same located error.
    """
    try:
        doc = tomllib.loads(data.decode("utf-8"))
    except (UnicodeDecodeError, tomllib.TOMLDecodeError, RecursionError):
        return data
    plls = doc.get("pll")
    if not isinstance(plls, list):
        return data
    for pll in plls:
        if isinstance(pll, dict) and pll.get("id") == pll_id:
            pll["loop_filter"] = {
                "order": pick.choice((2, 3, 4, 3)),
                "charge_pump": pick.choice(("2.5 mA", "100 uA", "1 nA", "1e400 A", "0 A")),
                "kvco": pick.choice(("40 MHz/V", "5 MHz/V", "0 Hz/V", "1e300 Hz/V")),
                "bandwidth": pick.choice(("50 kHz", "200 kHz", "1 Hz", "1 GHz")),
                "phase_margin": pick.choice((55, 45, 70, 0, 89.999, 1000)),
            }
            try:
                return to_toml(doc).encode("utf-8")
            except (TypeError, ValueError):
                return data
    return data


def _budget_options(pick: Picker) -> list[str]:
    options = ["--time-limit", pick.choice(TIME_LIMITS)]
    if pick.chance(0.3):
        options += ["--samples", str(pick.choice((10, 1000, 200_000)))]
    return options


def command_case(pick: Picker, data: bytes) -> CommandCase:
    """One command line over the generated board ``data`` (``{board}`` in the arguments)."""
    command = pick.choice(COMMANDS)
    consumers = _ids(data, "consumer") or ["load0"]
    plls = _ids(data, "pll") or ["pll0"]
    files = {"board": data}
    if command == "audit":
        fmt = pick.choice(("--json", "table", "markdown", "csv", "html"))
        args = ["audit", "{board}", *(["--json"] if fmt == "--json" else ["--format", fmt]), *_budget_options(pick)]
    elif command == "plan":
        args = ["plan", "{board}", "--time-limit", pick.choice(TIME_LIMITS), "--alternatives", str(pick.integer(0, 3))]
        if pick.chance(0.3):
            args += ["--write", "{out}/planned.toml"]
        args += pick.choice((["--json"], ["--format", "markdown"], []))
    elif command == "explain":
        args = ["explain", "{board}", pick.choice(consumers + ["nobody"]), *pick.choice((["--json"], [])),
                *_budget_options(pick)]
    elif command == "diagram":
        args = ["diagram", "{board}", *pick.choice(([], ["--output", "{out}/tree.dot"]))]
    elif command == "plots":
        args = ["plots", "{board}", "--output-dir", "{out}/plots", *_budget_options(pick)]
    elif command == "loop":
        pll = pick.choice(plls + ["nopll"])
        if pick.chance(0.8):
            files = {"board": with_loop_filter(pick, data, pll)}
        args = ["loop", "{board}", pll, *pick.choice((["--json"], []))]
    elif command == "synthesize":
        files = {"board": consumer_list(data)}
        args = ["synthesize", "{board}", "--time-limit", pick.choice(TIME_LIMITS), "--alternatives", str(pick.integer(0, 2))]
        if pick.chance(0.5):
            files["library"] = mutate_library(pick)
            args += ["--library", "{library}"]
        args += pick.choice((["--json"], [], ["--write", "{out}/tree.toml"]))
    elif command == "standards":
        args = ["standards", *pick.choice(([], [pick.choice(_WORDS)]))]
        files = {}
    else:
        args = ["new", "{out}/" + pick.choice(("starter.toml", "deep/missing/x.toml", "x" * 300 + ".toml")),
                "--name", pick.choice(_WORDS)]
        files = {}
    return CommandCase(command, tuple(args), files)
