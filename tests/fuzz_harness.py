"""The fuzz harness: one input through every stage and every renderer.

:func:`run_case` loads a board file's bytes, audits it (the ppm and jitter
stages run inside the analysis), renders every report (terminal, JSON,
Markdown, CSV, HTML, DOT, explain in its three forms), plans it with a small
time limit, audits the plan and renders the plan reports. The case passes
when this ends in results or in a located :class:`~clockplan.errors.ClockplanError`;
any other exception, an unlocated error or a run past the alarm is a crash
(:class:`FuzzCrash`). :func:`run_cli_case` does the same through
``clockplan.cli.main`` and checks the exit status and the one-message error.

Shared by ``tests/test_fuzz.py`` (a bounded slice) and ``bench/fuzz.py``
(the campaign).
"""

from __future__ import annotations

import contextlib
import io
import signal
import tempfile
import traceback
from collections.abc import Iterator
from dataclasses import dataclass
from pathlib import Path

from clockplan.errors import ClockplanError

__all__ = ["FuzzCrash", "Outcome", "run_case", "run_cli_case", "run_command_case", "alarm", "crash_signature",
           "OVERRUN_SLACK_S", "OVERRUN_EXEMPT"]


class FuzzCrash(Exception):
    """A case broke the contract: another exception, an unlocated error, or a hang."""

    def __init__(self, kind: str, detail: str, stage: str) -> None:
        super().__init__(f"{kind} in {stage}: {detail}")
        self.kind = kind
        self.detail = detail
        self.stage = stage


class _Timeout(BaseException):
    """Raised by the alarm; a BaseException so that no ``except Exception`` swallows it."""


@contextlib.contextmanager
def alarm(seconds: float) -> Iterator[None]:
    """Raise :class:`_Timeout` after ``seconds`` of wall time (main thread, POSIX)."""
    if seconds <= 0 or not hasattr(signal, "setitimer"):
        yield
        return

    def ring(signum, frame):  # noqa: ANN001 - signal handler signature
        raise _Timeout()

    previous = signal.signal(signal.SIGALRM, ring)
    signal.setitimer(signal.ITIMER_REAL, seconds)
    try:
        yield
    finally:
        signal.setitimer(signal.ITIMER_REAL, 0)
        signal.signal(signal.SIGALRM, previous)


@dataclass(frozen=True)
class Outcome:
    """How a case ended: ``"ok"`` (results), or the error class and the stage that refused it."""

    label: str
    stage: str
    message: str = ""


def crash_signature(crash: FuzzCrash) -> str:
    """A short key that groups crashes with the same cause (kind, stage, innermost frame)."""
    return f"{crash.kind}@{crash.stage}:{crash.detail.splitlines()[-1][:120] if crash.detail else ''}"


def _check_located(err: ClockplanError, stage: str, path: str) -> None:
    if not err.file:
        raise FuzzCrash("unlocated-error", f"{type(err).__name__} without a file: {err.describe()}", stage)
    if stage == "load" and err.file != path:
        raise FuzzCrash("unlocated-error", f"error names {err.file!r}, not the board file", stage)
    if "Traceback" in err.describe():
        raise FuzzCrash("traceback-in-message", err.describe(), stage)


class _Run:
    """Runs named stages; turns anything but a ClockplanError into a FuzzCrash."""

    def __init__(self, path: str) -> None:
        self.path = path
        self.stage = "start"

    @contextlib.contextmanager
    def step(self, stage: str) -> Iterator[None]:
        self.stage = stage
        try:
            yield
        except (ClockplanError, FuzzCrash, _Timeout):
            raise
        except RecursionError:
            raise FuzzCrash("RecursionError", traceback.format_exc(limit=-3), stage) from None
        except Exception as err:  # the point of the harness: anything else is a bug
            detail = "".join(traceback.format_exception(err, limit=-4))
            raise FuzzCrash(type(err).__name__, detail, stage) from None


def _render_all(run: _Run, analysis, command: str, full_html: bool) -> None:
    from clockplan.report.dot import render_dot
    from clockplan.report.formats import FORMATS, render_report
    from clockplan.report.terminal import make_console, render_analysis

    for fmt in FORMATS:
        with run.step(f"{command}-render-{fmt}"):
            if fmt == "html" and not full_html:
                # Without Graphviz and matplotlib drawing (the slow half of a case); the plot data is still gathered.
                from clockplan.report.html import render_html
                from clockplan.report.plots import collect_plot_data

                collect_plot_data(analysis)
                render_html(analysis, command, None, None)
            else:
                render_report(analysis, fmt, command, width=100)
    with run.step(f"{command}-render-rich"):
        render_analysis(analysis, make_console(width=80, color=True, file=io.StringIO()), title=command)
    with run.step(f"{command}-render-dot"):
        render_dot(analysis)


