"""The grouping search: the branch and bound against an exhaustive enumeration, the groupings standards make
possible, and every proposed tree through the real pipeline."""

from __future__ import annotations

from fractions import Fraction

from hypothesis import given, settings
from hypothesis import strategies as st

from clockplan.analysis import analyze
from clockplan.boardfile import parse_board
from clockplan.plan.board_planner import plan_board
from clockplan.synth.evaluate import Evaluator
from clockplan.synth.grouping import BranchAndBound, LeafJudge, SearchStats, TopTrees, enumerate_groupings, exhaustive_search
from clockplan.synth.synthesize import SynthesisOptions, library_for, synthesize
from clockplan.synth.tree import Problem
from tests.synth_helpers import consumer_list, pll_template

# Interface clocks with their budgets (the standards table names the source of each).
POOL = [
    ("156.25 MHz", 'standard = "10GBASE-R"'),  # IEEE 802.3 clause 49
    ("125 MHz", 'standard = "1000BASE-X"'),  # IEEE 802.3 clause 36
    ("100 MHz", 'standard = "PCIe Gen3"'),  # PCI Express Base Specification refclk
    ("25 MHz", 'standard = "1000BASE-T"'),  # IEEE 802.3 clause 40 (PHY reference, common practice)
    ("12.5 MHz", ""),
    ("24.576 MHz", 'standard = "audio-mclk-48k"'),  # 512 x 48 kHz, common practice
    ("12.288 MHz", 'standard = "audio-mclk-48k"'),  # 256 x 48 kHz, common practice
    ("148.5 MHz", 'standard = "3G-SDI"'),  # SMPTE ST 424
    ("74.25 MHz", 'standard = "CTA-861"'),
    ("1.8432 MHz", 'max_synthesis_error = "±2 %"'),  # 16 x 115200 baud
    ("32.768 kHz", 'standard = "rtc-32k"'),
]


def _list(picks):
    return consumer_list([(f"c{i}", POOL[p][0], POOL[p][1]) for i, p in enumerate(picks)], references=("25 MHz", "24.576 MHz"))


def _searches(spec, keep=3):
    problem = Problem.of(spec, library_for(spec))
    references = {}
    for reference in problem.reference_candidates():
        references.setdefault(reference.hz, []).append(reference)
    frequencies = [*references, None]
    judge = LeafJudge(problem, Evaluator(problem), references)
    full = exhaustive_search(judge, frequencies, keep)
    top, stats = TopTrees(keep), SearchStats()
    search = BranchAndBound(judge, top, None, stats)
    for hz in frequencies:
        assert search.run(hz)
    return full, top


@settings(max_examples=20, deadline=None, derandomize=True)
@given(st.lists(st.integers(0, len(POOL) - 1), min_size=2, max_size=6))
def test_branch_and_bound_finds_what_the_enumeration_finds(picks):
    # The exhaustive enumeration judges every grouping with no pruning; the search must return the
    # same best trees (same objective key) when it runs to the end.
    full, top = _searches(_list(picks))
    assert [c.key for c in top.items] == [c.key for c in full.items]


def test_the_enumeration_lists_every_grouping_of_two_classes():
    # 100 MHz (class 0) and 50 MHz (class 1) with a 100 MHz reference, counted by hand. Class 0 opens a
    # block or is taken off the reference. In a block, class 1 joins it as an own class, is divided from
    # it, is taken off the reference (divided by 2), or opens its own block: 4. Off the reference, class 1
    # is taken off it too, or opens a block: 2. Without a main reference: join, divide, apart: 3.
    spec = consumer_list([("a", "100 MHz", ""), ("b", "50 MHz", "")], references=("50 MHz",), allow=None)
    problem = Problem.of(spec, library_for(spec))
    with_reference = list(enumerate_groupings(problem, Fraction(100_000_000)))
    without = list(enumerate_groupings(problem, None))
    assert len(with_reference) == 4 + 2 and len(without) == 3
    assert len({repr(g) for g in with_reference}) == len(with_reference)


def _best_blocks(spec):
    result = synthesize(spec, options=SynthesisOptions(alternatives=0, time_limit_s=20))
    assert result.best is not None and result.best.passes
    return result, result.best.candidate.tree


def test_ethernet_and_pcie_clocks_share_one_vco_at_2_5_ghz():
    # IEEE 802.3 (125 MHz, 156.25 MHz) and PCI Express (100 MHz): one PLL, VCO at their lcm 2.5 GHz.
    spec = consumer_list([("sfp", "156.25 MHz", 'standard = "10GBASE-R"'), ("sgmii", "125 MHz", 'standard = "1000BASE-X"'),
                          ("pcie", "100 MHz", 'standard = "PCIe Gen3"')])
    result, tree = _best_blocks(spec)
    plls = [b for b in tree.blocks if b.is_pll]
    assert len(plls) == 1 and len(plls[0].own) == 3
    (point,) = result.best.verified.analysis.frequencies.plls.values()
    assert point.vco_hz == 2_500_000_000


