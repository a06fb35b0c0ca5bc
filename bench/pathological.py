"""Pathological boards for the time-limit benchmark and tests: invented stress cases.

Each generator returns the text of one input file (a board, a consumer list, a
parts library). They are built to make one stage of a run long: the planner's
sweep, the infeasibility explanation, a deep cascade, the synthesis layouts.
``CASES`` lists the command lines that run them (``@name`` stands for the
file written from the text of that name).
"""

from __future__ import annotations

from dataclasses import dataclass, field

__all__ = ["coprime_board", "huge_loop_board", "cascade_board", "wide_part_consumers", "wide_part_library",
           "many_classes_consumers",
           "Case", "CASES", "write_case"]

_REF = '[[reference]]\nid = "ref"\nfrequency = "25 MHz"\n\n'
_PRIMES = (7, 11, 13, 17, 19, 23, 29, 31, 37, 41, 43, 47, 53, 59, 61, 67, 71, 73, 79, 83, 89, 97, 101, 103)


def _pll(pll_id: str, source: str, outputs: dict[str, str], r: str = "[1, 255]", n: str = "[16, 4095]",
         extra: str = "") -> str:
    outs = ", ".join(f"{name} = {{ divider = {choices} }}" for name, choices in outputs.items())
    return (f'[[pll]]\nid = "{pll_id}"\ninput = "{source}"\nvco = ["2.4 GHz", "4.8 GHz"]\npfd = ["1 MHz", "100 MHz"]\n'
            f"r = {r}\nn = {n}\noutputs = {{ {outs} }}\n{extra}\n")


def _consumer(consumer_id: str, source: str, frequency: str, extra: str = "") -> str:
    return f'[[consumer]]\nid = "{consumer_id}"\nsource = "{source}"\nfrequency = "{frequency}"\n{extra}\n'


def coprime_board(plls: int = 6, outputs: int = 8) -> str:
    """``plls`` PLLs of ``outputs`` outputs each at pairwise coprime frequencies, all exact: infeasible.

    No VCO is a common multiple of the outputs, so the plan fails and the
    infeasibility explanation relaxes every PLL in turn.
    """
    text = _REF + "[board]\nname = \"coprime stress\"\n\n"
    for p in range(plls):
        outs = {f"o{k}": "[1, 1024]" for k in range(outputs)}
        text += _pll(f"p{p}", "ref", outs, extra='mode = "fractional"\nmax_denominator = 4194303')
        for k in range(outputs):
            prime = _PRIMES[(p + k) % len(_PRIMES)]
            text += _consumer(f"c{p}_{k}", f"p{p}.o{k}", f"{prime}.{p * outputs + k + 1} MHz", 'max_synthesis_error = "0 ppm"')
    return text


def huge_loop_board() -> str:
    """One integer-N PLL whose R, N and output dividers each allow about 10^12 values."""
    big = "[1, 1000000000000]"
    text = _REF + "[board]\nname = \"huge loop stress\"\n\n"
    text += _pll("big", "ref", {"a": big, "b": big, "c": big}, r=big, n=big).replace(
        'vco = ["2.4 GHz", "4.8 GHz"]', 'vco = ["1 Hz", "1 THz"]').replace(
        'pfd = ["1 MHz", "100 MHz"]', 'pfd = ["1 Hz", "100 GHz"]')
    for k, hz in enumerate(("7.000001 MHz", "11.2896 MHz", "13.000003 MHz")):
        text += _consumer(f"c{k}", f"big.{'abc'[k]}", hz)
    return text


def cascade_board(depth: int = 60) -> str:
    """ref -> pll0 -> div0 -> pll1 -> ... -> consumer: ``depth`` PLLs and ``depth`` dividers."""
    text, source = _REF + "[board]\nname = \"cascade stress\"\n\n", "ref"
    for k in range(depth):
        text += _pll(f"p{k}", source, {"out": "[1, 64]"})
        text += f'[[divider]]\nid = "d{k}"\ninput = "p{k}.out"\nratio = [1, 16]\n\n'
        source = f"d{k}"
    return text + _consumer("end", source, "25 MHz", 'max_synthesis_error = "±1 %"')


