"""Consumer lists for the synthesis tests (invented scenarios; the frequencies are the standards')."""

from __future__ import annotations

from collections.abc import Sequence

from clockplan.synth.input import ConsumerList, parse_consumer_list

#: A small library subset that keeps the tests fast: two grades, three PLL kinds, one divider, two buffers.
SMALL_ALLOW = ["xo", "tcxo", "rtc-tcxo", "int-synth-2", "int-synth-4", "frac-synth-4", "divider", "fanout-2", "fanout-4"]


def consumer_list(
    consumers: Sequence[tuple[str, str, str]],
    references: Sequence[str] = ("25 MHz",),
    allow: Sequence[str] | None = SMALL_ALLOW,
    extra: str = "",
    library: str | None = None,
    file: str = "test-list.toml",
) -> ConsumerList:
    """A consumer list from ``(id, frequency, budget keys)`` rows, as if read from ``file``.

    A ``library`` path is taken from ``file``'s folder and must stay inside it.

    ``budget keys`` is TOML text such as ``'standard = "PCIe Gen3"'`` (or empty).
    """
    lines = ['[board]', 'name = "test list"', 'temperature = ["0 C", "50 C"]', 'lifetime = "5 years"', "", "[synthesis]"]
    if references:
        lines.append("reference_frequencies = [" + ", ".join(f'"{r}"' for r in references) + "]")
    if allow is not None:
        lines.append("allow = [" + ", ".join(f'"{a}"' for a in allow) + "]")
    if library:
        lines.append(f'library = "{library}"')
    lines.append(extra)
    for consumer_id, frequency, budget in consumers:
        lines += ["", "[[consumer]]", f'id = "{consumer_id}"', f'frequency = "{frequency}"']
        if budget:
            lines.append(budget)
    return parse_consumer_list("\n".join(lines) + "\n", file)


def pll_template(name: str, mode: str, vco: tuple[str, str], pfd: tuple[str, str], r_max: int, n: tuple[int, int], divider: tuple[int, int], power: str = "0.1 W") -> str:
    """A test part: a PLL template's library text (invented figures, for tests only)."""
    rule = "denominator = 8\n" if mode == "fractional" else ""
    return (
        f'[[pll]]\nname = "{name}"\nlabel = "test part"\nmode = "{mode}"\n{rule}vco = ["{vco[0]}", "{vco[1]}"]\n'
        f'pfd = ["{pfd[0]}", "{pfd[1]}"]\nr = [1, {r_max}]\nn = [{n[0]}, {n[1]}]\noutputs = 4\n'
        f'output_divider = [{divider[0]}, {divider[1]}]\npower = "{power}"\ncost = 1\n'
    )
