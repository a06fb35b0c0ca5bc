"""The ``clockplan`` command: a thin shell over the library.

Each command is a library call plus a renderer. Exit status: 0 no error
finding, 1 error findings (a budget broken or a constraint violated), 2 bad
input or usage, 3 no feasible plan. Heavy modules are imported inside the
command functions so that ``clockplan --help`` starts quickly.
"""

from __future__ import annotations

import argparse
import sys
from collections.abc import Callable, Sequence

from clockplan import __version__
from clockplan.errors import ClockplanError, InfeasibleError

__all__ = ["main", "EXIT_OK", "EXIT_FINDINGS", "EXIT_INPUT", "EXIT_INFEASIBLE"]

EXIT_OK = 0
EXIT_FINDINGS = 1
EXIT_INPUT = 2
EXIT_INFEASIBLE = 3

_EPILOG = """exit status: 0 no error finding, 1 error findings (budget broken or constraint
violated), 2 bad input or usage, 3 no feasible plan.
Budgets are planning estimates: the part datasheets and the governing standard decide."""


class _Parser(argparse.ArgumentParser):
    """argparse that exits with status 2 and one clean line on usage errors."""

    def error(self, message: str) -> None:  # type: ignore[override]
        self.print_usage(sys.stderr)
        raise SystemExit(self._exit_with(message))

    def _exit_with(self, message: str) -> int:
        sys.stderr.write(f"{self.prog}: error: {message}\n")
        return EXIT_INPUT


def _add_output_options(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("--json", action="store_true", help="write the JSON document (docs/json-output.md) to stdout")
    parser.add_argument("--width", type=int, default=None, help="terminal width for the tables")
    parser.add_argument("--no-color", action="store_true", help="plain text without colour (also: NO_COLOR=1)")


def _count(text: str) -> int:
    try:
        value = int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"{text!r} is not a whole number") from None
    if value < 0:
        raise argparse.ArgumentTypeError(f"{value} is negative")
    return value


def _add_budget_options(parser: argparse.ArgumentParser) -> None:
    """Options of the budget stages, shared by every command that analyses a board."""
    parser.add_argument("--samples", type=_count, default=0, metavar="N",
                        help="simulate N boards for the Monte Carlo frequency-error yield (default 0: none)")
    parser.add_argument("--seed", type=_count, default=0, metavar="S",
                        help="seed of the Monte Carlo; the same seed gives the same numbers (default 0)")


def _analysis_options(args: argparse.Namespace, progress=None):
    from clockplan.analysis import AnalysisOptions

    return AnalysisOptions(samples=args.samples, seed=args.seed, progress=progress)


