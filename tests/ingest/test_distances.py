"""User focus distances from CSV (units via sharpzone.units) and the source precedence."""

from __future__ import annotations

import math
import os
import re

import pytest

from sharpzone.errors import InvalidValue
from sharpzone.ingest.distances import choose_focus_distance, lookup_user_distance, read_user_distances


def write_csv(tmp_path, text: str, name: str = "distances.csv"):
    path = tmp_path / name
    path.write_text(text, encoding="utf-8")
    return path


def test_names_paths_and_units(tmp_path):
    path = write_csv(tmp_path, (
        "file,distance,note\n"
        "a.jpg,3m,pier\n"
        f"{tmp_path}/b.jpg,250cm,\n"
        "sub/c.jpg,10ft,\n"
        "d.jpg, inf ,\n"
        "e.jpg,2.5,\n"
        "\n"
    ))
    distances = read_user_distances(path)
    # 10 ft = 3048 mm exactly (international foot, 1959).
    assert distances == {
        "a.jpg": 3000.0,
        str(tmp_path / "b.jpg"): 2500.0,
        str(tmp_path / "sub" / "c.jpg"): pytest.approx(3048.0),
        "d.jpg": math.inf,
        "e.jpg": 2500.0,  # a bare number is metres
    }


def test_semicolons_bom_and_path_column(tmp_path):
    path = tmp_path / "d.csv"
    path.write_bytes("\ufeffPath;Distance\nframe-1.jpg;1.2m\n".encode("utf-8"))
    assert read_user_distances(path) == {"frame-1.jpg": 1200.0}


def test_bad_distance_names_line_and_value(tmp_path):
    path = write_csv(tmp_path, "path,distance\na.jpg,3m\nb.jpg,three metres\n")
    with pytest.raises(InvalidValue) as caught:
        read_user_distances(path)
    message = str(caught.value)
    assert "line 3" in message and "'three metres'" in message and "\n" not in message


@pytest.mark.parametrize(("text", "expected"), [
    ("name,focus\na.jpg,3m\n", "expected 'path' (or 'file') and 'distance'"),
    ("path,distance\na.jpg,0m\n", "line 2: distance '0m' must be greater than zero"),
    ("path,distance\na.jpg,-2m\n", "line 2"),
    ("path,distance\na.jpg,2m\na.jpg,3m\n", "already has distance on line 2"),
    ("path,distance\n,2m\n", "line 2: the path is empty"),
    ("", "empty file"),
])
def test_bad_files_raise_one_clear_error(tmp_path, text, expected):
    with pytest.raises(InvalidValue, match=re.escape(expected)):
        read_user_distances(write_csv(tmp_path, text))


def test_lookup_by_absolute_path_then_by_name(tmp_path):
    distances = {str(tmp_path / "day1" / "a.jpg"): 1000.0, "a.jpg": 2000.0}
    assert lookup_user_distance(distances, str(tmp_path / "day1" / "a.jpg")) == 1000.0
    assert lookup_user_distance(distances, str(tmp_path / "day2" / "a.jpg")) == 2000.0
    assert lookup_user_distance(distances, str(tmp_path / "b.jpg")) is None


def test_relative_image_path_is_made_absolute(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    assert lookup_user_distance({os.path.join(str(tmp_path), "x.jpg"): 5.0}, "x.jpg") == 5.0


@pytest.mark.parametrize(("user", "exif", "xmp", "expected"), [
    (1000.0, 2000.0, 3000.0, (1000.0, "user")),
    (None, 2000.0, 3000.0, (2000.0, "exif")),
    (None, None, 3000.0, (3000.0, "xmp")),
    (None, math.inf, 3000.0, (math.inf, "exif")),
    (None, None, None, (None, "none")),
])
def test_precedence_user_exif_xmp_none(user, exif, xmp, expected):
    assert choose_focus_distance(user, exif, xmp) == expected
