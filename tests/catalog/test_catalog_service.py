"""Service functions: validation with one clear message, nothing written on refusal."""

from __future__ import annotations

import math

import pytest
from sqlalchemy import func, select

from sharpzone.catalog import service
from sharpzone.catalog.models import Body, Frame, Lens, LensAlias, SensorFormatRow, Shoot
from sharpzone.errors import Conflict, InvalidValue, NotFound


def _count(session, model) -> int:
    return session.scalar(select(func.count()).select_from(model))


# ---- formats -------------------------------------------------------------------------


def test_shipped_formats_are_listed_and_found_by_alias(catalog_session):
    names = [row.name for row in service.list_formats(catalog_session)]
    assert "36x24" in names and names == sorted(names)
    assert service.get_format(catalog_session, "Full-Frame").name == "36x24"
    assert service.get_format(catalog_session, "36x24").to_core().diagonal_mm == pytest.approx(43.2666, abs=1e-4)


def test_add_edit_remove_format(catalog_session):
    row = service.add_format(catalog_session, "test-10x8", 10, 8, coc_divisor=1000, aliases=["ten-by-eight", " "])
    assert (row.width_mm, row.height_mm, row.coc_divisor, row.alias_list) == (10, 8, 1000, ["ten-by-eight"])
    service.edit_format(catalog_session, "ten-by-eight", new_name="test-10x7.5", height_mm=7.5)
    assert service.get_format(catalog_session, "test-10x7.5").height_mm == 7.5
    service.remove_format(catalog_session, "test-10x7.5")
    assert service.find_format(catalog_session, "ten-by-eight") is None


@pytest.mark.parametrize(
    ("kwargs", "message"),
    [
        ({"width_mm": 0, "height_mm": 8}, r"width 0.0 mm must be a positive number"),
        ({"width_mm": 10, "height_mm": -1}, r"height -1.0 mm must be a positive number"),
        ({"width_mm": 10, "height_mm": 8, "coc_divisor": 0}, r"CoC divisor 0.0 must be positive"),
    ],
)
def test_bad_format_values_are_refused_naming_the_value(catalog_session, kwargs, message):
    before = _count(catalog_session, SensorFormatRow)
    with pytest.raises(InvalidValue, match=message):
        service.add_format(catalog_session, "test-bad", **kwargs)
    assert _count(catalog_session, SensorFormatRow) == before


def test_format_names_and_aliases_are_unique(catalog_session):
    with pytest.raises(Conflict, match=r"'36x24' already answers to the name '36X24'"):
        service.add_format(catalog_session, "36X24", 36, 24)
    with pytest.raises(Conflict, match=r"'36x24' already answers to the name 'full-frame'"):
        service.add_format(catalog_session, "test-other", 30, 20, aliases=["full-frame"])


def test_format_in_use_is_not_removed(catalog_session, make_body):
    body = make_body()
    with pytest.raises(Conflict, match=rf"is used by 1 body \({body.name}\)"):
        service.remove_format(catalog_session, body.sensor_format.name)


def test_unknown_format_lists_the_known_ones(catalog_session):
    with pytest.raises(NotFound, match=r"no sensor format 'half-plate' \(known: .*36x24"):
        service.get_format(catalog_session, "half-plate")


# ---- bodies --------------------------------------------------------------------------


def test_add_body_and_match_it_from_exif(catalog_session):
    any_serial = service.add_body(catalog_session, "Studio K7", exif_make="Korvath", exif_model="K7",
                                  format_name="aps-c", pixel_width=6000, pixel_height=4000)
    mine = service.add_body(catalog_session, "My K7", exif_make="Korvath", exif_model="K7", serial="0042",
                            format_name="36x24")
    assert any_serial.sensor_format.name == "aps-c-23.6x15.7"
    assert service.find_body_for_exif(catalog_session, "KORVATH ", "k7", "0042") is mine
    assert service.find_body_for_exif(catalog_session, "Korvath", "K7", "9999") is any_serial
    assert service.find_body_for_exif(catalog_session, "Korvath", "K7") is any_serial
    assert service.find_body_for_exif(catalog_session, "Korvath", "K9") is None