def _build_parser() -> argparse.ArgumentParser:
    parser = _Parser(
        prog="clockplan",
        description="Plan and audit the clock tree of an electronic board: exact frequencies, ppm and jitter budgets.",
        epilog=_EPILOG,
        formatter_class=argparse.RawDescriptionHelpFormatter,
    )
    parser.add_argument("--version", action="version", version=f"clockplan {__version__}")
    commands = parser.add_subparsers(dest="command", metavar="COMMAND", parser_class=_Parser)

    audit = commands.add_parser(
        "audit",
        help="check an existing clock tree: exact frequencies, constraints, budgets",
        description="Compute every node's exact frequency from the settings the board file gives and check every constraint and budget.",
        epilog=_EPILOG,
        formatter_class=argparse.RawDescriptionHelpFormatter,
    )
    audit.add_argument("board", help="board file (TOML)")
    _add_output_options(audit)
    _add_budget_options(audit)
    audit.set_defaults(run=_run_audit)

    plan = commands.add_parser(
        "plan",
        help="find the settings (R, N, dividers) the board leaves open",
        description=(
            "Fill every setting the board file leaves open so that each consumer gets its frequency: exact where "
            "reachable, else inside its allowed synthesis error with the smallest worst error. Settings the file "
            "gives stay fixed. The objective is documented in docs/planning.md."
        ),
        epilog=_EPILOG,
        formatter_class=argparse.RawDescriptionHelpFormatter,
    )
    plan.add_argument("board", help="board file (TOML)")
    plan.add_argument("--alternatives", type=_alternatives, default=0, metavar="K", help="also show K distinct runner-up plans")
    plan.add_argument("--write", metavar="OUT", help="write the board with its settings filled in to OUT (never over the input without --in-place)")
    plan.add_argument("--in-place", action="store_true", help="write the filled-in settings back into the input file")
    plan.add_argument("--time-limit", type=_seconds, default=10.0, metavar="S", help="search time budget in seconds (default 10)")
    plan.add_argument(
        "--loop-bandwidth",
        default=None,
        metavar="HZ",
        help="loop bandwidth for the in-band spur flag of PLLs that do not state one (default 200 kHz)",
    )
    _add_output_options(plan)
    _add_budget_options(plan)
    plan.set_defaults(run=_run_plan)

    standards = commands.add_parser(
        "standards",
        help="list interface clock requirements, or show one with its sources",
        description="List the standards library (ppm tolerance, spread spectrum, jitter limit and band, with sources), "
        "or show one entry in detail. A word that is not a key filters the list.",
    )
    standards.add_argument("key", nargs="?", help="a key or alias for its detail; any other word filters the list")
    standards.add_argument("--width", type=int, default=None, help="terminal width for the tables")
    standards.add_argument("--no-color", action="store_true", help="plain text without colour (also: NO_COLOR=1)")
    standards.set_defaults(run=_run_standards)
    _add_loop_command(commands)
    return parser


def _bounded(parse, lo: float, hi: float, what: str, lo_open: bool = False):
    """An argparse type: ``parse(text)`` within ``lo..hi`` (``lo`` excluded if ``lo_open``)."""

    def convert(text: str):
        try:
            value = parse(text)
        except ValueError:
            raise argparse.ArgumentTypeError(f"expected {what}, got {text!r}") from None
        if value > hi or value < lo or (lo_open and value == lo):
            raise argparse.ArgumentTypeError(f"expected {what} {'above' if lo_open else 'from'} {lo} and at most {hi}")
        return value

    return convert


_alternatives = _bounded(int, 0, 100, "a whole number")
_seconds = _bounded(float, 0, 3600, "a number of seconds", lo_open=True)


def _console(args: argparse.Namespace):
    from clockplan.report.terminal import make_console

    return make_console(width=args.width, color=False if args.no_color else None)


def _emit(args: argparse.Namespace, analysis, command: str) -> int:
    if args.json:
        from clockplan.report.json import analysis_document, dumps

        sys.stdout.write(dumps(analysis_document(analysis, command)))
    else:
        from clockplan.report.terminal import render_analysis

        render_analysis(analysis, _console(args), title=command)
    return EXIT_FINDINGS if analysis.has_errors else EXIT_OK


def _run_audit(args: argparse.Namespace) -> int:
    from clockplan.analysis import analyze
    from clockplan.boardfile import load_board
    from clockplan.report.progress import DelayedProgress

    board = load_board(args.board)
    with DelayedProgress("Monte Carlo yield") as progress:
        analysis = analyze(board, options=_analysis_options(args, progress))
    return _emit(args, analysis, "audit")


