"""The ``clockplan`` command: a thin shell over the library.

Each command is a library call plus a renderer. Exit status: 0 no error
finding, 1 error findings (a budget broken or a constraint violated), 2 bad
input or usage, 3 no feasible plan, 4 an internal error (a bug in clockplan:
one line says so and how to report it; ``CLOCKPLAN_DEBUG=1`` shows the
traceback instead). Heavy modules are imported inside the
command functions so that ``clockplan --help`` starts quickly.
"""

from __future__ import annotations

import argparse
import sys
import time
from collections.abc import Callable, Sequence

from clockplan import __version__
from clockplan.errors import ClockplanError, InfeasibleError

__all__ = ["main", "EXIT_OK", "EXIT_FINDINGS", "EXIT_INPUT", "EXIT_INFEASIBLE", "EXIT_BUG", "EXIT_INTERRUPTED", "EXIT_TERMINATED", "DEBUG_ENV"]

EXIT_OK = 0
EXIT_FINDINGS = 1
EXIT_INPUT = 2
EXIT_INFEASIBLE = 3
EXIT_BUG = 4
#: 128 + the signal's number, the shell's convention: Ctrl-C (SIGINT, 2) and SIGTERM (15).
EXIT_INTERRUPTED = 130
EXIT_TERMINATED = 143
#: Set to 1 to let an internal error raise with its traceback (for developers).
DEBUG_ENV = "CLOCKPLAN_DEBUG"

_EPILOG = """exit status: 0 no error finding, 1 error findings (budget broken or constraint
violated; with --fail-on unchecked also a budget not computed, with --fail-on warning
also any warning), 2 bad input or usage, 3 no feasible plan, 4 internal error (a bug;
CLOCKPLAN_DEBUG=1 shows its traceback), 130 interrupted by Ctrl-C (SIGINT), 143
stopped by SIGTERM (every file written is whole, old or new; no temporary file
is left).
Budgets are planning estimates: the part datasheets and the governing standard decide."""


class _Parser(argparse.ArgumentParser):
    """argparse that exits with status 2 and one clean line on usage errors."""

    def error(self, message: str) -> None:  # type: ignore[override]
        self.print_usage(sys.stderr)
        raise SystemExit(self._exit_with(message))

    def _exit_with(self, message: str) -> int:
        sys.stderr.write(f"{self.prog}: error: {message}\n")
        return EXIT_INPUT


def _add_display_options(parser: argparse.ArgumentParser) -> None:
    """--width and --no-color, which every command that prints tables takes."""
    parser.add_argument("--width", type=int, default=None, help="terminal width for the tables")
    parser.add_argument("--no-color", action="store_true", help="plain text without colour (also: NO_COLOR=1)")


def _add_output_options(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("--json", action="store_true", help="write the JSON document (docs/json-output.md) to stdout")
    _add_display_options(parser)
    parser.add_argument("--wide", action="store_true",
                        help="every column of the consumer table (the default below 160 columns: one line per consumer)")
    _add_report_options(parser)


def _count(text: str) -> int:
    if not text.isascii():  # int() would read full-width or Arabic-Indic digits
        raise argparse.ArgumentTypeError(f"{text!r} is not a whole number written with the digits 0-9")
    try:
        value = int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"{text!r} is not a whole number") from None
    if value < 0:
        raise argparse.ArgumentTypeError(f"{value} is negative")
    return value


def _add_budget_options(parser: argparse.ArgumentParser, time_limit: bool = True) -> None:
    """Options of the budget stages, shared by every command that analyses a board."""
    parser.add_argument("--samples", type=_count, default=0, metavar="N",
                        help="simulate N boards for the Monte Carlo frequency-error yield (default 0: none)")
    parser.add_argument("--seed", type=_count, default=0, metavar="S",
                        help="seed of the Monte Carlo; the same seed gives the same numbers (default 0)")
    if time_limit:
        parser.add_argument("--time-limit", type=_seconds, default=60.0, metavar="S",
                            help="time budget in seconds (default 60): past it the Monte Carlo stops and the "
                            "report says how many of the N boards it simulated")


