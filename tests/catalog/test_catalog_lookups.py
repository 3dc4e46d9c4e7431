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