def _run_plan(args: argparse.Namespace) -> int:
    from clockplan.analysis import analyze
    from clockplan.boardfile import load_board
    from clockplan.plan.board_planner import PlanOptions, plan_board
    from clockplan.plan.output import plan_document, plan_findings, render_plan
    from clockplan.units import parse_frequency

    if args.write and args.in_place:
        raise ClockplanError("give either --write OUT or --in-place, not both", hint="--in-place writes back into the input file")
    board = load_board(args.board)
    options = PlanOptions(alternatives=args.alternatives, time_limit_s=args.time_limit)
    if args.loop_bandwidth is not None:
        options = PlanOptions(args.alternatives, args.time_limit, parse_frequency(args.loop_bandwidth))
    plan = plan_board(board, options)
    analysis = analyze(board, plan.settings, _analysis_options(args))
    analysis = analysis.with_findings(plan_findings(plan, analysis))
    explanation = None
    if not plan.feasible:
        from clockplan.plan.explain import explain_infeasible

        explanation = explain_infeasible(plan)
    if args.json:
        from clockplan.report.json import dumps

        sys.stdout.write(dumps(plan_document(analysis, plan, explanation)))
    else:
        render_plan(analysis, plan, _console(args), explanation)
    if explanation is not None:
        raise InfeasibleError(
            f"{board.name}: no plan puts every consumer inside its allowed synthesis error\n{explanation.text()}",
            file=board.source_file,
            hint="relax the blocking constraint named above, or raise max_synthesis_error where the standard allows it",
        )
    target = args.board if args.in_place else args.write
    if target:
        from clockplan.plan.boardwrite import write_board_file

        write_board_file(args.board, target, board, plan.settings, in_place=args.in_place)
        if not args.json:
            sys.stderr.write(f"clockplan: wrote the planned settings to {target}\n")
    return EXIT_FINDINGS if analysis.has_errors else EXIT_OK

def _run_standards(args: argparse.Namespace) -> int:
    from clockplan.standards.render import standards_view

    _console(args).print(standards_view(args.key))
    return EXIT_OK


# --------------------------------------------------------------------------- loop filters


def _add_loop_command(commands) -> None:
    loop = commands.add_parser(
        "loop",
        help="design or check a PLL's loop filter: parts, margins, closed-loop response",
        description="Design the passive loop filter of PLL from its [pll.loop_filter] table (or analyse the "
        "parts it gives) at the N and PFD frequency of the board's settings; print the parts, the margins, "
        "the closed-loop response and the jitter of the clocks the PLL feeds (docs/loop-filter.md).",
        epilog=_EPILOG,
        formatter_class=argparse.RawDescriptionHelpFormatter,
    )
    loop.add_argument("board", help="board file (TOML)")
    loop.add_argument("pll", help="the PLL's id")
    loop.add_argument("--json", action="store_true", help="write the filter as a JSON document to stdout")
    loop.add_argument("--width", type=int, default=None, help="terminal width for the tables")
    loop.add_argument("--no-color", action="store_true", help="plain text without colour (also: NO_COLOR=1)")
    loop.set_defaults(run=_run_loop)


def _run_loop(args: argparse.Namespace) -> int:
    from clockplan.analysis import analyze
    from clockplan.boardfile import load_board
    from clockplan.loopfilter.onboard import board_loop_filter, loop_document, loop_view

    analysis = analyze(load_board(args.board))
    result = board_loop_filter(analysis, args.pll)
    if args.json:
        from clockplan.report.json import dumps

        sys.stdout.write(dumps(loop_document(analysis, args.pll, result)))
    else:
        console = _console(args)
        console.print(f"[bold]clockplan loop[/]: {args.pll} on {analysis.board.name} ({args.board})")
        console.print(loop_view(analysis, args.pll, result))
    return EXIT_OK


def main(argv: Sequence[str] | None = None) -> int:
    """Run the command line; return the exit status.

    Examples
    --------
    >>> main(["audit", "boards/industrial-gateway.toml", "--json"])  # doctest: +SKIP
    0
    """
    parser = _build_parser()
    try:
        args = parser.parse_args(argv)
    except SystemExit as stop:
        return int(stop.code or 0)
    run: Callable[[argparse.Namespace], int] | None = getattr(args, "run", None)
    if run is None:
        parser.print_help()
        return EXIT_INPUT
    try:
        return run(args)
    except InfeasibleError as err:
        sys.stderr.write(f"clockplan: no feasible plan: {err.describe()}\n")
        return EXIT_INFEASIBLE
    except ClockplanError as err:
        sys.stderr.write(f"clockplan: error: {err.describe()}\n")
        return EXIT_INPUT
    except KeyboardInterrupt:
        sys.stderr.write("clockplan: interrupted\n")
        return 130


def _entry() -> None:  # pragma: no cover - console script wrapper
    raise SystemExit(main())


if __name__ == "__main__":  # pragma: no cover
    _entry()
