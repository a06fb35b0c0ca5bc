"""The HTML report opens in headless Chromium and makes a real picture.

The picture tests skip where no Chromium-family browser is installed (``.ci/run``
installs one where the system's package manager can); the error paths need no
browser and always run. ``bench/report_screenshots.py`` takes the same pictures by hand.
The PNG is checked against the PNG specification with the standard library.
"""

import pytest

from clockplan.analysis import analyze
from clockplan.boardfile import load_board
from clockplan.errors import ClockplanError
from clockplan.fileio import atomic_write_text
from clockplan.report.html import build_html
from clockplan.report.screenshot import find_browser, screenshot_html

from .test_report_plots import png_facts

needs_browser = pytest.mark.skipif(find_browser() is None, reason="no Chromium-family browser installed")


@needs_browser
@pytest.mark.parametrize("board", ["boards/video-converter.toml", "boards/sampling-receiver.toml"])
def test_html_report_screenshot(board, tmp_path):
    page = tmp_path / "report.html"
    atomic_write_text(page, build_html(analyze(load_board(board))))
    png = screenshot_html(page, tmp_path / "report.png", width=1024, height=1400)
    width, height, distinct = png_facts(png.read_bytes())
    assert (width, height) == (1024, 1400)
    assert distinct > 32, "the page drew text, tables and colour, not a blank sheet"


def test_missing_page_is_an_error_not_a_blank_picture(tmp_path):
    with pytest.raises(ClockplanError, match="does not exist"):
        screenshot_html(tmp_path / "absent.html", tmp_path / "absent.png")
    assert not (tmp_path / "absent.png").exists()


def test_no_browser_is_an_error_with_the_install_hint(tmp_path, monkeypatch):
    import clockplan.report.screenshot as screenshot

    page = tmp_path / "report.html"
    atomic_write_text(page, "<html><body>clock tree</body></html>")
    monkeypatch.setattr(screenshot, "find_browser", lambda: None)
    with pytest.raises(ClockplanError, match="no Chromium-family browser") as err:
        screenshot.screenshot_html(page, tmp_path / "report.png")
    assert "apt-get install chromium" in err.value.hint
    assert not (tmp_path / "report.png").exists()
