"""A PNG picture of an HTML report, taken by headless Chromium when it is installed.

Used by the test suite and ``bench/report_screenshots.py`` to look at the HTML
report as a reader would, and handy for attaching a picture of a report to a
review. Chromium runs with networking refused, which also proves that the
report needs nothing from outside.
"""

from __future__ import annotations

import shutil
import subprocess
import tempfile
from pathlib import Path

from clockplan.errors import ClockplanError

__all__ = ["BROWSERS", "find_browser", "screenshot_html"]

#: Program names tried, in order.
BROWSERS = ("chromium", "chromium-browser", "google-chrome", "google-chrome-stable")

_INSTALL_HINT = "install Chromium ('apt-get install chromium' on Debian or Ubuntu) or pass browser=PATH"


def find_browser() -> str | None:
    """The path of a Chromium-family browser on the PATH, or None."""
    for name in BROWSERS:
        found = shutil.which(name)
        if found:
            return found
    return None


def screenshot_html(html_path: str | Path, png_path: str | Path, width: int = 1280, height: int = 2000,
                    browser: str | None = None, timeout_s: float = 90.0) -> Path:
    """Render ``html_path`` in headless Chromium and save a ``width`` x ``height`` PNG.

    Raises
    ------
    ClockplanError
        No browser is installed, it failed, or it wrote no picture.

    Examples
    --------
    >>> screenshot_html("report.html", "report.png")  # doctest: +SKIP
    PosixPath('report.png')
    """
    if not Path(html_path).is_file():
        raise ClockplanError(f"no page to show: {html_path} does not exist", hint="write the HTML report first")
    program = browser or find_browser()
    if program is None:
        raise ClockplanError("no Chromium-family browser is installed", hint=_INSTALL_HINT)
    png_path = Path(png_path).resolve()
    png_path.unlink(missing_ok=True)
    with tempfile.TemporaryDirectory(prefix="clockplan-chromium-") as profile:
        command = [
            program, "--headless", "--no-sandbox", "--disable-gpu", "--hide-scrollbars", "--no-first-run",
            # No network at all: the report must need nothing from outside, and a closed network must not stall it.
            "--disable-background-networking", "--disable-component-update", "--disable-sync", "--disable-quic",
            f"--user-data-dir={profile}", "--host-resolver-rules=MAP * ~NOTFOUND",
            f"--window-size={width},{height}", f"--screenshot={png_path}", Path(html_path).resolve().as_uri(),
        ]
        try:
            done = subprocess.run(command, capture_output=True, timeout=timeout_s, check=False)
        except subprocess.TimeoutExpired as err:
            raise ClockplanError(f"the browser took longer than {timeout_s:g} s", hint="try again") from err
    if done.returncode != 0 or not png_path.is_file():
        tail = done.stderr.decode("utf-8", "replace").strip().splitlines()[-1:] or [f"exit {done.returncode}"]
        raise ClockplanError(f"the browser made no screenshot: {tail[0]}",
                             hint=f"run it by hand to see why: {' '.join(command[:-1])} PAGE")
    return png_path
