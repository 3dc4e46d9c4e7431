"""The report page (``sharpzone report``) without a browser: what it lists, in which order,
that it is self-contained, that text from files stays text, and that no image file is touched.
(tests/browser drives the same page in Chromium.)"""

from __future__ import annotations

import base64
import hashlib
import html
import io
import json
import math
import os
import re
from html.parser import HTMLParser

import pytest
from PIL import Image
from typer.testing import CliRunner

from sharpzone.analysis.report_page import (
    VERDICT_ORDER,
    DistanceScale,
    make_thumbnails,
    primary_verdict,
    report_from_check,
    verdict_rank,
)
from sharpzone.cli.app import app
from sharpzone.report.page_html import render_page
from tests.report.page_shoot import EXPECTED, HOSTILE_LENS, HOSTILE_NAME, SHOOT, frame_jpeg, make_page_shoot

runner = CliRunner()


class _Page(HTMLParser):
    """The parts of the page the tests look at, read by the standard library's HTML parser."""

    def __init__(self):
        super().__init__()
        self.frames: list[dict] = []
        self.groups: list[str] = []
        self.images: list[str] = []
        self.h3: list[str] = []
        self._in_h3 = False

    def handle_starttag(self, tag, attrs):
        attrs = dict(attrs)
        if tag == "article":
            self.frames.append(attrs)
        elif tag == "section":
            self.groups.append(attrs["data-verdict"])
        elif tag == "img":
            self.images.append(attrs["src"])
        elif tag == "h3":
            self._in_h3 = True

    def handle_endtag(self, tag):
        if tag == "h3":
            self._in_h3 = False

    def handle_data(self, data):
        if self._in_h3:
            self.h3.append(data)


@pytest.fixture(scope="module")
def shoot(tmp_path_factory):
    return make_page_shoot(tmp_path_factory.mktemp("page-shoot"))


@pytest.fixture(scope="module")
def page(shoot, tmp_path_factory):
    out = tmp_path_factory.mktemp("page-out") / "quay.html"
    result = runner.invoke(app, ["--catalog", shoot.catalog_url, "report", "--shoot", SHOOT, "--out", str(out),
                                 "--jobs", "1"])
    assert result.exit_code == 0, result.output
    assert "8 frames" in result.stdout and "1 without a picture" in result.stdout
    text = out.read_text(encoding="utf-8")
    parsed = _Page()
    parsed.feed(text)
    return text, parsed


def test_every_frame_is_listed_once_under_its_worst_verdict_worst_group_first(page, shoot):
    _, parsed = page
    listed = {os.path.basename(frame["data-path"]): frame for frame in parsed.frames}
    assert set(listed) == set(EXPECTED) and len(parsed.frames) == len(EXPECTED)
    for name, flags in EXPECTED.items():
        assert listed[name]["data-flags"] == (" ".join(flags) or "passed")
        assert listed[name]["data-path"] == shoot.paths[name]  # absolute, as catalogued
    assert parsed.groups == ["too-wide-open", "focus-misplaced", "distance-unknown", "passed"]
    order = [frame["data-verdict"] for frame in parsed.frames]
    assert order == sorted(order, key=verdict_rank)  # frames follow their groups


def test_the_page_agrees_with_check_json(page, shoot):
    text, parsed = page
    checked = json.loads(runner.invoke(app, ["--catalog", shoot.catalog_url, "check", "--json"]).stdout)
    for item in checked:
        frame = next(f for f in parsed.frames if f["data-path"] == item["path"])
        assert frame["data-flags"].split() == (item["flags"] or ["passed"])
        for remedy in item["remedies"]:
            assert html.escape(remedy["text"], quote=True) in text


def test_the_page_is_self_contained(page):
    text, parsed = page
    assert not re.search(r"""(?:src|href)\s*=\s*["']?(?:https?:|//|file:)""", text)
    assert "@import" not in text and "url(http" not in text
    assert "Content-Security-Policy" in text and "default-src 'none'" in text
    # Seven pictures (gone.jpg has none), each a JPEG that Pillow (a reader outside the
    # project) decodes, 320 px on the long side from a 640 × 427 original.
    assert len(parsed.images) == len(EXPECTED) - 1
    for src in parsed.images:
        assert src.startswith("data:image/jpeg;base64,")
        with Image.open(io.BytesIO(base64.b64decode(src.split(",", 1)[1]))) as image:
            assert image.format == "JPEG" and max(image.size) == 320