def wide_part_consumers(count: int = 12) -> str:
    """A consumer list of ``count`` consumers at mixed frequencies, with the library of :func:`wide_part_library`."""
    text = "[board]\nname = \"wide part stress\"\n\n[synthesis]\nlibrary = \"library.toml\"\n\n"
    for k in range(count):
        text += f'[[consumer]]\nid = "c{k}"\nfrequency = "{_PRIMES[k % len(_PRIMES)]}.{k + 1} MHz"\n\n'
    return text


def many_classes_consumers(count: int = 300) -> str:
    """A consumer list of ``count`` consumers at 1, 2, 3... MHz: as many classes, a pair table of count^2 checks.

    Found by the fuzz campaign (a board with hundreds of consumers, as a consumer list).
    """
    text = "[board]\nname = \"many classes stress\"\ntemperature = [\"0 C\", \"85 C\"]\nlifetime = \"6 months\"\n\n"
    # A clock no part reaches and two usual ones, as the campaign's case had: every pair check fails
    # its way through the VCO multiples and words its reason.
    text += '[[consumer]]\nid = "far"\nfrequency = "773.478 GHz"\n\n[[consumer]]\nid = "net"\nfrequency = "156.25 MHz"\n\n'
    text += '[[consumer]]\nid = "audio"\nfrequency = "11.2896 MHz"\nstandard = "10gbase-r"\n\n'
    for k in range(count):
        text += f'[[consumer]]\nid = "bulk{k}"\nfrequency = "{k + 1} MHz"\n\n'
    return text


def wide_part_library(outputs: int = 1_000_000) -> str:
    """A parts library with one fractional-N PLL template of ``outputs`` outputs."""
    return (
        '[[pll]]\nname = "wide-synth"\nlabel = "a synthesizer with very many outputs"\nmode = "fractional"\n'
        'max_denominator = 16777215\nvco = ["2.4 GHz", "3.2 GHz"]\npfd = ["5 MHz", "100 MHz"]\nr = [1, 31]\n'
        f'n = [16, 511]\ninput_range = ["5 MHz", "250 MHz"]\noutputs = {outputs}\noutput_divider = [4, 511]\n'
        'power = "0.4 W"\ncost = 3\n'
    )


@dataclass(frozen=True)
class Case:
    """One pathological run: a name, the input files' texts and the command (without --time-limit)."""

    name: str
    files: dict[str, str]
    argv: tuple[str, ...]
    note: str = ""
    tags: tuple[str, ...] = field(default=())


CASES: tuple[Case, ...] = (
    Case("coprime outputs (plan + explanation)", {"board.toml": coprime_board()}, ("plan", "@board.toml")),
    Case("single loop, huge ranges (plan)", {"board.toml": huge_loop_board()}, ("plan", "@board.toml")),
    Case("60-PLL cascade (plan)", {"board.toml": cascade_board()}, ("plan", "@board.toml")),
    Case("part of a million outputs (synthesize)",
         {"board.toml": wide_part_consumers(), "library.toml": wide_part_library()},
         ("synthesize", "@board.toml", "--library", "@library.toml")),
    Case("300 consumer classes (synthesize)", {"board.toml": many_classes_consumers()}, ("synthesize", "@board.toml")),
)


def write_case(case: Case, folder) -> list[str]:
    """Write the case's files into ``folder``; return its argv with the paths filled in."""
    from pathlib import Path

    paths = {}
    for name, text in case.files.items():
        path = Path(folder) / name
        path.write_text(text, encoding="utf-8")
        paths[name] = str(path)
    return [paths[arg[1:]] if arg.startswith("@") else arg for arg in case.argv]
