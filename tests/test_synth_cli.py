"""The ``synthesize`` command: the demo end to end, the written board accepted unchanged, JSON, exit codes."""

from __future__ import annotations

import json
import tomllib

from clockplan.cli import main

DEMO = "boards/synthesis/consumer-list.toml"


def test_demo_is_synthesized_and_the_written_board_is_accepted_unchanged(tmp_path, capsys):
    out = tmp_path / "encoder-tree.toml"
    assert main(["synthesize", DEMO, "--write", str(out), "--no-color", "--width", "160"]) == 0
    printed = capsys.readouterr()
    assert "Trees side by side" in printed.out and "tree 1" in printed.out
    assert "Why these clocks do not share a PLL" in printed.out and "148.5 GHz" in printed.out
    assert "typical figures" in printed.out and "wrote the best tree" in printed.err
    text = out.read_text(encoding="utf-8")
    doc = tomllib.loads(text)
    assert {"board", "reference", "pll", "consumer"} <= set(doc) and len(doc["consumer"]) == 16
    assert all("settings" in pll for pll in doc["pll"])
    # audit accepts it as written; plan leaves it as it is.
    assert main(["audit", str(out), "--json"]) == 0
    assert json.loads(capsys.readouterr().out)["verdict"] == "pass"
    replanned = tmp_path / "replanned.toml"
    assert main(["plan", str(out), "--write", str(replanned), "--json"]) == 0
    capsys.readouterr()
    assert replanned.read_text(encoding="utf-8") == text


def _write_list(tmp_path, body: str, name: str = "list.toml"):
    path = tmp_path / name
    path.write_text('[board]\nname = "cli test"\ntemperature = ["0 C", "50 C"]\nlifetime = "5 years"\n' + body, encoding="utf-8")
    return path


_SMALL = (
    '[synthesis]\nreference_frequencies = ["25 MHz"]\nallow = ["xo", "tcxo", "int-synth-4", "fanout-2", "divider"]\n'
    '[[consumer]]\nid = "phy"\nfrequency = "125 MHz"\nstandard = "1000BASE-X"\n'
    '[[consumer]]\nid = "ssd"\nfrequency = "100 MHz"\nstandard = "PCIe Gen3"\n'
)


def test_json_document(tmp_path, capsys):
    path = _write_list(tmp_path, _SMALL)
    assert main(["synthesize", str(path), "--json", "--alternatives", "1"]) == 0
    doc = json.loads(capsys.readouterr().out)
    assert doc["command"] == "synthesize" and doc["verdict"] == "pass"
    assert doc["objective"] == ["parts", "power_w", "relative_cost", "worst_margin"]
    best = doc["trees"][0]
    assert best["rank"] == 1 and best["passes"] and best["plls"] == ["int-synth-4: 125 MHz, 100 MHz"]
    assert doc["best"]["command"] == "synthesize" and doc["best"]["verdict"] == "pass"
    assert tomllib.loads(doc["best_board_toml"])["pll"][0]["settings"]["r"] >= 1
    assert doc["search"]["complete"] is True


def test_no_tree_meets_the_budgets_exits_3_with_reasons(tmp_path, capsys):
    # 3GPP TS 36.101: ±0.1 ppm holds only once the handset locks to the network; no free-running
    # oscillator grade in the library meets it over temperature and life.
    body = '[[consumer]]\nid = "modem"\nfrequency = "26 MHz"\nstandard = "LTE"\n'
    path = _write_list(tmp_path, '[synthesis]\nallow = ["xo", "tcxo", "int-synth-4"]\n' + body)
    assert main(["synthesize", str(path), "--no-color", "--width", "160"]) == 3
    captured = capsys.readouterr()
    assert "NO TREE MEETS EVERY BUDGET" in captured.out
    assert "no feasible plan" in captured.err and "modem" in captured.err and "ppm" in captured.err


def test_bad_input_and_usage_exit_2(tmp_path, capsys):
    bad = _write_list(tmp_path, '[[consumer]]\nid = "a"\nsource = "x"\nfrequency = "1 MHz"\n')
    assert main(["synthesize", str(bad)]) == 2
    assert "leaves the source to synthesis" in capsys.readouterr().err
    good = _write_list(tmp_path, _SMALL, "good.toml")
    assert main(["synthesize", str(good), "--write", str(good)]) == 2
    assert "refusing to overwrite" in capsys.readouterr().err
    assert main(["synthesize", str(good), "--time-limit", "0"]) == 2
    assert main(["synthesize", str(good), "--library", str(tmp_path / "missing.toml")]) == 2


def test_a_user_library_offers_its_own_part(tmp_path, capsys):
    library = tmp_path / "parts.toml"
    library.write_text(
        '[[pll]]\nname = "tiny-synth"\nlabel = "test part"\nmode = "integer"\nvco = ["2.4 GHz", "3.2 GHz"]\n'
        'pfd = ["1 MHz", "100 MHz"]\nr = [1, 255]\nn = [16, 4095]\noutputs = 2\noutput_divider = [4, 511]\n'
        'power = "0.05 W"\ncost = 1\n',
        encoding="utf-8",
    )
    path = _write_list(tmp_path, _SMALL.replace('"int-synth-4", ', '"int-synth-4", "tiny-synth", '))
    assert main(["synthesize", str(path), "--library", str(library), "--json"]) == 0
    doc = json.loads(capsys.readouterr().out)
    assert doc["trees"][0]["plls"] == ["tiny-synth: 125 MHz, 100 MHz"]
