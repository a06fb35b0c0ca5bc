"""The terminal report at a fixed width with colour off, margins, budget columns, progress.

Frequencies in the expected text are derived by hand (f_ref / R x N / D); the
UART margin by hand from its ±2 % allowance: 20 MHz / 11 against 1.8432 MHz
is -43/3168 = -1.357 %, which leaves 1 - (43/3168)/(1/50) = 32.1 % of it.
"""

from dataclasses import replace
from fractions import Fraction

import pytest

from clockplan.analysis import analyze
from clockplan.boardfile import load_board
from clockplan.cli import main
from clockplan.report.content import consumers_table, format_tolerance, summarize, tree_text, worst_margins


def exact_audit(path: str):
    """The analysis with no budget stage: the exact audit alone, whatever stages are registered."""
    from clockplan import analysis as pipeline

    saved = list(pipeline.STAGES)
    pipeline.STAGES.clear()
    try:
        return analyze(load_board(path))
    finally:
        pipeline.STAGES[:] = saved


@pytest.fixture
def exact_only(monkeypatch):
    """Pin the report to the exact audit: budget stages merged later must not move these lines."""
    from clockplan import analysis as pipeline

    monkeypatch.setattr(pipeline, "STAGES", [])


@pytest.fixture(scope="module")
def gateway():
    return exact_audit("boards/industrial-gateway.toml")


def test_summary_lines_at_fixed_width(capsys, exact_only):
    assert main(["audit", "boards/industrial-gateway.toml", "--no-color", "--width", "100"]) == 0
    head = capsys.readouterr().out.splitlines()[:10]
    # The summary leads with the verdict, then what failed or went unchecked, then the worst margins;
    # the policy, references and conditions follow (issue 17: a reviewer reads the head first).
    assert head == [
        "clockplan audit: Industrial gateway (boards/industrial-gateway.toml)",
        "verdict: UNCHECKED - 0 error(s), 8 warning(s), 8 consumer(s), 8 unchecked",
        # The exact audit alone computes no ppm or jitter budget: every consumer with one is unchecked, not PASS.
        "unchecked: phy0 (ppm); pcie_slot (ppm, jitter); pcie_switch (ppm, jitter); usb_phy (ppm); ddr_ref ",
        "(ppm); mcu (ppm); uart_clk (ppm); codec_mclk (ppm)",
        "worst margins:",
        "  synthesis: uart_clk 32.1 % left (-1.357 % of ±2 %)",
        "margin warning: 20 % (a passing budget with less left is thin)",
        "references: ref_main 25 MHz (crystal); mcu_rc 16 MHz (rc)",
        "conditions: -40 °C to 85 °C, 10 year(s) of aging",
        "Industrial gateway",
    ]
    assert capsys.readouterr().out == ""
    assert main(["audit", "boards/industrial-gateway.toml", "--no-color", "--width", "100"]) == 0
    lines = capsys.readouterr().out.splitlines()
    assert "verdict: UNCHECKED - 0 error(s), 8 warning(s), 8 consumer(s), 8 unchecked" in lines


def test_synthesis_margin_is_exact(gateway):
    (margin,) = worst_margins(gateway)
    assert margin.consumer == "uart_clk"
    assert margin.headroom == float(1 - Fraction(43, 3168) / Fraction(1, 50))


def test_failing_board_prints_the_failure_in_words(capsys, exact_only):
    assert main(["audit", "boards/video-converter.toml", "--no-color", "--width", "100", "--wide"]) == 1
    lines = capsys.readouterr().out.splitlines()
    assert "  synthesis: audio_codec exact target missed (-244.1 ppm off an exact target)" in lines
    assert "    │       └── audio_codec (consumer) 12.285 MHz (target 12.288 MHz) FAIL" in lines
    row = next(line for line in lines if line.startswith("│ audio_codec"))
    cells = [c.strip() for c in row.strip("│").split("│")]
    assert cells == ["audio_codec", "12.288 MHz", "12.285 MHz", "-244.1 ppm", "synthesis:", "FAIL"]


def test_tree_text_matches_the_graph(gateway):
    lines = tree_text(gateway).splitlines()
    assert lines[0] == "Industrial gateway"
    assert "├── ref_main (reference) 25 MHz" in lines and "└── mcu_rc (reference) 16 MHz" in lines
    assert sum("(consumer)" in line for line in lines) == len(gateway.consumers)
    # 25 MHz x 100 / 125 / 11 = 20/11 MHz: inexact, so marked with ≈ and its target shown.
    # Its ppm budget is not computed by the exact audit alone: unchecked, not PASS.
    assert any("uart_clk (consumer) ≈1.818181818 MHz (target 1.8432 MHz) unchecked" in line for line in lines)


class _Budget:
    def __init__(self, cells, margin):
        self._cells, self._margin = cells, margin

    def table_cells(self):
        return self._cells

    def budget_margin(self):
        return self._margin


