"""``frames``, ``check`` and ``stats`` on a small invented shoot, through CliRunner."""

from __future__ import annotations

import datetime as dt
import json
import math

import pytest
from typer.testing import CliRunner

from sharpzone.cli.app import app
from sharpzone.optics import sharp_zone
from sharpzone.optics.stops import round_up_to_stop
from tests.independent_optics import third_stop_wider

runner = CliRunner()
COC = math.hypot(36, 24) / 1500  # diagonal / 1500 (lens maker's newsletter, 2007)


@pytest.fixture
def shoot_catalog(catalog_url):
    """A shoot planned to hold 2.5–4 m, with five frames through an invented 50 mm lens."""
    from sharpzone.catalog.engine import session_scope
    from sharpzone.catalog.models import Frame
    from sharpzone.catalog.service import add_body, add_lens, add_shoot

    with session_scope(catalog_url) as session:
        body = add_body(session, "Korvath K1", exif_make="Korvath", exif_model="K1", format_name="36x24",
                        pixel_width=6000, pixel_height=4000)
        lens = add_lens(session, "Korvath 50/1.8", focal_min_mm=50, max_aperture_wide=1.8, min_aperture=22)
        shoot = add_shoot(session, "Harbour portraits", near_mm=2500, far_mm=4000)
        settings = [("held", 8.0, 3000.0), ("wide", 2.8, 3000.0), ("misfocused", 8.0, 2300.0),
                    ("unknown", 8.0, None), ("infinity", 8.0, math.inf)]
        for number, (name, f_number, focus) in enumerate(settings):
            session.add(Frame(path=f"/shoots/harbour/{name}.jpg", file_size=1000, file_mtime_ns=number,
                              shoot=shoot, body=body, lens=lens, focal_mm=50.0, f_number=f_number,
                              focus_mm=focus, focus_source="none" if focus is None else "exif",
                              captured_at=dt.datetime(2026, 5, 1, 10, number)))
    return catalog_url


def run(catalog_url, *args):
    return runner.invoke(app, ["--catalog", catalog_url, *args])


def test_check_names_exactly_the_frames_that_missed(shoot_catalog):
    result = run(shoot_catalog, "check", "--shoot", "Harbour portraits", "--json")
    assert result.exit_code == 0, result.output
    rows = {item["path"].rsplit("/", 1)[1]: item for item in json.loads(result.stdout)}
    assert len(rows) == 5  # every frame listed
    assert rows["held.jpg"]["flags"] == []
    assert rows["wide.jpg"]["flags"] == ["too-wide-open"]
    assert rows["misfocused.jpg"]["flags"] == ["focus-misplaced"]
    assert rows["unknown.jpg"]["flags"] == ["distance-unknown"]
    assert rows["infinity.jpg"]["flags"]  # at ∞ the near limit is far beyond 2.5 m
    # Each remedy holds when recomputed; one third stop wider does not.
    needed = round_up_to_stop(rows["wide.jpg"]["needed_f_number"])
    zone = sharp_zone(50, needed.value, COC, 3000)
    assert zone.near_mm <= 2500 and zone.far_mm >= 4000
    wider = sharp_zone(50, third_stop_wider(needed).exact, COC, 3000)
    assert wider.near_mm > 2500 or wider.far_mm < 4000
    better = rows["misfocused.jpg"]["better_focus_m"] * 1000
    zone = sharp_zone(50, 8.0, COC, better)
    assert zone.near_mm <= 2500 * (1 + 1e-9) and zone.far_mm >= 4000 * (1 - 1e-9)
    assert rows["wide.jpg"]["remedies"][0]["text"].startswith("shot too wide open")


def test_check_table_summarises(shoot_catalog):
    result = run(shoot_catalog, "check", "--shoot", "Harbour portraits")
    assert result.exit_code == 0, result.output
    assert "By verdict" in result.stdout and "By lens" in result.stdout
    assert "Korvath 50/1.8" in result.stdout and "would have held it" in result.stdout


def test_command_line_requirement_overrides_the_plan(shoot_catalog):
    result = run(shoot_catalog, "check", "--front", "10cm", "--back", "10cm", "--json")
    rows = {item["path"].rsplit("/", 1)[1]: item for item in json.loads(result.stdout)}
    assert rows["held.jpg"]["flags"] == []
    assert rows["held.jpg"]["required_near_m"] == pytest.approx(2.9)


def test_frames_json_contract(shoot_catalog):
    result = run(shoot_catalog, "frames", "--json")
    assert result.exit_code == 0, result.output
    items = json.loads(result.stdout)
    assert {"path", "body", "lens", "focal_mm", "f_number", "focus_m", "coc_mm", "near_m", "far_m",
            "hyperfocal_m"} <= set(items[0])
    by_name = {item["path"].rsplit("/", 1)[1]: item for item in items}
    assert by_name["unknown.jpg"]["focus_m"] is None and by_name["unknown.jpg"]["near_m"] is None
    assert by_name["infinity.jpg"]["far_m"] == "inf"
    assert by_name["held.jpg"]["coc_mm"] == pytest.approx(COC)
    assert all(item["path"].startswith("/") for item in items)


