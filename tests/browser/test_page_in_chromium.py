"""The report page in a real browser (headless Chromium): rows per verdict, every filter,
the keyboard, the rejected list saved as a file, a screenshot that shows something, no
console error, and everything listed with JavaScript off."""

from __future__ import annotations

import hashlib
import io
import os
import time
from collections import Counter

import pytest
from typer.testing import CliRunner

from sharpzone.analysis.report_page import primary_verdict
from sharpzone.cli.app import app
from tests.report.page_shoot import EXPECTED, HOSTILE_LENS, HOSTILE_NAME, SHOOT, make_page_shoot


@pytest.fixture
def page_file(tmp_path):
    shoot = make_page_shoot(tmp_path)
    out = tmp_path / "pages" / "quay.html"
    result = CliRunner().invoke(app, ["--catalog", shoot.catalog_url, "report", "--shoot", SHOOT,
                                      "--out", str(out), "--jobs", "1"])
    assert result.exit_code == 0, result.output
    return shoot, out


def _shown(driver) -> list[str]:
    return [os.path.basename(row.get_attribute("data-path"))
            for row in driver.find_elements("css selector", "article.frame") if row.is_displayed()]


def _choose(driver, element_id: str, value: str) -> None:
    from selenium.webdriver.support.ui import Select

    Select(driver.find_element("id", element_id)).select_by_value(value)


def _press(driver, *keys) -> None:
    from selenium.webdriver.common.action_chains import ActionChains

    ActionChains(driver).send_keys(*keys).perform()


def _console_errors(driver) -> list[dict]:
    return [entry for entry in driver.get_log("browser") if entry["level"] in ("SEVERE", "ERROR")]


def _digests(folder) -> dict[str, str]:
    return {name: hashlib.sha256((folder / name).read_bytes()).hexdigest() for name in os.listdir(folder)}


def test_culling_in_chromium(browser_factory, page_file, tmp_path):
    from PIL import Image, ImageStat
    from selenium.webdriver.common.keys import Keys

    shoot, out = page_file
    images_before = _digests(shoot.card)
    driver = browser_factory()
    driver.get(out.as_uri())
    assert driver.title.startswith(SHOOT)

    # Rows per verdict: each frame once, under its worst verdict.
    expected = Counter(primary_verdict(flags) for flags in EXPECTED.values())
    counted = {verdict: len(driver.find_elements("css selector", f'section[data-verdict="{verdict}"] article.frame'))
               for verdict in expected}
    assert counted == dict(expected)
    assert sorted(_shown(driver)) == sorted(EXPECTED)
    assert driver.find_element("id", "shown").text.startswith("8 of 8 frames shown")

    # Each filter.
    _choose(driver, "f-verdict", "too-wide-open")
    assert sorted(_shown(driver)) == ["wide-a.jpg", "wide-b.jpg"]
    assert [s.get_attribute("data-verdict") for s in driver.find_elements("css selector", "section.group")
            if s.is_displayed()] == ["too-wide-open"]
    _choose(driver, "f-verdict", "")
    from selenium.webdriver.support.ui import Select

    Select(driver.find_element("id", "f-lens")).select_by_visible_text(HOSTILE_LENS)
    assert sorted(_shown(driver)) == sorted([HOSTILE_NAME, "held-b.jpg", "wide-b.jpg"])
    _choose(driver, "f-lens", "")
    _choose(driver, "f-body", "Korvath KV-9")
    assert sorted(_shown(driver)) == ["held-b.jpg", "unknown.jpg", "wide-b.jpg"]
    _choose(driver, "f-body", "")
    _choose(driver, "f-fmin", "8")
    assert len(_shown(driver)) == 6 and "wide-a.jpg" not in _shown(driver)
    _choose(driver, "f-fmax", "8")
    assert len(_shown(driver)) == 5 and "held-b.jpg" not in _shown(driver)
    _choose(driver, "f-fmin", "")
    _choose(driver, "f-fmax", "")
    search = driver.find_element("id", "f-search")
    search.send_keys("misfocused")
    assert _shown(driver) == ["misfocused.jpg"]
    search.clear()
    search.send_keys("ZENO")  # the lens name, any case
    assert len(_shown(driver)) == 3
    search.clear()
    search.send_keys(Keys.ESCAPE)
    assert len(_shown(driver)) == len(EXPECTED)

    # The keyboard: ↓ walks the frames in page order, X marks and unmarks.
    order = _shown(driver)
    _press(driver, Keys.ARROW_DOWN)  # the first frame
    _press(driver, "x")
    _press(driver, Keys.ARROW_DOWN, "x", "x")  # the second: marked, then unmarked
    target = order.index(HOSTILE_NAME)
    _press(driver, *[Keys.ARROW_DOWN] * (target - 1), Keys.ARROW_UP, Keys.ARROW_DOWN, "x")
    current = driver.find_element("css selector", "article.frame.current")
    assert os.path.basename(current.get_attribute("data-path")) == HOSTILE_NAME
    rejected = [os.path.basename(r.get_attribute("data-path"))
                for r in driver.find_elements("css selector", "article.frame.rejected")]
    assert rejected == [order[0], HOSTILE_NAME]
    assert "2 marked rejected" in driver.find_element("id", "shown").text
    _choose(driver, "f-verdict", "rejected")
    assert _shown(driver) == rejected
    _choose(driver, "f-verdict", "")

    # The rejected list: a text file of absolute paths, one a line, in page order.
    driver.find_element("tag name", "body").click()
    _press(driver, "s")
    saved = _wait_for_download(driver.downloads)
    assert saved.name == "rejected-quay-portraits.txt"
    assert saved.read_text(encoding="utf-8").splitlines() == [shoot.paths[name] for name in rejected]
    assert _digests(shoot.card) == images_before  # no image file touched

    # A screenshot with something in it (not one flat colour).
    shot = Image.open(io.BytesIO(driver.get_screenshot_as_png())).convert("L")
    assert ImageStat.Stat(shot).var[0] > 200
    shot.close()
    assert _console_errors(driver) == []