def test_budget_columns_and_margins_come_from_the_hooks(gateway):
    phy = replace(gateway.consumer("phy0"),
                  accuracy=_Budget({"ppm worst": "+62 ppm", "ppm budget": "±100 ppm"}, (0.38, "+62 ppm of ±100 ppm")),
                  jitter=_Budget({"jitter": "1.2 ps"}, (-0.2, "1.2 ps of 1 ps")))
    analysis = gateway.with_consumer(phy)
    table = consumers_table(analysis)
    assert table.headers == ("consumer", "target", "achieved", "synthesis error", "ppm worst", "ppm budget", "jitter",
                             "margin", "status")
    rows = {row[0]: row for row in table.rows}
    assert rows["phy0"][4:8] == ("+62 ppm", "±100 ppm", "1.2 ps", "jitter: over by 20 %")
    assert rows["mcu"][4:7] == ("-", "-", "-")
    kinds = {m.kind: (m.consumer, m.headroom) for m in summarize(analysis).margins}
    assert kinds == {"synthesis": ("uart_clk", pytest.approx(0.3213, abs=1e-4)), "ppm": ("phy0", 0.38),
                     "jitter": ("phy0", -0.2)}


@pytest.mark.parametrize(("fraction", "text"), [
    (Fraction(1, 50), "±2 %"),       # 2 % = 20000 ppm
    (Fraction(1, 1000), "±0.1 %"),
    (Fraction(1, 10**4), "±100 ppm"),
    (Fraction(0), "exact"),
])
def test_tolerance_text(fraction, text):
    assert format_tolerance(fraction) == text


def test_a_long_stage_reports_progress_through_the_cli(monkeypatch, capsys):
    from clockplan import analysis as pipeline

    seen = []

    def slow_stage(result, options):
        for step in range(5):
            options.progress((step + 1) / 5)
            seen.append(step)
        return result

    monkeypatch.setattr(pipeline, "STAGES", [slow_stage])
    assert main(["audit", "boards/industrial-gateway.toml", "--json"]) == 0
    assert seen == [0, 1, 2, 3, 4]
    assert capsys.readouterr().err == ""  # a quick run draws no bar: stdout stays pure JSON, stderr quiet


@pytest.mark.parametrize("width", [40, 60, 100, 160])
def test_no_value_is_cut_at_any_width(width, capsys, exact_only):
    # Every cell of the consumer table appears whole: in the grid, or as "header: value" lines.
    analysis = analyze(load_board("boards/video-converter.toml"))
    main(["audit", "boards/video-converter.toml", "--no-color", "--width", str(width)])
    out = capsys.readouterr().out
    lines = [line.strip("│ ") for line in out.splitlines()]
    table = consumers_table(analysis)
    for row in table.rows:
        for header, cell in zip(table.headers, row):
            if " " in cell or len(cell) > width // 3:
                continue  # a multi-word cell may wrap inside a grid cell; its words are checked below
            assert any(cell in line for line in lines), (header, cell)
        for word in " ".join(row).split():
            assert word in out, word


def test_summary_names_the_failing_consumers_and_why():
    analysis = exact_audit("boards/video-converter.toml")
    # The exact audit alone leaves its ppm budget unchecked, which its codes say too.
    assert dict(summarize(analysis).facts)["failing"] == "audio_codec (budget-unchecked, frequency)"


def test_a_warning_upstream_stays_on_its_part():
    # An upstream warning (the oven's power note) does not make every consumer 'warn'; errors do fail them.
    from clockplan.findings import Finding, Severity
    from clockplan.report.content import consumer_status, status_codes

    analysis = exact_audit("boards/sampling-receiver.toml")
    assert consumer_status(analysis, "link_ref") == "unchecked"  # no budget stage ran: its budgets are not computed
    analysis = replace(analysis.with_consumer(replace(analysis.consumer("link_ref"), unchecked=())),
                       findings=tuple(f for f in analysis.findings if f.node != "link_ref"))
    warned = analysis.with_findings([Finding(Severity.WARNING, "note", "ocxo_10m", "upstream note")])
    assert consumer_status(warned, "link_ref") == "PASS"
    failed = analysis.with_findings([Finding(Severity.ERROR, "vco-range", "cleaner", "cannot lock")])
    assert consumer_status(failed, "link_ref") == "FAIL" and status_codes(failed, "link_ref") == ["vco-range"]
    own = analysis.with_findings([Finding(Severity.WARNING, "thin", "link_ref", "little margin")])
    assert consumer_status(own, "link_ref") == "warn"


def test_settings_table_reads_the_operating_mode():
    # A fractional-capable PLL whose planned N is whole runs as integer-N (no fractional
    # spurs): the edge-router's serdes synthesizer (83.33 MHz PFD, N = 30, 2.5 GHz VCO) reads
    # int-N, the audio PLL's N = 225792/3125 reads frac-N (fractions module: N is not whole).
    from clockplan.plan.board_planner import plan_board
    from clockplan.report.content import settings_table

    board = load_board("boards/edge-router.toml")
    plan = plan_board(board)
    modes = {row[0]: (row[1], row[3]) for row in settings_table(analyze(board, plan.settings)).rows}
    assert modes["serdes_synth"] == ("int-N", "30")
    assert modes["audio_pll"] == ("frac-N", "225792/3125")
    assert Fraction(225792, 3125).denominator != 1