def _add_loop_bandwidth_option(parser: argparse.ArgumentParser) -> None:
    """The in-band spur check's bandwidth: ``audit`` and ``plan`` share it, so they raise the same warnings."""
    parser.add_argument(
        "--loop-bandwidth",
        default=None,
        metavar="HZ",
        help="loop bandwidth for the in-band spur flag of PLLs that do not state one (default 200 kHz)",
    )


def _loop_bandwidth(args: argparse.Namespace):
    from clockplan.units import parse_frequency

    from clockplan.errors import ClockplanError

    text = getattr(args, "loop_bandwidth", None)
    try:
        return parse_frequency(text) if text is not None else None
    except ClockplanError as err:
        raise err.located(key="--loop-bandwidth") from None


def _analysis_options(args: argparse.Namespace, progress=None):
    from clockplan.analysis import AnalysisOptions

    deadline = _run_deadline(args).at if getattr(args, "time_limit", None) else None
    return AnalysisOptions(samples=args.samples, seed=args.seed, progress=progress, deadline=deadline,
                           loop_bandwidth_hz=_loop_bandwidth(args))


def _run_deadline(args: argparse.Namespace):
    """The run's one :class:`~clockplan.deadline.Deadline`, from --time-limit counted from the start."""
    from clockplan.deadline import Deadline

    return Deadline(args.started, args.started + args.time_limit)


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
    _add_loop_bandwidth_option(audit)
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
    plan.add_argument("--time-limit", type=_seconds, default=10.0, metavar="S",
                      help="time budget of the run in seconds (default 10): the search, then the Monte Carlo of "
                      "--samples; a stage that stops at it says so in the report")
    _add_loop_bandwidth_option(plan)
    _add_output_options(plan)
    _add_budget_options(plan, time_limit=False)
    plan.set_defaults(run=_run_plan)

    standards = commands.add_parser(
        "standards",
        help="list interface clock requirements, or show one with its sources",
        description="List the standards library (ppm tolerance, spread spectrum, jitter limit and band, with sources), "
        "or show one entry in detail. A word that is not a key filters the list.",
    )
    standards.add_argument("key", nargs="?", help="a key or alias for its detail; any other word filters the list")
    _add_display_options(standards)
    standards.set_defaults(run=_run_standards)
    _add_loop_command(commands)
    _add_report_commands(commands)
    _add_synthesize_command(commands)
    return parser


def _bounded(parse, lo: float, hi: float, what: str, lo_open: bool = False):
    """An argparse type: ``parse(text)`` within ``lo..hi`` (``lo`` excluded if ``lo_open``)."""

    def convert(text: str):
        if not text.isascii():  # int() and float() read full-width and other scripts' digits
            raise argparse.ArgumentTypeError(f"expected {what} in ASCII digits, got {text!r}")
        try:
            value = parse(text)
        except ValueError:
            raise argparse.ArgumentTypeError(f"expected {what}, got {text!r}") from None
        if value > hi or value < lo or (lo_open and value == lo):
            raise argparse.ArgumentTypeError(f"expected {what} {'above' if lo_open else 'from'} {lo} and at most {hi}")
        return value

    return convert


_alternatives = _bounded(int, 0, 100, "a whole number")


def _seconds(text: str) -> float:
    """An argparse type for --time-limit: finite seconds above 0 and at most an hour (never nan or inf)."""
    from clockplan.deadline import check_time_limit

    if not text.isascii():  # float() reads full-width and other scripts' digits
        raise argparse.ArgumentTypeError(f"expected a number of seconds in ASCII digits, got {text!r}")
    try:
        return check_time_limit(float(text))
    except ValueError:
        raise argparse.ArgumentTypeError(
            f"expected a number of seconds above 0 and at most 3600, got {text!r}") from None