def test_frames_filters_and_policy(shoot_catalog):
    narrow = json.loads(run(shoot_catalog, "frames", "--f-max", "4", "--json").stdout)
    assert [item["f_number"] for item in narrow] == [2.8]
    fixed = json.loads(run(shoot_catalog, "frames", "--coc-policy", "fixed:0.05mm", "--json").stdout)
    assert {item["coc_mm"] for item in fixed} == {0.05}
    flagged = json.loads(run(shoot_catalog, "frames", "--verdict", "too-wide-open", "--json").stdout)
    assert [item["path"].rsplit("/", 1)[1] for item in flagged] == ["wide.jpg"]
    csv_text = run(shoot_catalog, "frames", "--csv").stdout
    assert csv_text.splitlines()[0].startswith("path,shoot,body,lens,focal_mm,f_number,focus_m")


def test_stats(shoot_catalog):
    result = run(shoot_catalog, "stats", "--json")
    data = json.loads(result.stdout)
    lens = data["lenses"][0]
    assert lens["frames"] == 5 and lens["unknown_focus"] == 1
    assert {item["f_number"]: item["frames"] for item in lens["f_numbers"]} == {2.8: 1, 8.0: 4}
    assert lens["share_flagged"] == pytest.approx(3 / 4)
    table = run(shoot_catalog, "stats")
    assert "█" in table.stdout


@pytest.mark.parametrize("chunk_rows", [2, 1000])
def test_stats_read_a_chunk_at_a_time_count_every_frame(shoot_catalog, chunk_rows):
    # The same five frames as above, read two at a time (three chunks) or all at once.
    from sharpzone.analysis.stats import shoot_stats
    from sharpzone.catalog.engine import session_scope

    with session_scope(shoot_catalog) as session:
        result = shoot_stats(session, chunk_rows=chunk_rows)
    (lens,) = result.lenses
    assert lens.frames == 5 and lens.unknown_focus == 1 and result.judged
    assert dict(lens.f_number_counts) == {2.8: 1, 8.0: 4}
    assert lens.share_flagged == pytest.approx(3 / 4)
    assert [body.frames for body in result.bodies] == [5]


@pytest.mark.parametrize(
    "args, words",
    [
        (("check", "--shoot", "Nowhere"), "Nowhere"),
        (("frames", "--verdict", "blurry"), "verdict 'blurry'"),
        (("frames", "--from", "May 1st"), "is not a date"),
        (("check", "--near", "3m", "--front", "1m"), "not both"),
    ],
)
def test_bad_input(shoot_catalog, args, words):
    result = run(shoot_catalog, *args)
    assert result.exit_code in (1, 2)
    assert words in result.stderr and len(result.stderr.strip().splitlines()) == 1


def test_check_without_any_plan_says_so(catalog_url):
    from sharpzone.catalog.engine import session_scope
    from sharpzone.catalog.models import Frame
    from sharpzone.catalog.service import add_shoot

    with session_scope(catalog_url) as session:
        shoot = add_shoot(session, "Unplanned")
        session.add(Frame(path="/x/a.jpg", file_size=1, file_mtime_ns=1, shoot=shoot, focal_mm=50, f_number=8))
    result = run(catalog_url, "check", "--shoot", "Unplanned")
    assert result.exit_code == 2 and "no plan" in result.stderr


def test_a_focus_bracket_is_shown_and_judged_over_all_of_it(shoot_catalog):
    from sharpzone.catalog.engine import session_scope
    from sharpzone.catalog.models import Body, Frame, Lens, Shoot

    with session_scope(shoot_catalog) as session:
        shoot = session.query(Shoot).one()
        session.add(Frame(path="/shoots/harbour/bracket.jpg", file_size=1, file_mtime_ns=99, shoot=shoot,
                          body=session.query(Body).one(), lens=session.query(Lens).one(), focal_mm=50.0,
                          f_number=8.0, focus_mm=3000.0, focus_near_mm=2800.0, focus_far_mm=3300.0,
                          focus_key="Exif.Invented.FocusDistanceUpper", focus_source="makernote",
                          captured_at=dt.datetime(2026, 5, 1, 11, 0)))
    table = runner.invoke(app, ["--catalog", shoot_catalog, "frames", "--shoot", "Harbour portraits"],
                          env={"COLUMNS": "200"})
    assert "3.00 m" in table.stdout and "(2.80–3.30)" in table.stdout  # the bracket under the distance
    rows = {item["path"].rsplit("/", 1)[1]: item for item in
            json.loads(run(shoot_catalog, "check", "--shoot", "Harbour portraits", "--json").stdout)}
    bracket = rows["bracket.jpg"]
    assert (bracket["focus_near_m"], bracket["focus_far_m"]) == (2.8, 3.3)
    assert bracket["focus_key"] == "Exif.Invented.FocusDistanceUpper"
    assert bracket["flags"] == ["distance-uncertain"] and bracket["outcome"] == "uncertain"
    assert 0 < bracket["holds_share"] < 1 and bracket["remedy"] == "stop-down"
    assert rows["held.jpg"]["focus_near_m"] == rows["held.jpg"]["focus_m"] == 3.0  # no bracket: exact
    # Judged: held, wide, misfocused, infinity and the bracketed frame; flagged: wide, misfocused
    # and infinity (the uncertain frame is judged, not flagged): 3 of 5, as check counts it.
    lens = json.loads(run(shoot_catalog, "stats", "--json").stdout)["lenses"][0]
    assert lens["share_flagged"] == pytest.approx(3 / 5)
