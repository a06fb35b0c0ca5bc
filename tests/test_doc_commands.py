"""Every command line shown in README.md, DEVELOPERS.md and docs/ runs as written.

The lines are read out of the documents' code blocks (fenced or indented), not
copied here, so a document that drifts from the tool fails this test:

* a ``clockplan ...`` line runs through :func:`clockplan.cli.main` in a
  temporary folder holding copies of the demo boards, and must end with exit
  status 0 or 1 (a finding; the demo boards carry deliberate problems), never
  2 (bad input or usage), 3 or 4; every file or folder it names with
  ``--output``/``-o``/``--write``/``-d`` or ``new`` must exist afterwards;
* a shown error (``$ clockplan ...`` followed by the lines it prints) must
  print exactly those lines, with exit status 2;
* a benchmark or campaign line (``python -m bench ...``, ``python bench/X.py
  ...``) is run up to its argument parser, which must accept it: running the
  campaigns themselves takes minutes and belongs to ``bench/``.

Placeholders of the documents (``BOARD``, a shell loop's ``$board``, the
``[--option]`` of a usage line) are replaced by a demo board or expanded; the
table below says how, and anything else is run verbatim.
"""

from __future__ import annotations

import argparse
import runpy
import shlex
import shutil
import sys
from dataclasses import dataclass
from pathlib import Path

import pytest

from clockplan.cli import main

ROOT = Path(__file__).resolve().parent.parent
DOCUMENTS = [ROOT / "README.md", ROOT / "DEVELOPERS.md", *sorted((ROOT / "docs").glob("*.md"))]
SUBCOMMANDS = {"audit", "plan", "explain", "diagram", "plots", "new", "loop", "standards", "synthesize"}
#: Shell operators that end a simple command; the word after a redirection is its target, not an argument.
OPERATORS = {"&&", "||", ";", "|", "&"}
REDIRECTIONS = {">", ">>", "<", "2>", "2>>"}
#: Words the documents use as placeholders, and what the test puts in their place.
PLACEHOLDERS = {
    "BOARD": "boards/edge-router.toml",
    "$board": "boards/edge-router.toml",
    "$name": "edge-router",
    "CONSUMER": "sfp_a",
    "N": "100",
}
#: A user parts library for ``synthesize --library my-parts.toml`` (its format: docs/synthesis.md).
USER_LIBRARY = '[[buffer]]\nname = "fanout-16"\noutputs = 16\npower = "0.4 W"\ncost = 3\n'


@dataclass(frozen=True)
class DocCommand:
    """One command line of a document: where it is, its words, and the output lines shown under it."""

    where: str
    words: tuple[str, ...]
    shown_output: tuple[str, ...] = ()

    def __str__(self) -> str:
        return f"{self.where}: {shlex.join(self.words)}"


def _code_lines(path: Path):
    """(line number, text) of every line inside a fenced or an indented code block."""
    fenced = False
    previous_blank = True
    in_indented = False
    for number, line in enumerate(path.read_text(encoding="utf-8").splitlines(), start=1):
        if line.lstrip().startswith("```"):
            fenced = not fenced
            continue
        if fenced:
            yield number, line
            continue
        if line.startswith("    ") and (previous_blank or in_indented):
            in_indented = True
            yield number, line
        elif line.strip():
            in_indented = False
        previous_blank = not line.strip()


def _simple_commands(text: str) -> list[list[str]]:
    """The simple commands of one shell line: split at operators, redirections dropped, comments cut."""
    lexer = shlex.shlex(text, posix=True, punctuation_chars=True)
    lexer.whitespace_split = True
    commands: list[list[str]] = [[]]
    skip_next = False
    for word in lexer:
        if skip_next:
            skip_next = False
        elif word in OPERATORS:
            commands.append([])
        elif word in REDIRECTIONS:
            skip_next = True
        else:
            commands[-1].append(word)
    return [c for c in commands if c]


def _is_clockplan(words: list[str]) -> bool:
    return len(words) >= 2 and words[0] == "clockplan" and words[1] in SUBCOMMANDS


def _is_bench(words: list[str]) -> bool:
    return (words[:3] == ["python", "-m", "bench"]) or (
        len(words) >= 2 and words[0] == "python" and words[1].startswith("bench/") and words[1].endswith(".py"))


def _expand_optional(words: list[str]) -> list[list[str]]:
    """A usage line's ``[--opt]`` groups: once without any of them, once with all of them."""
    if not any(w.startswith("[") for w in words):
        return [words]
    bare, full, depth = [], [], 0
    for word in words:
        depth += word.count("[")
        clean = word.replace("[", "").replace("]", "")
        if depth == 0:
            bare.append(clean)
        full.append(clean)
        depth -= word.count("]")
    return [bare, full]


def _substitute(word: str) -> str:
    """A placeholder word replaced whole; a shell variable also inside a word (``"reports/$name.html"``)."""
    if word in PLACEHOLDERS:
        return PLACEHOLDERS[word]
    for name, value in PLACEHOLDERS.items():
        if name.startswith("$"):
            word = word.replace(name, value)
    return word


def _matches_shown(printed: list[str], shown: list[str]) -> bool:
    """True if ``printed`` is ``shown``, where a shown ``...`` line stands for any number of lines."""
    if not shown:
        return not printed
    if shown[0] == "...":
        return any(_matches_shown(printed[i:], shown[1:]) for i in range(len(printed) + 1))
    return bool(printed) and printed[0].rstrip() == shown[0].rstrip() and _matches_shown(printed[1:], shown[1:])


