"""Headless Chromium from Debian's packages (``.ci/run`` installs ``chromium`` and
``chromium-driver``), driven by Selenium. Tests skip, saying why, when either is missing."""

from __future__ import annotations

import os
import shutil

import pytest

CHROMIUM = "/usr/bin/chromium"
CHROMEDRIVER = "/usr/bin/chromedriver"
# No first-run work, no network of its own, no GPU: a quiet, repeatable browser.
FLAGS = ("--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
         "--disable-background-networking", "--disable-component-update", "--disable-sync",
         "--window-size=1280,1000", "--hide-scrollbars")


def _missing() -> str | None:
    for path in (CHROMIUM, CHROMEDRIVER):
        if not os.access(path, os.X_OK):
            return f"{path} is not installed (apt-get install chromium chromium-driver; .ci/run does)"
    try:
        import selenium  # noqa: F401
    except ImportError:
        return "selenium is not installed (pip install -e '.[test]')"
    return None


@pytest.fixture
def browser_factory(tmp_path):
    """``browser_factory(javascript=True)`` → a fresh headless Chromium (own profile folder,
    downloads into ``tmp_path / 'downloads'``, console messages kept); all quit at teardown."""
    reason = _missing()
    if reason:
        pytest.skip(reason)
    from selenium import webdriver
    from selenium.webdriver.chrome.service import Service

    drivers = []

    def start(javascript: bool = True):
        downloads = tmp_path / "downloads"
        downloads.mkdir(exist_ok=True)
        profile = tmp_path / f"profile-{len(drivers)}"
        options = webdriver.ChromeOptions()
        options.binary_location = CHROMIUM
        for flag in (*FLAGS, f"--user-data-dir={profile}"):
            options.add_argument(flag)
        prefs = {"download.default_directory": str(downloads), "download.prompt_for_download": False,
                 "download.directory_upgrade": True, "safebrowsing.enabled": False}
        if not javascript:
            prefs["profile.managed_default_content_settings.javascript"] = 2
        options.add_experimental_option("prefs", prefs)
        options.set_capability("goog:loggingPrefs", {"browser": "ALL"})
        driver = webdriver.Chrome(service=Service(CHROMEDRIVER), options=options)
        drivers.append(driver)
        driver.execute_cdp_cmd("Browser.setDownloadBehavior", {"behavior": "allow", "downloadPath": str(downloads),
                                                               "eventsEnabled": False})
        driver.downloads = downloads
        return driver

    yield start
    for driver in drivers:
        driver.quit()
    shutil.rmtree(tmp_path / "downloads", ignore_errors=True)