def test_the_48_khz_audio_family_shares_one_vco():
    # 64, 256, 512 and 1024 x 48 kHz (common practice; AES5 48 kHz sampling): one VCO for all.
    family = [("bclk", "3.072 MHz"), ("mclk", "12.288 MHz"), ("dsp", "24.576 MHz"), ("fpga", "49.152 MHz")]
    spec = consumer_list([(i, f, 'standard = "audio-mclk-48k"') for i, f in family], references=("25 MHz",))
    result, tree = _best_blocks(spec)
    served = sorted(c for b in tree.blocks for c in b.members())
    assert len(tree.blocks) == 1 and served == [0, 1, 2, 3]
    (point,) = result.best.verified.analysis.frequencies.plls.values()
    assert (point.vco_hz / Fraction(49_152_000)).denominator == 1


# The PFD range starts a little below 5 MHz: 25 MHz / 5 must stay inside it over the TCXO's error band
# (the planner keeps that margin from every range edge, docs/planning.md).
_INTEGER_ONLY_ABOVE_5_MHZ = pll_template("int-synth-hi-pfd", "integer", ("2.4 GHz", "3.2 GHz"), ("4.9 MHz", "100 MHz"), 255, (16, 4095), (4, 511), "0.3 W")


def test_the_two_frame_rate_families_need_two_vcos_and_a_fractional_path(tmp_path):
    # SMPTE ST 424: 148.5 MHz and 148.5/1.001 MHz never share a VCO (lcm 148.5 GHz). From a 25 MHz
    # reference with the PFD at 5 MHz or more (R <= 5), no whole N reaches 148.5/1.001 MHz x D for any
    # D in range (it needs R a multiple of 13): the fractional-N part takes it.
    library = tmp_path / "parts.toml"
    library.write_text(_INTEGER_ONLY_ABOVE_5_MHZ, encoding="utf-8")
    spec = consumer_list(
        [("sdi", "148.5 MHz", 'standard = "3G-SDI"'), ("sdi_1001", "148.5/1.001 MHz", 'standard = "3G-SDI"')],
        allow=["tcxo", "int-synth-hi-pfd", "frac-synth-4", "divider", "fanout-2"],
        library="parts.toml",  # beside the list, as a board file may name it
        file=str(tmp_path / "test-list.toml"),
    )
    result, tree = _best_blocks(spec)
    by_class = {c: b for b in tree.blocks for c in b.members()}
    assert by_class[0] is not by_class[1]
    assert by_class[0].kind.name == "int-synth-hi-pfd" and by_class[1].kind.name == "frac-synth-4"
    assert any(r.code == "no-common-vco" and "148.5 GHz" in r.message for r in result.explanation.apart)


@settings(max_examples=5, deadline=None, derandomize=True)
@given(st.lists(st.integers(0, len(POOL) - 1), min_size=3, max_size=8))
def test_every_proposed_tree_passes_plan_and_audit_unchanged(picks):
    result = synthesize(_list(picks), options=SynthesisOptions(alternatives=2, time_limit_s=20))
    assert result.trees
    for proposed in result.trees:
        board = parse_board(proposed.verified.text)
        analysis = analyze(board)
        assert not analysis.has_errors
        assert all(r.synthesis_error is not None for r in analysis.consumers)
        # The planner keeps the written settings: the file is already planned.
        assert plan_board(board).settings == board.given_settings()


def test_a_fixed_reference_is_the_root_of_every_tree():
    # CTA-861 pixel clocks from the board's own 27 MHz oscillator: 148.5 MHz = 27 MHz x 55 / 10.
    text = (
        '[board]\nname = "fixed"\ntemperature = ["0 C", "50 C"]\nlifetime = "5 years"\n[synthesis]\nallow = ["int-synth-2", "int-synth-4", "fanout-2", "divider"]\n'
        '[[reference]]\nid = "main"\nfrequency = "27 MHz"\nkind = "tcxo"\n'
        '[[consumer]]\nid = "pix"\nfrequency = "148.5 MHz"\nstandard = "CTA-861"\n'
        '[[consumer]]\nid = "half"\nfrequency = "74.25 MHz"\nstandard = "CTA-861"\n'
    )
    from clockplan.synth.input import parse_consumer_list

    result = synthesize(parse_consumer_list(text, "fixed.toml"), options=SynthesisOptions(alternatives=1, time_limit_s=20))
    for proposed in result.trees:
        assert proposed.candidate.tree.reference.fixed.id == "main"
        board = parse_board(proposed.verified.text)
        assert [r.id for r in board.references] == ["main"] and board.references[0].kind == "tcxo"
        (point,) = proposed.verified.analysis.frequencies.plls.values()
        assert point.input_hz == 27_000_000 and point.vco_hz % Fraction(148_500_000) == 0
