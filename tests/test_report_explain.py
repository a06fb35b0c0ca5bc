"""``clockplan explain``: the exact chain and the waterfalls, checked by hand and by other libraries.

The frequency chain is checked against the definition of an R/N/D synthesizer
(f_pfd = f_in / R, f_vco = f_pfd x N, f_out = f_vco / D), written out by hand
as Fractions. Running totals are checked against ``fractions`` (worst-case
ranges add end to end; cascaded fractional errors compose as (1+a)(1+b)-1) and
against ``math.hypot`` (uncorrelated RMS jitter adds as root-sum-square).
"""

import json
import math
from dataclasses import dataclass, replace
from fractions import Fraction

import pytest
from markdown_it import MarkdownIt

from clockplan.analysis import analyze
from clockplan.boardfile import load_board
from clockplan.cli import main
from clockplan.errors import ClockplanError
from clockplan.report.explain import (
    contribution_rows,
    explain,
    explanation_document,
    explanation_markdown,
)

PPM = Fraction(1, 10**6)


@dataclass(frozen=True)
class _Term:  # the shape of a reference error term: a name and its extremes
    name: str
    low: Fraction
    high: Fraction


class _Accuracy:
    contributions = (
        _Term("initial", -20 * PPM, 20 * PPM),
        _Term("temperature", -25 * PPM, 10 * PPM),
        _Term("aging", Fraction(0), 5 * PPM),
    )

    def table_cells(self):
        return {"ppm worst": "-45 ppm", "ppm budget": "±100 ppm"}

    def budget_margin(self):
        return 0.55, "-45 ppm of ±100 ppm"


class _Jitter:
    def contributions(self):  # a method works as well as an attribute
        return [("ref_27m", 3e-13), ("pix_pll", 4e-13), ("pix_fanout", 1.2e-13)]

    def table_cells(self):
        return {"jitter": "0.51 ps"}


@pytest.fixture(scope="module")
def video():
    from .test_report_terminal import exact_audit

    return exact_audit("boards/video-converter.toml")


def test_the_chain_is_exact(video):
    stages = explain(video, "audio_codec").stages
    # 27 MHz / R 25 = 1.08 MHz; x N 455 = 491.4 MHz; / D 40 = 12.285 MHz.
    expected = [Fraction(27_000_000), Fraction(27_000_000, 25), Fraction(27_000_000, 25) * 455,
                Fraction(27_000_000, 25) * 455 / 40, Fraction(27_000_000, 25) * 455 / 40]
    assert [s.frequency_hz for s in stages] == expected
    assert [s.node for s in stages] == ["ref_27m", "audio_pll", "audio_pll", "audio_pll.mclk", "audio_codec"]
    assert "R = 25" in stages[1].operation and "N = 455" in stages[2].operation and "D = 40" in stages[3].operation


def test_a_cascade_chain_is_exact():
    analysis = analyze(load_board("boards/sampling-receiver.toml"))
    stages = explain(analysis, "sysref").stages
    # 10 MHz x 250 / 25 = 100 MHz; x 18432/625 = 2.94912 GHz; / 24 = 122.88 MHz; / 32 = 3.84 MHz.
    assert stages[-1].frequency_hz == Fraction(10_000_000) * 250 / 25 * Fraction(18432, 625) / 24 / 32 == 3_840_000
    assert [s.role for s in stages].count("PLL feedback") == 2


def test_without_budgets_the_waterfall_is_the_exact_synthesis_error(video):
    explanation = explain(video, "audio_codec")
    (row,) = explanation.accuracy_rows
    # 12.285 / 12.288 - 1 = -3/12288 = -1/4096 exactly (-244.140625 ppm).
    assert row.amount == (Fraction(-1, 4096), Fraction(-1, 4096))
    assert "-1/4096" in row.stage and row.adds == "-244.1 ppm"
    assert explanation.jitter_rows == ()
    assert any("No jitter data" in n for n in explanation.notes)


def test_accuracy_waterfall_adds_the_offered_rows_in_order(video):
    result = replace(video.consumer("audio_codec"), accuracy=_Accuracy())
    rows = explain(video.with_consumer(result), "audio_codec").accuracy_rows
    assert [r.stage for r in rows] == ["initial", "temperature", "aging"]  # the result's rows, nothing added
    assert rows[2].total == (-45 * PPM, 35 * PPM)  # -20-25+0 and 20+10+5 ppm, ranges end to end
    assert rows[1].adds == "-25 ppm .. +10 ppm" and rows[0].adds == "±20 ppm"


def test_jitter_waterfall_is_root_sum_square(video):
    result = replace(video.consumer("hdmi_tx"), jitter=_Jitter())
    rows = explain(video.with_consumer(result), "hdmi_tx").jitter_rows
    amounts = [3e-13, 4e-13, 1.2e-13]
    assert rows[1].total == pytest.approx(math.hypot(*amounts[:2]), rel=1e-12)
    assert rows[2].total == pytest.approx(math.hypot(*amounts), rel=1e-12)
    shares = [float(r.share.rstrip(" %")) for r in rows]
    assert sum(shares) == pytest.approx(100, abs=0.1)
    assert rows[1].share == f"{(4e-13) ** 2 / sum(a * a for a in amounts) * 100:.3g} %"