def test_script_and_style_are_the_ones_the_policy_allows(page):
    text, _ = page
    policy = re.search(r'http-equiv="Content-Security-Policy" content="([^"]+)"', text).group(1)
    for tag in ("script", "style"):
        blocks = re.findall(rf"<{tag}>(.*?)</{tag}>", text, re.S)
        assert len(blocks) == 1
        digest = base64.b64encode(hashlib.sha256(blocks[0].encode()).digest()).decode()
        assert f"'sha256-{digest}'" in policy  # CSP Level 2 hash source (W3C)


def test_text_from_files_is_data_not_markup(page):
    text, parsed = page
    assert "<img src=x onerror" not in text and "<i>1.4</i>" not in text
    assert "&lt;img src=x onerror=alert(1)&gt; &amp; &quot;quoted&quot;.jpg" in text
    assert HOSTILE_NAME in parsed.h3  # the parser gives back the exact file name as text
    assert any(frame["data-lens"] == HOSTILE_LENS for frame in parsed.frames)


def test_without_javascript_everything_is_listed(page):
    text, parsed = page
    assert all("hidden" not in frame for frame in parsed.frames)
    assert '<form id="filters" class="controls" hidden>' in text and "<noscript>" in text


def test_a_frame_whose_file_went_is_listed_with_the_reason(page):
    text, parsed = page
    gone = next(f for f in parsed.frames if f["data-path"].endswith("gone.jpg"))
    assert gone["data-verdict"] == "passed"
    assert "no picture:<br>no such file" in text


def test_portrait_frames_are_turned_upright(page):
    _, parsed = page
    # held-b.jpg carries EXIF Orientation 6 (CIPA DC-008: rotate 90° clockwise to view).
    index = [os.path.basename(f["data-path"]) for f in parsed.frames if "gone" not in f["data-path"]]
    src = parsed.images[index.index("held-b.jpg")]
    with Image.open(io.BytesIO(base64.b64decode(src.split(",", 1)[1]))) as image:
        assert image.size[1] > image.size[0]


def test_no_file_is_written_beside_the_images(shoot, page):
    before = {name: hashlib.sha256((shoot.card / name).read_bytes()).hexdigest() for name in os.listdir(shoot.card)}
    make_thumbnails([str(shoot.card / name) for name in before], jobs=1)
    after = {name: hashlib.sha256((shoot.card / name).read_bytes()).hexdigest() for name in os.listdir(shoot.card)}
    assert after == before


def test_a_new_verdict_code_and_the_measured_blur_and_bracket_appear_without_edits(shoot):
    from sharpzone.analysis.frames import FrameFilter, frames_with_zones
    from sharpzone.catalog.engine import session_scope

    with session_scope(shoot.catalog_url) as session:
        check = frames_with_zones(session, FrameFilter(shoot=SHOOT))
    frames = check.frames.copy()
    held = frames["path"].str.endswith("held-a.jpg").to_numpy()
    frames["flags"] = [["lens-fogged"] if h else flags for h, flags in zip(held, frames["flags"])]
    frames["focus_blur_mm"] = [0.041 if h else math.nan for h in held]
    frames["focus_near_mm"] = [2800.0 if h else f for h, f in zip(held, frames["focus_mm"])]
    frames["focus_far_mm"] = [3300.0 if h else f for h, f in zip(held, frames["focus_mm"])]
    data = report_from_check(type(check)(frames, check.requirement, check.coc_policy), title="t", jobs=1)
    text = render_page(data)
    parsed = _Page()
    parsed.feed(text)
    assert "Lens fogged" in text and parsed.groups.index("lens-fogged") < parsed.groups.index("distance-unknown")
    assert "Measured blur: 0.0410 mm at the focus point" in text
    assert "could be 2.80 m – 3.30 m" in text and 'class="bracket"' in text


