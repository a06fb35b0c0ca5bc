"""Pictures of the reports, to look at them as a reader would.

For each demo board this writes, into the output folder (default
``bench/out/screenshots``): the HTML report and its screenshot taken by
headless Chromium, and the Markdown report rendered by markdown-it-py (as a
code-hosting site would render it) and its screenshot. It prints the time each
step took. Needs Chromium (``apt-get install chromium``); Graphviz and
matplotlib are used when installed.

    python bench/report_screenshots.py [--out FOLDER] [--width 1280] [--height 2200]
"""

from __future__ import annotations

import argparse
import sys
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent.parent))

from markdown_it import MarkdownIt  # noqa: E402

from clockplan.analysis import analyze  # noqa: E402
from clockplan.boardfile import load_board  # noqa: E402
from clockplan.fileio import atomic_write_text  # noqa: E402
from clockplan.report.html import build_html  # noqa: E402
from clockplan.report.markdown import render_markdown  # noqa: E402
from clockplan.report.screenshot import screenshot_html  # noqa: E402

# A plain page around rendered Markdown, close enough to how code-hosting sites lay out tables.
_PAGE = """<!DOCTYPE html><html><head><meta charset="utf-8"><style>
body {{ font: 15px/1.5 system-ui, sans-serif; max-width: 1000px; margin: 1.5rem auto; color: #1f2328; }}
table {{ border-collapse: collapse; margin: .5rem 0 1rem; }} th, td {{ border: 1px solid #d0d7de; padding: 4px 10px; }}
th {{ background: #f6f8fa; }} pre {{ background: #f6f8fa; padding: 12px; overflow: auto; }}
code {{ font-family: ui-monospace, monospace; font-size: 90%; }} blockquote {{ color: #59636e; border-left: 4px solid #d0d7de;
margin: 0; padding: 0 1em; }}</style></head><body>{body}</body></html>"""


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--out", default="bench/out/screenshots", help="output folder")
    parser.add_argument("--width", type=int, default=1280)
    parser.add_argument("--height", type=int, default=2200)
    args = parser.parse_args()
    out = Path(args.out)
    out.mkdir(parents=True, exist_ok=True)
    print(f"{'board':<22} {'step':<22} {'seconds':>8}  file")
    for board in sorted(Path("boards").glob("*.toml")):
        analysis = analyze(load_board(board))
        for kind, text in (("html", build_html(analysis)),
                           ("markdown", _PAGE.format(body=MarkdownIt("commonmark").enable("table").render(
                               render_markdown(analysis))))):
            page = out / f"{board.stem}.{kind}.html"
            atomic_write_text(page, text)
            start = time.perf_counter()
            png = screenshot_html(page, out / f"{board.stem}.{kind}.png", args.width, args.height)
            print(f"{board.stem:<22} {kind + ' screenshot':<22} {time.perf_counter() - start:8.2f}  {png}")


if __name__ == "__main__":
    main()