@pytest.mark.parametrize(
    ("source", "rows"),
    [
        ((("a", 1e-13),), [("a", 1e-13)]),
        ([["b", 2e-13, "extra"]], [("b", 2e-13)]),
        ((_Term("initial", -PPM, PPM),), [("initial", (-PPM, PPM))]),
        ((), []),
    ],
)
def test_contribution_shapes(source, rows):
    class Budget:
        contributions = source

    assert contribution_rows(Budget()) == rows
    assert contribution_rows(None) == []


def test_unknown_consumer_suggests_the_nearest(video):
    with pytest.raises(ClockplanError, match="no consumer 'audio_codc'") as caught:
        explain(video, "audio_codc")
    assert "audio_codec" in caught.value.hint


def test_explain_json_document(video):
    result = replace(video.consumer("audio_codec"), accuracy=_Accuracy())
    doc = json.loads(json.dumps(explanation_document(explain(video.with_consumer(result), "audio_codec"))))
    assert doc["command"] == "explain" and doc["status"] == "fail"
    assert doc["consumer"]["id"] == "audio_codec"
    assert [Fraction(s["frequency_hz_exact"]) for s in doc["chain"]][-1] == Fraction(12_285_000)
    assert [Fraction(x) for x in map(str, doc["accuracy_waterfall"][2]["running_range"])] == [
        Fraction("-45e-6"), Fraction("35e-6")]
    assert doc["findings"][0]["code"] == "frequency"


def test_explain_markdown_tables_parse(video):
    result = replace(video.consumer("hdmi_tx"), jitter=_Jitter(), accuracy=_Accuracy())
    text = explanation_markdown(explain(video.with_consumer(result), "hdmi_tx"))
    tokens = MarkdownIt("commonmark").enable("table").parse(text)
    headings = [tokens[i + 1].content for i, t in enumerate(tokens) if t.type == "heading_open" and t.tag == "h2"]
    assert headings[:4] == ["Frequency chain (exact)", "Frequency error, worst case (what adds how much, in order)",
                            "Jitter, RMS (adds as root-sum-square)", "Budget results"]
    # The exact audit alone checks no budget: hdmi_tx's budget-unchecked warning adds the chain's findings table.
    assert headings[-1] == "Findings on this chain"
    assert sum(t.type == "table_open" for t in tokens) == 5


@pytest.mark.parametrize(("consumer", "status"), [("audio_codec", 1), ("hdmi_tx", 0)])
def test_explain_exit_status_follows_the_consumer(consumer, status, capsys, monkeypatch):
    from clockplan import analysis as pipeline

    monkeypatch.setattr(pipeline, "STAGES", [])
    assert main(["explain", "boards/video-converter.toml", consumer, "--no-color", "--width", "100"]) == status
    out = capsys.readouterr().out
    assert out.splitlines()[0] == f"clockplan explain: {consumer} on Video format converter (boards/video-converter.toml)"
    # With no budget stage, hdmi_tx's ppm and jitter budgets are not computed: unchecked, not PASS (exit 0 by default).
    assert out.splitlines()[1].startswith("FAIL:" if status else "unchecked:")


def test_explain_terminal_output_at_fixed_width(capsys, monkeypatch):
    from clockplan import analysis as pipeline

    monkeypatch.setattr(pipeline, "STAGES", [])
    main(["explain", "boards/video-converter.toml", "audio_codec", "--no-color", "--width", "100"])
    lines = capsys.readouterr().out.splitlines()
    assert lines[1] == ("FAIL: 12.285 MHz for a 12.288 MHz target, synthesis error -244.1 ppm; "
                        "synthesis: exact target missed")
    assert "│ 3 │ audio_pll       │ PLL feedback      │ × N = 455  (VCO)            │  491.4 MHz │" in lines
    assert "│   │ overall         │                   │ × 91/200 from the reference │ 12.285 MHz │" in lines


def test_explain_writes_files(tmp_path, capsys):
    for fmt in ("json", "markdown", "table"):
        target = tmp_path / f"explain.{fmt}"
        assert main(["explain", "boards/video-converter.toml", "pix_720p", "--format", fmt, "-o", str(target)]) == 0
        assert "pix_720p" in target.read_text(encoding="utf-8")


# --------------------------------------------------------------------------- with the real budget results


def test_waterfall_total_agrees_with_the_accuracy_module():
    # The ppm stage's own worst case is the reference: its rows must add up to it exactly.
    analysis = analyze(load_board("boards/industrial-gateway.toml"))
    judged = [c for c in analysis.consumers if c.accuracy is not None]
    assert len(judged) == len(analysis.consumers)  # the demo board gives every reference's accuracy
    for consumer in judged:
        rows = explain(analysis, consumer.id).accuracy_rows
        numeric = [r for r in rows if r.total is not None]
        assert numeric[-1].total == (consumer.accuracy.result.worst_case,) * 2, consumer.id


def test_jitter_waterfall_agrees_with_the_jitter_module(video):
    from clockplan.jitter.result import JitterResult

    # 300 fs and 400 fs uncorrelated: 500 fs RMS in total (root-sum-square).
    jitter = JitterResult(148.5e6, 12e3, 20e6, 5e-13, (("pix_pll", 4e-13), ("ref_27m", 3e-13)), 1e-12)
    result = replace(video.consumer("hdmi_tx"), jitter=jitter)
    explanation = explain(video.with_consumer(result), "hdmi_tx")
    assert explanation.jitter_rows[-1].total == pytest.approx(jitter.rms_seconds, rel=1e-12)
    assert explanation.budget_cells["jitter"] == "500 fs"
    assert explanation.jitter_rows[0].share == f"{jitter.shares()['pix_pll'] * 100:.3g} %"