def _console(args: argparse.Namespace):
    from clockplan.report.terminal import make_console

    return make_console(width=args.width, color=False if args.no_color else None)


def _emit(args: argparse.Namespace, analysis, command: str) -> int:
    fmt = _report_format(args)
    if fmt in ("dot", "svg"):
        _deliver_diagram(args, analysis, fmt)
    elif fmt == "table" and not args.output:
        from clockplan.report.terminal import render_analysis

        render_analysis(analysis, _console(args), title=command, wide=True if args.wide else None)
    elif fmt == "table":
        from clockplan.report.terminal import render_text

        _deliver(args, render_text(analysis, command, args.width or 100, wide=True if args.wide else None))
    else:
        from clockplan.report.formats import render_report

        _deliver(args, render_report(analysis, fmt, command, width=args.width or 100))
    return _exit_status(analysis, args.fail_on)


def _run_audit(args: argparse.Namespace) -> int:
    from clockplan.boardfile import load_board

    return _emit(args, _analyze_with_progress(load_board(args.board), args), "audit")


# --------------------------------------------------------------------------- reports
# Output formats, --output, --fail-on, and the explain, diagram, plots and new
# commands. Kept together so the other commands only call the helpers above.

_FAIL_ON_HELP = ("exit with status 1 at this level or worse: error (an error finding; the default), unchecked "
                 "(also a consumer whose ppm or jitter budget could not be computed), warning (also any warning)")
#: The same as clockplan.report.formats.FORMATS (a test checks), spelled out to keep start-up light.
_REPORT_FORMATS = ("table", "json", "markdown", "csv", "html")