def test_the_summary_counts_every_verdict_carried_also_beside_a_worse_one(shoot):
    """A frame too wide open and past diffraction is listed under too wide open only; the
    summary still says one frame is past diffraction (as check's summary does), with no
    group to link to and none listed under it."""
    from sharpzone.analysis.frames import FrameFilter, frames_with_zones
    from sharpzone.catalog.engine import session_scope

    with session_scope(shoot.catalog_url) as session:
        check = frames_with_zones(session, FrameFilter(shoot=SHOOT))
    frames = check.frames.copy()
    wide = frames["path"].str.endswith("wide-a.jpg").to_numpy()
    frames["flags"] = [["too-wide-open", "past-diffraction"] if w else flags for w, flags in zip(wide, frames["flags"])]
    text = render_page(report_from_check(type(check)(frames, check.requirement, check.coc_policy), title="t", jobs=1))
    summary = text[text.index("<caption>By verdict</caption>"):text.index("<caption>By lens</caption>")]
    rows = re.findall(r'<tr class="k-[a-z]+"><td>.*?</td></tr>', summary)
    words = [re.sub(r"<[^>]+>|\s+", " ", row.split('<td class="num">')[0]).strip().lower() for row in rows]
    cells = {word: re.findall(r'<td class="num">([^<]*)</td>', row) for word, row in zip(words, rows)}
    wide_open = next(word for word in words if "wide open" in word)
    diffraction = next(word for word in words if "diffraction" in word)
    assert cells[wide_open] == ["2", "2"] and cells[diffraction] == ["1", "0"]  # carried, listed under it
    assert words.index(wide_open) < words.index(diffraction)  # in the page's order, worst first
    assert 'href="#g-too-wide-open"' in summary and 'href="#g-past-diffraction"' not in summary


def test_verdict_order_and_primary_verdict():
    assert primary_verdict([]) == "passed"
    assert primary_verdict(["past-diffraction", "too-wide-open"]) == "too-wide-open"
    assert primary_verdict(["distance-unknown", "some-new-code"]) == "some-new-code"
    assert verdict_rank("out-of-reach") == 0 and verdict_rank("passed") > len(VERDICT_ORDER)


def test_the_distance_scale_is_logarithmic_with_infinity_at_the_end():
    scale = DistanceScale(1000.0, 10_000.0)
    assert scale.position(1000.0) == 0.0 and scale.position(10_000.0) == pytest.approx(scale.FINITE_SHARE)
    # log scale: the geometric mean lies half-way
    assert scale.position(math.sqrt(1000.0 * 10_000.0)) == pytest.approx(scale.FINITE_SHARE / 2)
    assert scale.position(math.inf) == 1.0 and scale.position(50_000.0) == scale.FINITE_SHARE
    assert scale.position(None) is None and scale.position(math.nan) is None
    assert scale.ticks_mm() == [1000.0, 2000.0, 5000.0, 10_000.0]
    narrow = DistanceScale(375.0, 510.0).ticks_mm()
    assert len(narrow) >= 3 and all(375.0 <= t <= 510.0 for t in narrow)


def test_one_far_frame_does_not_squeeze_the_scale():
    import pandas as pd

    from sharpzone.analysis.report_page import OUTLIER_FACTOR, scale_for

    frames = pd.DataFrame({"focus_mm": [2500.0, 2400.0, 2600.0, 150_000.0],
                           "near_mm": [2450.0, 2350.0, 2550.0, 40_000.0]})
    scale = scale_for(frames)
    assert scale.near_mm <= 2350.0 and scale.far_mm <= 2500.0 * OUTLIER_FACTOR * 1.05
    assert scale.position(150_000.0) == scale.FINITE_SHARE  # at the break, not off the page


def _crash_on_bad(item):
    from sharpzone.analysis import report_page

    name = os.path.basename(item[0])
    if name.startswith("bad"):
        os._exit(3)  # a decoder dying in native code
    if name.startswith("stuck"):
        import time

        time.sleep(3600)  # a decoder caught in a loop
    return report_page._real_thumbnail(item)


def _card_with_one_odd_file(tmp_path, monkeypatch, odd_name: str, count: int) -> list[str]:
    """``count`` JPEGs, file 3 named ``odd_name``, with the worker replaced by ``_crash_on_bad``."""
    from sharpzone.analysis import report_page

    paths = []
    for number in range(count):
        path = tmp_path / (odd_name if number == 3 else f"ok-{number}.jpg")
        path.write_bytes(frame_jpeg(number, "KV-7", "Altamira", 8.0, 3.0))
        paths.append(str(path))
    monkeypatch.setattr(report_page, "_real_thumbnail", report_page._thumbnail, raising=False)
    monkeypatch.setattr(report_page, "_thumbnail", _crash_on_bad)
    return paths