def _explain_all(run: _Run, analysis) -> None:
    from clockplan.report import explain as explainer
    from clockplan.report.json import dumps
    from clockplan.report.terminal import make_console

    for consumer in analysis.consumers[:2]:
        with run.step("explain"):
            explanation = explainer.explain(analysis, consumer.id)
        with run.step("explain-render"):
            explainer.render_explanation(explanation, make_console(width=90, color=True, file=io.StringIO()))
            explainer.explanation_markdown(explanation)
            dumps(explainer.explanation_document(explanation))
            explainer.explanation_fails(explanation)


def _plan_all(run: _Run, board, time_limit_s: float, samples: int, full_html: bool) -> None:
    from clockplan.analysis import AnalysisOptions, analyze
    from clockplan.plan.board_planner import PlanOptions, plan_board
    from clockplan.plan.output import plan_document, plan_findings, render_plan
    from clockplan.report.json import dumps
    from clockplan.report.terminal import make_console

    with run.step("plan"):
        plan = plan_board(board, PlanOptions(alternatives=1, time_limit_s=time_limit_s))
    with run.step("plan-analyze"):
        analysis = analyze(board, plan.settings, AnalysisOptions(samples=samples, seed=1))
        analysis = analysis.with_findings(plan_findings(plan, analysis))
    explanation = None
    if not plan.feasible:
        from clockplan.plan.explain import explain_infeasible

        with run.step("plan-explain"):
            explanation = explain_infeasible(plan, time_limit_s)
            explanation.text()
    with run.step("plan-render"):
        dumps(plan_document(analysis, plan, explanation))
        render_plan(analysis, plan, make_console(width=100, color=True, file=io.StringIO()), explanation)
    _render_all(run, analysis, "plan", full_html)


def run_case(
    data: bytes,
    *,
    time_limit_s: float = 0.3,
    samples: int = 0,
    hang_s: float = 60.0,
    full_html: bool = True,
    folder: str | None = None,
) -> Outcome:
    """Run one board file's bytes through load, audit, every report, plan and the plan reports.

    ``time_limit_s`` is the planner's ``--time-limit``; ``hang_s`` the wall time after
    which the case counts as a hang; ``full_html=False`` leaves the Graphviz and
    matplotlib drawing out of the HTML report (the campaign draws them on a share of cases).
    Returns the :class:`Outcome`; raises :class:`FuzzCrash` when the contract breaks.
    """
    with tempfile.TemporaryDirectory(dir=folder) as tmp:
        path = str(Path(tmp) / "board.toml")
        Path(path).write_bytes(data)
        run = _Run(path)
        try:
            with alarm(hang_s):
                return _run_stages(run, path, time_limit_s, samples, full_html)
        except _Timeout:
            raise FuzzCrash("hang", f"still running after {hang_s} s", run.stage) from None
        except ClockplanError as err:
            _check_located(err, run.stage, path)
            return Outcome(type(err).__name__, run.stage.split("-")[0], err.message)


def _run_stages(run: _Run, path: str, time_limit_s: float, samples: int, full_html: bool) -> Outcome:
    from clockplan.analysis import AnalysisOptions, analyze
    from clockplan.boardfile import load_board

    with run.step("load"):
        board = load_board(path)
    with run.step("audit"):
        analysis = analyze(board, None, AnalysisOptions(samples=samples, seed=1))
    _render_all(run, analysis, "audit", full_html)
    _explain_all(run, analysis)
    _plan_all(run, board, time_limit_s, samples, full_html)
    return Outcome("ok", "done")


def run_cli_case(data: bytes, args: list[str], *, hang_s: float = 60.0) -> tuple[int, str, str]:
    """Run ``clockplan <args[0]> BOARD <args[1:]>`` on the bytes; check status and error text.

    Returns ``(status, stdout, stderr)``; raises :class:`FuzzCrash` on a traceback,
    an exception escaping ``main``, a status other than 0-3, or a malformed error.
    """
    with tempfile.TemporaryDirectory() as tmp:
        path = str(Path(tmp) / "board.toml")
        Path(path).write_bytes(data)
        argv = [args[0], path, *args[1:]]
        stage = "cli-" + args[0]
        status, stdout, stderr = _call_main(argv, stage, hang_s)
        _check_exit(status, stdout, stderr, stage)
        if status == 2 and stderr.count("clockplan: error:") != 1:
            raise FuzzCrash("malformed-error", stderr[:500], stage)
        return status, stdout, stderr