def _add_report_options(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("--format", choices=_REPORT_FORMATS, default=None,
                        help="report format (default: table; or implied by --output's suffix: .json .md .csv .html .txt)")
    parser.add_argument("--output", "-o", metavar="FILE", default=None,
                        help="write the report to FILE (atomically; never over the board file) instead of stdout")
    parser.add_argument("--fail-on", choices=("warning", "unchecked", "error"), default="error", help=_FAIL_ON_HELP)


def _report_format(args: argparse.Namespace) -> str:
    chosen = args.format
    if args.json:
        if chosen not in (None, "json"):
            raise ClockplanError(f"--json and --format {chosen} disagree", hint="give one of them")
        return "json"
    if chosen is None and args.output and not _special_output(args.output):
        from clockplan.report.formats import output_format

        chosen = output_format(args.output)
    return chosen or "table"


def _special_output(path: str) -> bool:
    """True for an existing output that is not a regular file (``/dev/null``, ``/dev/stdout``, a FIFO).

    Such a name says nothing about a format: the default one is written (table, or DOT for ``diagram``).
    """
    import os

    return os.path.exists(path) and not os.path.isfile(path)


def _deliver_diagram(args: argparse.Namespace, analysis, fmt: str) -> None:
    """The tree diagram (DOT, or SVG drawn by Graphviz) for an --output ending in .dot or .svg."""
    from clockplan.report.dot import render_dot, render_svg

    text = render_dot(analysis)
    _deliver(args, render_svg(text) if fmt == "svg" else text)


def _deliver(args: argparse.Namespace, text: str) -> None:
    """Write ``text`` to ``--output`` (atomically, never over an input) or to stdout."""
    if not args.output:
        sys.stdout.write(text)
        return
    from clockplan.fileio import atomic_write_text, is_special_target, refuse_overwrite

    if not is_special_target(args.output):
        try:
            refuse_overwrite(args.output, protected=[p for p in (getattr(args, "board", None),) if p])
        except ClockplanError as err:
            raise ClockplanError(err.message, hint="write the report to another file") from None
    atomic_write_text(args.output, text)
    sys.stderr.write(f"clockplan: wrote {args.output}\n")


def _deliver_drawn(args: argparse.Namespace, draw: Callable[..., None]) -> None:
    """Draw a terminal view on a plain console (no colour, ``--width`` or 100) and deliver the text."""
    import io

    from clockplan.report.terminal import make_console

    buffer = io.StringIO()
    draw(make_console(width=args.width or 100, color=False, file=buffer))
    _deliver(args, buffer.getvalue())


def _exit_status(analysis, fail_on: str) -> int:
    """1 at the ``--fail-on`` level or worse, else 0.

    The levels, most serious first: ``error`` (an error finding), ``unchecked``
    (a consumer with a budget no stage could compute), ``warning`` (a warning
    finding); each level also fails on the ones above it.
    """
    worst = analysis.worst
    if worst is not None and worst.rank >= 2:
        return EXIT_FINDINGS
    if fail_on in ("unchecked", "warning") and any(result.unchecked for result in analysis.consumers):
        return EXIT_FINDINGS
    if fail_on == "warning" and worst is not None and worst.rank >= 1:
        return EXIT_FINDINGS
    return EXIT_OK


def _analyze_with_progress(board, args: argparse.Namespace, settings=None):
    """Run the analysis with the budget options; a long run draws a transient progress bar on stderr."""
    from clockplan.analysis import analyze
    from clockplan.report.progress import DelayedProgress

    with DelayedProgress("Monte Carlo yield") as progress:
        return analyze(board, settings, _analysis_options(args, progress))


def _add_report_commands(commands) -> None:
    explain = commands.add_parser(
        "explain",
        help="show why one consumer passes or fails: its chain and every contribution, in order",
        description="The exact frequency chain from the reference to CONSUMER, then what adds how much to its "
        "frequency error and jitter, in order, with running totals.",
        epilog=_EPILOG,
        formatter_class=argparse.RawDescriptionHelpFormatter,
    )
    explain.add_argument("board", help="board file (TOML)")
    explain.add_argument("consumer", help="the consumer's id")
    explain.add_argument("--format", choices=("table", "json", "markdown"), default=None,
                         help="default: table, or implied by --output's suffix (.json .md .txt)")
    explain.add_argument("--json", action="store_true", help="the same as --format json")
    explain.add_argument("--output", "-o", metavar="FILE", default=None, help="write to FILE instead of stdout")
    _add_display_options(explain)
    _add_budget_options(explain)
    explain.set_defaults(run=_run_explain)

    diagram = commands.add_parser(
        "diagram",
        help="draw the clock tree as Graphviz DOT, or SVG when Graphviz is installed",
        description="Write the clock tree as Graphviz DOT (frequencies on the nodes, failing parts marked). "
        "With --format svg (or an --output ending in .svg) Graphviz's 'dot' program draws it.",
    )
    diagram.add_argument("board", help="board file (TOML)")
    diagram.add_argument("--format", choices=("dot", "svg"), default=None, help="default: dot, or svg for a .svg --output")
    diagram.add_argument("--output", "-o", metavar="FILE", default=None, help="write to FILE instead of stdout")
    diagram.set_defaults(run=_run_diagram)

    plots = commands.add_parser(
        "plots",
        help="draw phase noise, ppm over temperature and the Monte Carlo spread as PNG files",
        description="Write phase-noise.png, ppm-temperature.png and monte-carlo.png into FOLDER for the data "
        "the board gives. Needs matplotlib: pip install 'clockplan[plots]'.",
    )
    plots.add_argument("board", help="board file (TOML)")
    plots.add_argument("--output-dir", "-d", metavar="FOLDER", default=".",
                       help="folder for the PNG files (default: .; created if missing)")
    plots.add_argument("--every-consumer", action="store_true",
                       help="a ppm and Monte Carlo panel for every consumer (default: those that fail, warn, are "
                       "unchecked or have a thin margin; an overview shows every consumer's margin)")
    _add_budget_options(plots)
    plots.set_defaults(run=_run_plots)

    new = commands.add_parser(
        "new",
        help="write a commented starter board file (never over an existing file)",
        description="Write a small, commented board file that audits clean, to edit into your own board.",
    )
    new.add_argument("file", help="the board file to create (must not exist)")
    new.add_argument("--name", default="My board", help="the board's name (default: My board)")
    new.set_defaults(run=_run_new)


def _run_explain(args: argparse.Namespace) -> int:
    from clockplan.boardfile import load_board
    from clockplan.report import explain as explainer

    fmt = _explain_format(args)
    explanation = explainer.explain(_analyze_with_progress(load_board(args.board), args), args.consumer)
    if fmt == "table" and not args.output:
        explainer.render_explanation(explanation, _console(args))
    elif fmt == "table":
        _deliver_drawn(args, lambda console: explainer.render_explanation(explanation, console))
    elif fmt == "json":
        from clockplan.report.json import dumps

        _deliver(args, dumps(explainer.explanation_document(explanation)))
    else:
        _deliver(args, explainer.explanation_markdown(explanation))
    return EXIT_FINDINGS if explainer.explanation_fails(explanation) else EXIT_OK


def _explain_format(args: argparse.Namespace) -> str:
    """table, json or markdown, from --format, --json or --output's suffix (which must be one of those)."""
    fmt = _report_format(args)
    if fmt not in ("table", "json", "markdown"):
        raise ClockplanError(f"explain writes a table, JSON or Markdown, not {fmt}",
                             hint="name the --output file .txt, .json or .md, or give --format")
    return fmt


def _diagram_format(output: str | None) -> str:
    """dot or svg from an --output suffix; stdout is DOT; another suffix is an error."""
    if not output or _special_output(output):
        return "dot"
    from clockplan.report.formats import format_for_path

    fmt = format_for_path(output)
    if fmt not in ("dot", "svg"):
        raise ClockplanError(f"--output {output}: the diagram is written as .dot or .svg",
                             hint="name the file .dot (Graphviz DOT) or .svg (drawn by Graphviz), or give --format")
    return fmt


def _run_diagram(args: argparse.Namespace) -> int:
    from clockplan.analysis import analyze
    from clockplan.boardfile import load_board
    from clockplan.report.dot import render_dot, render_svg

    fmt = args.format or _diagram_format(args.output)
    text = render_dot(analyze(load_board(args.board)))
    _deliver(args, render_svg(text) if fmt == "svg" else text)
    return EXIT_OK


def _run_plots(args: argparse.Namespace) -> int:
    from clockplan.boardfile import load_board
    from clockplan.report.plots import collect_plot_data, write_plots

    analysis = _analyze_with_progress(load_board(args.board), args)
    for finding in analysis.findings:  # the images cannot say it: a Monte Carlo cut short by --time-limit
        if finding.code == "monte-carlo-time-limit":
            sys.stderr.write(f"clockplan: warning: {finding.message}\n")
    data = collect_plot_data(analysis, every=args.every_consumer)
    for note in data.left_out:
        sys.stdout.write(f"clockplan: {note}\n")
    if data.empty:
        sys.stdout.write("clockplan: nothing to plot: the board gives no phase-noise or oscillator accuracy data "
                         "(see docs/jitter.md and docs/frequency-accuracy.md)\n")
        return EXIT_OK
    if _make_folder(args.output_dir):
        sys.stdout.write(f"clockplan: created the folder {args.output_dir}\n")
    for path in write_plots(data, args.output_dir, protected=[args.board]):
        sys.stdout.write(f"clockplan: wrote {path}\n")
    return EXIT_OK


def _make_folder(folder: str) -> bool:
    """Create ``folder`` (and its parents) if missing; True if it was created."""
    import os

    if os.path.isdir(folder):
        return False
    if os.path.lexists(folder):
        raise ClockplanError(f"{folder} exists and is not a folder", hint="give a folder for the PNG files with -d")
    try:
        os.makedirs(folder)
    except OSError as err:
        raise ClockplanError(f"cannot create the folder {folder}: {err.strerror}",
                             hint="check the path and its permissions, or give another folder with -d") from err
    return True


def _run_new(args: argparse.Namespace) -> int:
    from clockplan.starter import write_starter

    path = write_starter(args.file, args.name)
    sys.stdout.write(f"clockplan: wrote {path}; check it with: clockplan audit {path}\n")
    return EXIT_OK


def _run_plan(args: argparse.Namespace) -> int:
    from dataclasses import replace

    from clockplan.analysis import analyze
    from clockplan.boardfile import load_board
    from clockplan.plan.board_planner import PlanOptions, plan_board
    from clockplan.plan.output import plan_findings

    if args.write and args.in_place:
        raise ClockplanError("give either --write OUT or --in-place, not both", hint="--in-place writes back into the input file")
    board = load_board(args.board)
    deadline = _run_deadline(args)
    # One deadline for the run: the search stops at 70 % of it, leaving the rest to the
    # explanation of an infeasible board and the budget stages, which stop at the deadline itself.
    options = PlanOptions(alternatives=args.alternatives, time_limit_s=args.time_limit, deadline=deadline.share(0.7))
    if args.loop_bandwidth is not None:
        options = replace(options, loop_bandwidth_hz=_loop_bandwidth(args))
    plan = plan_board(board, options)
    analysis = analyze(board, plan.settings, _analysis_options(args))
    analysis = analysis.with_findings(plan_findings(plan, analysis))
    explanation = None
    if not plan.feasible:
        from clockplan.plan.explain import explain_infeasible

        explanation = explain_infeasible(plan, args.time_limit, deadline=deadline.at)
    _emit_plan(args, analysis, plan, explanation)
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
    return _exit_status(analysis, args.fail_on)


def _emit_plan(args: argparse.Namespace, analysis, plan, explanation) -> None:
    """The plan report in the chosen --format, to stdout or --output (see _emit)."""
    from clockplan.plan.output import plan_document, render_plan

    fmt = _report_format(args)
    if fmt in ("dot", "svg"):
        _deliver_diagram(args, analysis, fmt)
    elif fmt == "json":
        from clockplan.report.json import dumps

        _deliver(args, dumps(plan_document(analysis, plan, explanation)))
    elif fmt == "table" and not args.output:
        render_plan(analysis, plan, _console(args), explanation, wide=True if args.wide else None)
    elif fmt == "table":
        _deliver_drawn(args, lambda console: render_plan(analysis, plan, console, explanation,
                                                         wide=True if args.wide else None))
    else:
        from clockplan.report.formats import render_report

        _deliver(args, render_report(analysis, fmt, "plan", width=args.width or 100))

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
    loop.add_argument("--fail-on", choices=("warning", "unchecked", "error"), default="error", help=_FAIL_ON_HELP)
    _add_display_options(loop)
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
        from rich.markup import escape

        console.print(f"[bold]clockplan loop[/]: {escape(args.pll)} on {escape(analysis.board.name)} ({escape(args.board)})")
        console.print(loop_view(analysis, args.pll, result))
    # The exit rules of audit: a consumer over its jitter budget (in the table above) is an error finding.
    return _exit_status(analysis, args.fail_on)


# --------------------------------------------------------------------------- synthesis


def _add_synthesize_command(commands) -> None:
    synthesize = commands.add_parser(
        "synthesize",
        help="draw the clock tree for a list of consumers: reference, PLLs, dividers, buffers",
        description="Propose clock trees for a board that lists only its consumers (frequencies and standards): "
        "which reference, how many PLLs, which consumers share a VCO, where a divider or a fanout buffer will do. "
        "Minimizes parts, then power, then cost, then the worst margin (docs/synthesis.md); every tree is "
        "checked by planning and auditing its written board file.",
        epilog=_EPILOG,
        formatter_class=argparse.RawDescriptionHelpFormatter,
    )
    synthesize.add_argument("board", help="consumer-list board file (TOML)")
    synthesize.add_argument("--alternatives", type=_alternatives, default=None, metavar="K",
                            help="also show K runner-up trees (default: the board's [synthesis] alternatives, else 2)")
    synthesize.add_argument("--write", metavar="OUT", help="write the best tree as a complete board file to OUT")
    synthesize.add_argument("--library", metavar="FILE", help="a parts library file added to the shipped templates")
    synthesize.add_argument("--allow-outside-paths", action="store_true",
                            help="let the board's [synthesis] library path lead outside the board file's folder")
    synthesize.add_argument("--time-limit", type=_seconds, default=None, metavar="S",
                            help="search budget in seconds (default: the board's [synthesis] time_limit, else 30)")
    synthesize.add_argument("--json", action="store_true", help="write the synthesis JSON document (docs/synthesis.md) to stdout")
    _add_display_options(synthesize)
    synthesize.set_defaults(run=_run_synthesize)


def _run_synthesize(args: argparse.Namespace) -> int:
    from clockplan.synth.input import load_consumer_list
    from clockplan.synth.render import render_synthesis, synthesis_document
    from clockplan.synth.synthesize import SynthesisOptions, library_for, synthesize

    spec = load_consumer_list(args.board)
    library = library_for(spec, args.library, allow_outside=args.allow_outside_paths)
    alternatives = args.alternatives if args.alternatives is not None else spec.settings.alternatives
    time_limit = args.time_limit if args.time_limit is not None else spec.settings.time_limit_s
    options = SynthesisOptions(
        alternatives=2 if alternatives is None else alternatives,
        time_limit_s=30.0 if time_limit is None else time_limit,
        deadline=args.started + (30.0 if time_limit is None else time_limit),
    )
    result = synthesize(spec, library, options)
    if args.json:
        from clockplan.report.json import dumps

        sys.stdout.write(dumps(synthesis_document(result)))
    else:
        render_synthesis(result, _console(args))
    if result.best is None:
        raise InfeasibleError(
            f"{spec.name}: no tree meets every budget with the allowed parts\n" + "\n".join(result.explanation.lines()),
            file=spec.source_file,
            hint="allow more part templates (a library file, [synthesis] allow), relax the blocking budget, or raise --time-limit",
        )
    if args.write:
        from clockplan.fileio import atomic_write_text

        atomic_write_text(args.write, result.best.verified.text)
        if not args.json:
            sys.stderr.write(f"clockplan: wrote the best tree to {args.write}\n")
    return EXIT_FINDINGS if result.best.verified.analysis.has_errors else EXIT_OK


def _outputs(args: argparse.Namespace) -> list[tuple[str, str]]:
    """Every file the command may write, as (flag, path); ``plots`` names its images in the folder."""
    outputs = [(f"--{name}", getattr(args, name, None)) for name in ("write", "output")]
    outputs = [(flag, path) for flag, path in outputs if path]
    if args.command == "new":
        outputs.append(("FILE", args.file))
    if args.command == "plots":
        import os

        from clockplan.fileio import check_path
        from clockplan.report.plots import PLOT_FILES

        check_path(args.output_dir, "--output-dir path")
        if os.path.isdir(args.output_dir):  # a folder still to be created holds no input
            outputs += [("--output-dir", os.path.join(args.output_dir, name)) for name in PLOT_FILES]
    return outputs


def _refuse_clobbering(args: argparse.Namespace) -> None:
    """Refuse, before any work, an output that cannot be written, is an input file or another output.

    Every writing command passes here (:func:`clockplan.fileio.guard_outputs`):
    ``--write``/``--output``, the ``plots`` images and the file ``new`` creates
    never name the board or a ``--library`` file in any spelling (``plan
    --in-place`` is the one way to write the board); two outputs of one run
    never name the same file; an output's folder must exist and its name fit
    the file system.
    """
    from clockplan.fileio import check_path, guard_outputs

    inputs = [p for p in (getattr(args, "board", None), getattr(args, "library", None)) if p]
    for flag, path in (("board", getattr(args, "board", None)), ("--library", getattr(args, "library", None))):
        if path:
            check_path(path, f"{flag} path")
    outputs = _outputs(args)
    try:
        guard_outputs(outputs, inputs)
    except ClockplanError as err:
        hint = err.hint
        if "refusing" in err.message and not (args.command == "plan" and err.message.startswith("--write")):
            hint = "write it to another file"
        raise ClockplanError(err.message, hint=hint) from None


class _Terminated(KeyboardInterrupt):
    """SIGTERM, raised like Ctrl-C so that every clean-up path that handles one handles both."""


def _on_sigterm(signum, frame) -> None:  # noqa: ARG001 - the signal module's signature
    raise _Terminated


def _install_signal_handlers() -> dict:
    """Ctrl-C raises KeyboardInterrupt, SIGTERM :class:`_Terminated`; return the handlers to restore.

    A signal the caller set to be ignored stays ignored.
    """
    import signal

    old = {}
    for signum, handler in ((signal.SIGTERM, _on_sigterm), (signal.SIGINT, signal.default_int_handler)):
        try:
            if signal.getsignal(signum) is signal.SIG_IGN:  # ignored by the caller (nohup, a background job): keep it so
                continue
            old[signum] = signal.signal(signum, handler)
        except ValueError:  # not the main thread: signals go elsewhere
            break
    return old


def _restore_signal_handlers(old: dict) -> None:
    import signal

    for signum, handler in old.items():
        signal.signal(signum, handler)


def main(argv: Sequence[str] | None = None) -> int:
    """Run the command line; return the exit status.

    Examples
    --------
    >>> main(["audit", "boards/industrial-gateway.toml", "--json"])  # doctest: +SKIP
    0
    """
    old_handlers = _install_signal_handlers()
    try:
        return _main(argv)
    except KeyboardInterrupt as stop:  # a signal after the inner handlers: while printing a message
        return EXIT_TERMINATED if isinstance(stop, _Terminated) else EXIT_INTERRUPTED
    finally:
        _restore_signal_handlers(old_handlers)


def _main(argv: Sequence[str] | None) -> int:
    try:
        parser = _build_parser()
        try:
            args = parser.parse_args(argv)
        except SystemExit as stop:
            return int(stop.code or 0)
        run: Callable[[argparse.Namespace], int] | None = getattr(args, "run", None)
        if run is None:
            parser.print_help()
            return EXIT_INPUT
        _refuse_clobbering(args)
        args.started = time.monotonic()  # --time-limit counts from here
        return run(args)
    except InfeasibleError as err:
        sys.stderr.write(f"clockplan: no feasible plan: {err.describe()}\n")
        return EXIT_INFEASIBLE
    except ClockplanError as err:
        sys.stderr.write(f"clockplan: error: {err.describe()}\n")
        return EXIT_INPUT
    except _Terminated:
        sys.stderr.write("clockplan: terminated (SIGTERM); every file written is whole, old or new\n")
        return EXIT_TERMINATED
    except KeyboardInterrupt:
        sys.stderr.write("clockplan: interrupted; every file written is whole, old or new, and no temporary "
                         "file is left\n")
        return EXIT_INTERRUPTED
    except Exception as err:  # anything else is a bug: one line, never a traceback
        return _report_bug(err)


def _report_bug(err: Exception) -> int:
    """Say in one line that clockplan failed, how to report it; re-raise under CLOCKPLAN_DEBUG=1."""
    import os

    if os.environ.get(DEBUG_ENV, "") not in ("", "0"):
        raise err
    what = f"{type(err).__name__}: {err}".splitlines()[0] if str(err) else type(err).__name__
    if len(what) > 200:
        what = what[:197] + "..."
    sys.stderr.write(
        f"clockplan: internal error (a bug in clockplan {__version__}): {what}; please report it with the "
        f"command and the input file, and the traceback that {DEBUG_ENV}=1 shows\n"
    )
    return EXIT_BUG


def _entry() -> None:  # pragma: no cover - console script wrapper
    raise SystemExit(main())


if __name__ == "__main__":  # pragma: no cover
    _entry()
