"""Test helper: open a listening page in headless Chromium (Debian's ``chromium`` and
``chromium-driver`` packages) through selenium, and read what its players loaded.

Shared by ``tests/test_listening_browser.py`` and ``tests/benchmarks/bench_listening.py``.
Nothing is fetched from the network: the driver is named by path, so selenium's own
driver manager is never asked.
"""

from __future__ import annotations

import os
import shutil
import time
from pathlib import Path

__all__ = ["METADATA_TIMEOUT_S", "chromium_missing", "open_browser", "open_page", "players_state"]

METADATA_TIMEOUT_S = 20.0
_BROWSERS = ("chromium", "chromium-browser")
_DRIVERS = ("chromedriver", "/usr/lib/chromium/chromedriver")


def _found(names) -> str | None:
    return next((path for path in map(shutil.which, names) if path), None)


def chromium_missing() -> str | None:
    """Why the browser tests cannot run here (None when they can)."""
    import importlib.util

    if importlib.util.find_spec("selenium") is None:
        return "selenium is not installed (pip install -e '.[test]')"
    if _found(_BROWSERS) is None or _found(_DRIVERS) is None:
        return ("Chromium and its driver are not installed (Debian: apt-get install -y chromium "
                "chromium-driver; .ci/run installs them where apt is available)")
    return None


def open_browser():
    """A headless Chromium driven by selenium (muted, no sandbox: tests run in containers as root)."""
    from selenium import webdriver
    from selenium.webdriver.chrome.service import Service

    options = webdriver.ChromeOptions()
    options.binary_location = _found(_BROWSERS)
    for argument in ("--headless=new", "--no-sandbox", "--disable-gpu", "--disable-dev-shm-usage",
                     "--mute-audio", "--no-first-run", "--window-size=1200,900"):
        options.add_argument(argument)
    options.set_capability("goog:loggingPrefs", {"browser": "ALL"})
    os.environ.setdefault("SE_AVOID_STATS", "true")
    return webdriver.Chrome(options=options, service=Service(_found(_DRIVERS)))


def open_page(driver, page: Path) -> float:
    """Load ``page`` from disk; the seconds until the document and every player's metadata are loaded."""
    start = time.perf_counter()
    driver.get(Path(page).resolve().as_uri())
    players_state(driver)
    return time.perf_counter() - start


_WAIT_SCRIPT = """
var done = arguments[arguments.length - 1], deadline = Date.now() + arguments[0] * 1000;
var players = Array.prototype.slice.call(document.querySelectorAll("audio"));
(function poll() {
  var states = players.map(function (a) {
    return {src: a.currentSrc, ready: a.readyState, duration: a.duration,
            error: a.error ? a.error.code : null, volume: a.volume,
            gain: a.getAttribute("data-gain-db"), label: a.getAttribute("aria-label")};
  });
  var settled = states.every(function (s) { return s.ready >= 1 || s.error !== null; });
  if (settled || Date.now() > deadline) { done(states); } else { setTimeout(poll, 20); }
}());
"""


def players_state(driver) -> list[dict]:
    """Every <audio> once it has its metadata or an error (or the timeout passed): src, readyState,
    duration, error code, volume, the page's stated gain and label."""
    driver.set_script_timeout(METADATA_TIMEOUT_S + 5)
    return driver.execute_async_script(_WAIT_SCRIPT, METADATA_TIMEOUT_S)