def test_body_exif_identity_is_unique_with_and_without_serial(catalog_session):
    service.add_body(catalog_session, "A", exif_make="Korvath", exif_model="K7", format_name="36x24")
    service.add_body(catalog_session, "B", exif_make="Korvath", exif_model="K7", serial="1", format_name="36x24")
    with pytest.raises(Conflict, match=r"body 'A' already is Korvath K7 with no serial"):
        service.add_body(catalog_session, "C", exif_make="Korvath", exif_model="K7", serial="  ", format_name="36x24")
    with pytest.raises(Conflict, match=r"body 'B' already is Korvath K7 with serial '1'"):
        service.add_body(catalog_session, "D", exif_make="Korvath", exif_model="K7", serial="1", format_name="36x24")
    assert _count(catalog_session, Body) == 2


def test_database_also_refuses_a_second_body_without_serial(catalog):
    with pytest.raises(Conflict, match="refused the change"):
        with catalog.session_scope() as session:
            fmt = service.get_format(session, "36x24")
            session.add(Body(name="X", exif_make="Korvath", exif_model="K1", sensor_format=fmt))
            session.add(Body(name="Y", exif_make="Korvath", exif_model="K1", sensor_format=fmt))
    with catalog.session_scope() as session:
        assert _count(session, Body) == 0


@pytest.mark.parametrize(
    ("kwargs", "error", "message"),
    [
        ({"format_name": "half-plate"}, InvalidValue, r"no sensor format 'half-plate'"),
        ({"pixel_width": 0}, InvalidValue, r"pixel width 0 must be a positive whole number"),
        # Some files name only a make or only a model (issue 10 part 6); not neither.
        ({"exif_make": " ", "exif_model": " "}, InvalidValue, r"EXIF make and model must not both be empty"),
    ],
)
def test_bad_body_values_are_refused(catalog_session, kwargs, error, message):
    values = {"exif_make": "Korvath", "exif_model": "K7", "format_name": "36x24", **kwargs}
    with pytest.raises(error, match=message):
        service.add_body(catalog_session, "Bad body", **values)
    assert _count(catalog_session, Body) == 0


def test_edit_body_moves_it_to_another_format_and_clears_the_serial(catalog_session):
    service.add_body(catalog_session, "K7", exif_make="Korvath", exif_model="K7", serial="5", format_name="36x24")
    body = service.edit_body(catalog_session, "k7", format_name="aps-c-1.6", serial="", confirmed=False)
    assert (body.sensor_format.name, body.serial, body.confirmed) == ("aps-c-22.3x14.9", None, False)


def test_body_with_frames_is_removed_only_with_reassignment(catalog_session, make_body, make_frame):
    old, new = make_body(name="Old"), make_body(name="New")
    frame = make_frame(body=old)
    with pytest.raises(Conflict, match=r"body 'Old' is used by 1 frame: name a body"):
        service.remove_body(catalog_session, "Old")
    assert service.remove_body(catalog_session, "old", reassign_to="New") == 1
    catalog_session.refresh(frame)
    assert frame.body_id == new.id


# ---- lenses --------------------------------------------------------------------------


def test_add_zoom_and_prime_with_aliases(catalog_session):
    zoom = service.add_lens(catalog_session, "Altamira 24-105", focal_min_mm=24, focal_max_mm=105,
                            max_aperture_wide=3.5, max_aperture_tele=5.6, close_focus_mm=450,
                            exif_names=["ALT 24-105mm", "ALT 24-105mm"])
    prime = service.add_lens(catalog_session, "Altamira 50", focal_min_mm=50, max_aperture_wide=1.4)
    assert (zoom.focal_max_mm, zoom.max_aperture_tele, [a.exif_name for a in zoom.aliases]) == (105, 5.6, ["ALT 24-105mm"])
    assert (prime.focal_max_mm, prime.max_aperture_tele, prime.min_aperture, prime.is_prime) == (50, 1.4, 22, True)
    assert service.find_lens_for_exif(catalog_session, " ALT 24-105mm ") is zoom