def doc_commands() -> list[DocCommand]:
    """Every clockplan and benchmark command line in the documents."""
    found: list[DocCommand] = []
    for path in DOCUMENTS:
        lines = list(_code_lines(path))
        for index, (number, line) in enumerate(lines):
            text = line.strip()
            prompt = text.startswith("$ ")
            if prompt:
                text = text[2:]
            try:
                commands = _simple_commands(text)
            except ValueError:  # an unbalanced quote: prose or output, not a command
                continue
            for words in commands:
                if not (_is_clockplan(words) or _is_bench(words)):
                    continue
                shown: list[str] = []
                if prompt:  # the lines after a "$ " prompt, up to the next prompt or a gap, are its output
                    for next_number, next_line in lines[index + 1:]:
                        if next_line.strip().startswith("$ ") or next_number != number + 1 + len(shown):
                            break
                        shown.append(next_line.strip())
                for variant in _expand_optional(words):
                    found.append(DocCommand(f"{path.relative_to(ROOT)}:{number}", tuple(_substitute(w) for w in variant),
                                            tuple(shown)))
    return found


COMMANDS = doc_commands()


def test_the_documents_show_commands_of_every_kind():
    # The extraction itself: it must find the README's tour, the error example and the benchmark lines.
    kinds = {c.words[1] for c in COMMANDS if c.words[0] == "clockplan"}
    assert SUBCOMMANDS <= kinds, f"no documented example of: {sorted(SUBCOMMANDS - kinds)}"
    assert any(c.shown_output for c in COMMANDS)
    assert any(_is_bench(list(c.words)) for c in COMMANDS)


def test_the_extraction_reads_shell_lines_as_a_shell_would():
    assert _simple_commands('clockplan audit "$board" --format markdown >> "$SUMMARY" || true') == [
        ["clockplan", "audit", "$board", "--format", "markdown"], ["true"]]
    assert _simple_commands("a && b x # a comment") == [["a"], ["b", "x"]]
    assert _substitute("reports/$name.html") == "reports/edge-router.html"
    assert _matches_shown(["a", "b", "c"], ["a", "...", "c"]) and not _matches_shown(["a", "b"], ["a", "c"])
    assert _expand_optional(["loop", "b", "p", "[--json]", "[--width", "N]"]) == [
        ["loop", "b", "p"], ["loop", "b", "p", "--json", "--width", "N"]]


@pytest.fixture
def demo_folder(tmp_path, monkeypatch):
    """A folder like the repository's top: the demo boards, the doc examples, a board.toml, a parts library."""
    shutil.copytree(ROOT / "boards", tmp_path / "boards")
    shutil.copytree(ROOT / "docs" / "examples", tmp_path / "docs" / "examples")
    shutil.copy(ROOT / "boards" / "edge-router.toml", tmp_path / "board.toml")
    (tmp_path / "my-parts.toml").write_text(USER_LIBRARY, encoding="utf-8")
    (tmp_path / "clock-reports").mkdir()
    monkeypatch.chdir(tmp_path)
    monkeypatch.setenv("COLUMNS", "100")  # the width the documents' terminal excerpts were printed at
    return tmp_path


def _written_paths(words: tuple[str, ...]) -> list[str]:
    """The files and folders a command line says it writes."""
    paths = []
    for flag, value in zip(words, words[1:]):
        if flag in ("--output", "-o", "--write", "--output-dir", "-d"):
            paths.append(value)
    if words[1] == "new":
        paths.append(words[2])
    return paths


@pytest.mark.parametrize("command", [c for c in COMMANDS if c.words[0] == "clockplan"], ids=str)
def test_clockplan_line_runs_as_written(command, demo_folder, capsys):
    status = main(list(command.words[1:]))
    captured = capsys.readouterr()
    if command.shown_output and command.shown_output[0].startswith("clockplan: error:"):
        assert status == 2, f"{command}: exit status {status}, the document shows an error"
        assert [line.strip() for line in captured.err.strip().splitlines()] == list(command.shown_output), command
        return
    if command.shown_output:  # what the document shows it printing, "..." for lines left out
        printed = [line.strip() for line in captured.out.strip().splitlines()]
        excerpt = ["...", *command.shown_output, "..."]  # an excerpt may start and end anywhere
        assert _matches_shown(printed, excerpt), f"{command} printed:\n{captured.out}"
    if status == 2 and any(p.endswith(".svg") for p in _written_paths(command.words)) and shutil.which("dot") is None:
        assert "Graphviz" in captured.err  # SVG needs Graphviz's dot program, which this machine lacks
        return
    assert status in (0, 1), f"{command}: exit status {status}\n{captured.err}"
    for path in _written_paths(command.words):
        target = demo_folder / path
        assert target.exists(), f"{command}: {path} was not written"
        if target.is_dir():
            assert any(target.glob("*.png")), f"{command}: no plot in {path}"
        else:
            assert target.stat().st_size > 0


class _Parsed(Exception):
    """Raised right after a benchmark's argument parser accepted its arguments."""


@pytest.mark.parametrize("command", [c for c in COMMANDS if _is_bench(list(c.words))], ids=str)
def test_benchmark_line_is_accepted_by_its_parser(command, monkeypatch):
    original = argparse.ArgumentParser.parse_args

    def parse_then_stop(self, args=None, namespace=None):
        original(self, args, namespace)  # a rejected flag exits with status 2 here
        raise _Parsed

    monkeypatch.setattr(argparse.ArgumentParser, "parse_args", parse_then_stop)
    monkeypatch.syspath_prepend(str(ROOT))
    words = list(command.words)
    with pytest.raises(_Parsed):
        if words[1] == "-m":
            from bench.run import main as bench_main

            bench_main(words[3:])
        else:
            monkeypatch.setattr(sys, "argv", words[1:])
            runpy.run_path(str(ROOT / words[1]), run_name="__main__")
