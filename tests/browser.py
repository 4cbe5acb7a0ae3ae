"""Headless Chromium (Debian packages ``chromium`` and ``chromium-driver``) for page tests.

>>> with browser.chrome() as driver:          # doctest: +SKIP
...     driver.get(page.as_uri())
...     assert browser.console_errors(driver) == []

Under CI (``CI`` set) a missing browser, driver or selenium is a failure, not a
skip: the page tests must run somewhere. The browser runs with a fresh
profile in a temporary folder and with background networking, updates, sync
and QUIC disabled, so a test run makes no connections of its own.
"""

from __future__ import annotations

import contextlib
import os
import shutil
import tempfile
from pathlib import Path
from typing import Iterator

import pytest

CHROMIUM = os.environ.get("REPORTGEN_CHROMIUM", "/usr/bin/chromium")
CHROMEDRIVER = os.environ.get("REPORTGEN_CHROMEDRIVER", "/usr/bin/chromedriver")

ARGS = [
    "--headless",
    "--no-sandbox",
    "--disable-gpu",
    "--disable-quic",
    "--no-first-run",
    "--disable-background-networking",
    "--disable-component-update",
    "--disable-sync",
    "--disable-dev-shm-usage",
    "--window-size=1200,900",
]


def _unavailable(reason: str):
    if os.environ.get("CI"):
        pytest.fail(f"{reason}; browser tests cannot run")
    pytest.skip(reason)


def _find(exe: str, pkg: str) -> str:
    if os.path.isfile(exe) and os.access(exe, os.X_OK):
        return exe
    found = shutil.which(os.path.basename(exe))
    if not found:
        _unavailable(f"{exe} not found (apt-get install {pkg})")
    return found


def require_browser() -> tuple[str, str]:
    """Paths of chromium and chromedriver; skips (fails under CI) when either or selenium is missing."""
    try:
        import selenium  # noqa: F401
    except ImportError:
        _unavailable("selenium is not installed (pip install selenium)")
    return _find(CHROMIUM, "chromium"), _find(CHROMEDRIVER, "chromium-driver")


@contextlib.contextmanager
def chrome() -> Iterator["object"]:
    """A selenium Chrome driver on headless Chromium, quit (and its profile removed) on exit."""
    binary, driver_path = require_browser()
    from selenium import webdriver
    from selenium.webdriver.chrome.service import Service

    profile = tempfile.mkdtemp(prefix="reportgen-chromium-")
    opts = webdriver.ChromeOptions()
    opts.binary_location = binary
    for a in ARGS:
        opts.add_argument(a)
    opts.add_argument(f"--user-data-dir={profile}")
    opts.set_capability("goog:loggingPrefs", {"browser": "ALL"})
    service = Service(executable_path=driver_path, log_output=os.devnull)
    driver = None
    try:
        driver = webdriver.Chrome(service=service, options=opts)
        driver.set_page_load_timeout(30)
        yield driver
    finally:
        if driver is not None:
            driver.quit()
        shutil.rmtree(profile, ignore_errors=True)


def console_messages(driver) -> list[dict]:
    """Browser console entries since the last call (each read empties the log)."""
    return list(driver.get_log("browser"))


def console_errors(driver) -> list[str]:
    """Messages of console entries at level SEVERE (uncaught exceptions, console.error, failed loads)."""
    return [e.get("message", "") for e in console_messages(driver) if e.get("level") == "SEVERE"]


def file_url(path: Path) -> str:
    return Path(path).resolve().as_uri()