@pytest.mark.parametrize(
    ("kwargs", "message"),
    [
        ({"focal_min_mm": 70, "focal_max_mm": 24}, r"longest focal length 24 mm is shorter than the shortest 70 mm"),
        ({"min_aperture": 2}, r"minimum aperture f/2 is wider than the maximum aperture f/2.8"),
        ({"max_aperture_wide": 0}, r"maximum aperture 0 is not a valid f-number: expected f/0.5 or more"),
        ({"max_aperture_wide": 0.1}, r"maximum aperture 0.1 is not a valid f-number"),
        ({"max_magnification": -1}, r"maximum magnification -1 is not valid"),
        ({"close_focus_mm": math.inf}, r"close-focus distance inf mm must be a positive finite number"),
        ({"pupil_magnification": -1}, r"pupil magnification -1 must be"),
    ],
)
def test_bad_lens_values_are_refused(catalog_session, kwargs, message):
    values = {"focal_min_mm": 24, "focal_max_mm": 70, "max_aperture_wide": 2.8, **kwargs}
    with pytest.raises(InvalidValue, match=message):
        service.add_lens(catalog_session, "Bad lens", **values)
    assert _count(catalog_session, Lens) == 0


def test_duplicate_lens_name_and_alias(catalog_session, make_lens):
    make_lens(name="Altamira 35", exif_names=["ALT 35"])
    with pytest.raises(Conflict, match=r"a lens named 'Altamira 35' already exists"):
        service.add_lens(catalog_session, "ALTAMIRA 35", focal_min_mm=35, max_aperture_wide=2)
    other = make_lens(name="Other")
    with pytest.raises(Conflict, match=r"'ALT 35' already names lens 'Altamira 35'"):
        service.add_lens_alias(catalog_session, other.name, "ALT 35")
    assert service.add_lens_alias(catalog_session, "Altamira 35", "ALT 35").lens.name == "Altamira 35"


def test_edit_lens_checks_the_whole_new_state(catalog_session, make_lens):
    make_lens(name="Z", focal_min_mm=24, focal_max_mm=70, max_aperture_wide=2.8, max_aperture_tele=2.8)
    with pytest.raises(InvalidValue, match="shorter than the shortest 80 mm"):
        service.edit_lens(catalog_session, "Z", focal_min_mm=80)
    lens = service.edit_lens(catalog_session, "Z", focal_max_mm=105, pupil_magnification=0.6)
    assert (lens.focal_min_mm, lens.focal_max_mm, lens.pupil_magnification) == (24, 105, 0.6)


def test_lens_alias_removal(catalog_session, make_lens):
    make_lens(name="Altamira 35", exif_names=["ALT 35", "ALT35"])
    assert [a.exif_name for a in service.remove_lens_alias(catalog_session, "ALT35").aliases] == ["ALT 35"]
    with pytest.raises(NotFound, match=r"no lens is named 'ALT35' in EXIF"):
        service.remove_lens_alias(catalog_session, "ALT35")


def test_lens_used_by_frames_needs_reassignment(catalog_session, make_lens, make_frame):
    old = make_lens(name="Old lens", exif_names=["OLD"])
    new = make_lens(name="New lens")
    frames = [make_frame(lens=old), make_frame(lens=old)]
    with pytest.raises(Conflict, match=r"lens 'Old lens' is used by 2 frames: name a lens to move them to"):
        service.remove_lens(catalog_session, "Old lens")
    with pytest.raises(InvalidValue, match=r"no lens named 'Nope'"):
        service.remove_lens(catalog_session, "Old lens", reassign_to="Nope")
    with pytest.raises(InvalidValue, match="to itself"):
        service.remove_lens(catalog_session, "Old lens", reassign_to="old LENS")
    assert service.remove_lens(catalog_session, "Old lens", reassign_to="New lens") == 2
    for frame in frames:
        catalog_session.refresh(frame)
        assert frame.lens_id == new.id
    assert _count(catalog_session, LensAlias) == 0
    assert catalog_session.scalars(select(Frame.lens_id)).all() == [new.id, new.id]