def _call_main(argv: list[str], stage: str, hang_s: float, tmp: str | None = None) -> tuple[int, str, str]:
    """``main(argv)`` with its output captured under a hang alarm; an escape from it is a :class:`FuzzCrash`.

    ``tmp`` (a temporary folder's name) is replaced by ``<tmp>`` in the output, so that one crash keeps
    one signature across runs.
    """
    from clockplan.cli import main

    out, err = io.StringIO(), io.StringIO()
    try:
        with alarm(hang_s), contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
            status = main(argv)
    except _Timeout:
        raise FuzzCrash("hang", f"clockplan {' '.join(argv)} still running after {hang_s} s", stage) from None
    except SystemExit as stop:
        raise FuzzCrash("SystemExit", f"main raised SystemExit({stop.code})", stage) from None
    except Exception as exc:
        raise FuzzCrash(type(exc).__name__, "".join(traceback.format_exception(exc, limit=-4)), stage) from None
    stdout, stderr = out.getvalue(), err.getvalue()
    if tmp is not None:
        stdout, stderr = stdout.replace(tmp, "<tmp>"), stderr.replace(tmp, "<tmp>")
    return status, stdout, stderr


def _check_exit(status: int, stdout: str, stderr: str, stage: str) -> None:
    """A traceback, a status other than 0-3, or an error without its ``clockplan: `` prefix is a crash."""
    if "Traceback" in stderr or "Traceback" in stdout:
        raise FuzzCrash("traceback", stderr[-2000:], stage)
    if status not in (0, 1, 2, 3):
        raise FuzzCrash(f"exit-{status}", stderr[-2000:], stage)
    if status in (2, 3) and not stderr.startswith("clockplan: "):
        raise FuzzCrash("malformed-error", stderr[:500], stage)


#: Seconds a run may take past its --time-limit before the campaign calls it an overrun (the goal is
#: 1 s; the rest is room for a machine shared by other jobs).
OVERRUN_SLACK_S = 2.0

#: Commands whose run may pass its --time-limit, and why (docs/files-and-time-limits.md): the limit
#: bounds their Monte Carlo, not the drawing that follows it.
OVERRUN_EXEMPT = {"plots": "drawing the PNG files with matplotlib comes on top of the limit"}


def run_command_case(case, *, hang_s: float = 60.0, slack_s: float = OVERRUN_SLACK_S) -> tuple[int, str, str]:
    """Run one :class:`tests.fuzz_commands.CommandCase`; check what :func:`run_cli_case` checks, and more.

    Also a crash: a run that ends later than its ``--time-limit`` plus ``slack_s``
    (``overrun``), and an input file whose bytes changed (``input-changed``).
    """
    import time

    with tempfile.TemporaryDirectory() as tmp:
        paths = {"out": str(Path(tmp) / "out")}
        Path(paths["out"]).mkdir()
        for name, data in case.files.items():
            paths[name] = str(Path(tmp) / f"{name}.toml")
            Path(paths[name]).write_bytes(data)
        argv = [_fill(arg, paths) for arg in case.args]
        stage = "cli-" + case.command
        started = time.monotonic()
        status, stdout, stderr = _call_main(argv, stage, hang_s, tmp)
        seconds = time.monotonic() - started
        _check_exit(status, stdout, stderr, stage)
        if case.time_limit is not None and seconds > case.time_limit + slack_s and case.command not in OVERRUN_EXEMPT:
            raise FuzzCrash("overrun", f"clockplan {' '.join(case.args)}: {seconds:.2f} s with --time-limit "
                            f"{case.time_limit:g}", stage)
        for name, data in case.files.items():
            if Path(paths[name]).read_bytes() != data:
                raise FuzzCrash("input-changed", f"clockplan {' '.join(case.args)} changed the input {name}", stage)
        return status, stdout, stderr


def _fill(arg: str, paths: dict[str, str]) -> str:
    """``arg`` with ``{name}`` placeholders (``{board}``, ``{out}/x``) replaced by the case's paths."""
    for name, path in paths.items():
        arg = arg.replace("{" + name + "}", path)
    return arg
