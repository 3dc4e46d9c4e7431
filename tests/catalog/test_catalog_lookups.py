"""Look-ups other layers make in the catalogue: formats for ``dof``/``stack``, lenses by name
or EXIF alias."""

from __future__ import annotations

import pytest

from sharpzone.analysis.setting import format_lookup
from sharpzone.catalog.location import sqlite_url
from sharpzone.errors import NotFound


def test_dof_sees_a_format_edited_in_the_catalogue(tmp_path):
    from sharpzone.catalog.engine import open_catalog
    from sharpzone.catalog.service import edit_format

    path = tmp_path / "c.sqlite"
    with open_catalog(sqlite_url(path)) as catalog, catalog.session_scope() as session:
        edit_format(session, "36x24", width_mm=30.0)
    assert format_lookup(str(path))("36x24").width_mm == 30.0  # the shipped list says 36


def test_without_a_catalogue_the_shipped_formats_serve_and_none_is_created(tmp_path):
    path = tmp_path / "none-yet.sqlite"
    assert format_lookup(str(path))("36x24").width_mm == 36.0
    assert not path.exists()
    with pytest.raises(NotFound):
        format_lookup(str(path))("no-such-format")


def test_a_lens_is_found_by_name_or_by_exif_alias(catalog_session, make_lens):
    from sharpzone.catalog.service import get_lens

    lens = make_lens(name="Altamira 35", focal_min_mm=35, focal_max_mm=35, exif_names=["ALT 35mm F2"])
    assert get_lens(catalog_session, "altamira 35") is lens
    assert get_lens(catalog_session, "ALT 35mm F2") is lens
    with pytest.raises(NotFound, match=r"no lens named 'ALT 50mm' \(known: Altamira 35\)"):
        get_lens(catalog_session, "ALT 50mm")


def test_lens_show_accepts_an_exif_alias(tmp_path):
    from typer.testing import CliRunner

    from sharpzone.cli.app import app

    def invoke(*args):
        return CliRunner().invoke(app, ["--catalog", str(tmp_path / "c.sqlite"), *args], env={"COLUMNS": "200"})

    added = invoke("lens", "add", "Altamira 35", "--focal", "35", "--aperture", "2", "--exif-name", "ALT 35mm F2")
    assert added.exit_code == 0, added.output
    shown = invoke("lens", "show", "ALT 35mm F2")
    assert shown.exit_code == 0 and "Altamira 35" in shown.output