# ---- shoots --------------------------------------------------------------------------


def test_shoot_with_range_plan(catalog_session, tmp_path):
    shoot = service.add_shoot(catalog_session, "Stage", root_folder=tmp_path / "raw" / ".." / "raw",
                              near_mm=4000, far_mm=math.inf, planned_f_number=8, coc_policy="diagonal/1000")
    assert (shoot.plan_kind, shoot.plan_near_mm, shoot.plan_far_mm) == ("range", 4000, math.inf)
    assert shoot.root_folder == str(tmp_path / "raw")
    assert (shoot.plan_front_mm, shoot.planned_f_number, shoot.coc_policy) == (None, 8, "diagonal/1000")


def test_edit_shoot_switches_plan_kind_and_keeps_the_other_limit(catalog_session):
    service.add_shoot(catalog_session, "Stage", near_mm=4000, far_mm=9000, notes="front row")
    shoot = service.edit_shoot(catalog_session, "Stage", far_mm=12000)
    assert (shoot.plan_near_mm, shoot.plan_far_mm) == (4000, 12000)
    with pytest.raises(InvalidValue, match="needs both the depth in front and behind"):
        service.edit_shoot(catalog_session, "Stage", front_mm=400)
    shoot = service.edit_shoot(catalog_session, "Stage", front_mm=400, back_mm=600, notes="")
    assert (shoot.plan_kind, shoot.plan_near_mm, shoot.plan_front_mm, shoot.plan_back_mm, shoot.notes) == (
        "depth", None, 400, 600, None)
    shoot = service.edit_shoot(catalog_session, "Stage", clear_plan=True, new_name="Stage 2")
    assert (shoot.name, shoot.plan_kind, shoot.plan_front_mm) == ("Stage 2", None, None)


@pytest.mark.parametrize(
    ("kwargs", "message"),
    [
        ({"near_mm": 9000, "far_mm": 4000}, r"far limit 4.00 m must be beyond the near limit 9.00 m"),
        ({"near_mm": 4000}, "a range plan needs both the near and the far limit"),
        ({"near_mm": 1, "far_mm": 2, "front_mm": 1, "back_mm": 1}, "not both"),
        ({"front_mm": 0, "back_mm": 0}, "must not be zero in front and behind"),
        ({"planned_f_number": -2}, r"planned f-number -2 is not a valid f-number"),
        ({"coc_policy": "sharp-enough"}, r"'sharp-enough'"),
    ],
)
def test_bad_shoot_plans_are_refused(catalog_session, kwargs, message):
    with pytest.raises(InvalidValue, match=message):
        service.add_shoot(catalog_session, "Bad", **kwargs)
    assert _count(catalog_session, Shoot) == 0


def test_shoot_with_frames_is_removed_only_with_them(catalog_session, make_shoot, make_frame):
    shoot = make_shoot(name="Harbour")
    make_frame(shoot=shoot)
    with pytest.raises(Conflict, match=r"shoot 'Harbour' has 1 frame: say --with-frames"):
        service.remove_shoot(catalog_session, "Harbour")
    assert service.remove_shoot(catalog_session, "harbour", with_frames=True) == 1
    catalog_session.expire_all()
    assert _count(catalog_session, Frame) == 0  # ON DELETE CASCADE in the database


def test_catalog_info_counts_rows(catalog_session, make_frame):
    make_frame()
    info = service.catalog_info(catalog_session)
    assert info.revision == info.newest_revision == "0005"
    assert info.row_counts["frame"] == 1 and info.row_counts["lens"] == 1
    assert info.row_counts["sensor_format"] >= 20