def test_a_crashing_decoder_costs_only_its_file(tmp_path, monkeypatch):
    paths = _card_with_one_odd_file(tmp_path, monkeypatch, "bad.jpg", 20)
    thumbnails = make_thumbnails(paths, jobs=2)
    assert set(thumbnails) == set(paths)
    assert thumbnails[paths[3]].problem == "the picture decoder crashed on this file"
    assert all(thumbnails[p].jpeg for p in paths if p != paths[3])


def test_a_stuck_decoder_costs_only_its_file(tmp_path, monkeypatch):
    from sharpzone.analysis import report_page

    paths = _card_with_one_odd_file(tmp_path, monkeypatch, "stuck.jpg", 18)
    monkeypatch.setattr(report_page, "STALL_SECONDS", 3.0)  # generous: the machine may be busy
    thumbnails = make_thumbnails(paths, jobs=2)
    assert thumbnails[paths[3]].problem == "the picture decoder timed out after 3 s on this file"
    assert all(thumbnails[p].jpeg for p in paths if p != paths[3]), {p: t.problem for p, t in thumbnails.items()}


def test_thumbnails_stay_within_their_byte_budget(tmp_path):
    import numpy as np

    noisy = Image.fromarray(np.random.default_rng(1).integers(0, 255, (800, 1200, 3), dtype=np.uint8))
    path = tmp_path / "noise.jpg"
    noisy.save(path, quality=95)
    thumbnail = make_thumbnails([str(path)], max_bytes=12_000, jobs=1)[str(path)]
    assert thumbnail.jpeg[:2] == b"\xff\xd8" and len(thumbnail.jpeg) <= 12_000  # JPEG SOI marker
    with Image.open(io.BytesIO(thumbnail.jpeg)) as image:
        assert image.size == (thumbnail.width, thumbnail.height)


def test_imperial_page_with_a_title_of_its_own(shoot, tmp_path):
    out = tmp_path / "imperial.html"
    result = runner.invoke(app, ["--catalog", shoot.catalog_url, "report", "--verdict", "flagged", "--imperial",
                                 "--title", "Quay <misses>", "--out", str(out), "--jobs", "1"])
    assert result.exit_code == 0, result.output
    text = out.read_text(encoding="utf-8")
    parsed = _Page()
    parsed.feed(text)
    # "flagged" is the frames judged and missed; a frame that cannot be judged is not one.
    assert len(parsed.frames) == sum(1 for flags in EXPECTED.values() if flags and flags != ["distance-unknown"])
    assert "<title>Quay &lt;misses&gt; — sharp-zone report</title>" in text
    # 2.5 m and 4 m are 8 ft 2.4 in (to the nearest half inch, 8 ft 2½ in) and 13.1 ft
    # (1 ft = 304.8 mm exactly, NIST SP 811)
    assert "needed 8 ft 2½ in – 13.1 ft" in text and " m · " not in text


@pytest.mark.parametrize(("args", "message"), [
    (["--out", "page.pdf"], "not an HTML file name"),
    (["--out", "page.html", "--shoot", SHOOT, "--near", "2m"], "needs both --near and --far"),
    (["--out", "page.html", "--shoot", SHOOT, "--f-min", "22", "--f-max", "22"], "no frames match"),
    (["--out", "page.html", "--shoot", "No such shoot"], "No such shoot"),
])
def test_bad_requests_get_one_clear_line(shoot, tmp_path, monkeypatch, args, message):
    monkeypatch.chdir(tmp_path)
    result = runner.invoke(app, ["--catalog", shoot.catalog_url, "report", *args])
    assert result.exit_code in (1, 2) and message in result.stderr, result.output
    assert not (tmp_path / "page.html").exists()


def test_a_depth_plan_frame_focused_at_infinity_names_no_infinite_zone_as_needed():
    """A subject depth around a focus at ∞ is no zone to show: the page says what was needed
    instead of "needed ∞ – ∞" (the check's own remedy says to focus on the subject)."""
    from sharpzone.report.page_html import _zone_words

    inf = float("inf")
    words = _zone_words({"near_mm": 12_000.0, "far_mm": inf, "required_near_mm": inf, "required_far_mm": inf},
                        imperial=False)
    assert "needed a subject in focus" in words and "∞ – ∞" not in words and "∞–∞" not in words
    finite = _zone_words({"near_mm": 2_400.0, "far_mm": 4_100.0, "required_near_mm": 2_500.0,
                          "required_far_mm": 4_000.0}, imperial=False)
    assert finite == "sharp 2.40 m – 4.10 m · needed 2.50 m – 4.00 m"