def test_without_javascript_every_frame_is_listed(browser_factory, page_file):
    _, out = page_file
    driver = browser_factory(javascript=False)
    driver.get(out.as_uri())
    assert sorted(_shown(driver)) == sorted(EXPECTED)
    assert not driver.find_element("id", "filters").is_displayed()
    assert not any(b.is_displayed() for b in driver.find_elements("css selector", "button.reject"))
    assert _console_errors(driver) == []


def _wait_for_download(folder, seconds: float = 15.0):
    deadline = time.monotonic() + seconds
    while time.monotonic() < deadline:
        done = [p for p in folder.iterdir() if not p.name.endswith((".crdownload", ".tmp"))]
        if done:
            return done[0]
        time.sleep(0.1)
    raise AssertionError(f"nothing was downloaded into {folder}")


def test_it_prints_as_a_contact_sheet(browser_factory, page_file):
    import base64

    from pypdf import PdfReader

    _, out = page_file
    driver = browser_factory()
    driver.get(out.as_uri())
    driver.execute_cdp_cmd("Emulation.setEmulatedMedia", {"media": "print"})
    assert not driver.find_element("id", "filters").is_displayed()
    columns = driver.execute_script(
        "return getComputedStyle(document.querySelector('.frames')).gridTemplateColumns.split(' ').length;")
    assert columns == 4
    bars = [bar for bar in driver.find_elements("css selector", "article.frame svg.bar") if bar.is_displayed()]
    assert len(bars) == len(EXPECTED)
    driver.execute_cdp_cmd("Emulation.setEmulatedMedia", {"media": ""})
    # The printed PDF, read back with pypdf (a reader that is not the browser).
    pdf = PdfReader(io.BytesIO(base64.b64decode(driver.print_page())))
    text = "".join(page.extract_text() for page in pdf.pages)
    assert 1 <= len(pdf.pages) <= 3
    assert "wide-a.jpg" in text and "Too wide open" in text and "Save rejected list" not in text
    assert _console_errors(driver) == []
