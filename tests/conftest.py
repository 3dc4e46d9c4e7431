"""Shared fixtures. No test may touch the user's real catalogue or data folders."""

from __future__ import annotations

import pytest


@pytest.fixture(autouse=True)
def _isolated_user_folders(tmp_path_factory, monkeypatch):
    """Point HOME, the XDG folders and SHARPZONE_CATALOG at a throwaway folder."""
    home = tmp_path_factory.mktemp("home")
    monkeypatch.setenv("HOME", str(home))
    monkeypatch.setenv("XDG_DATA_HOME", str(home / ".local" / "share"))
    monkeypatch.setenv("XDG_CONFIG_HOME", str(home / ".config"))
    monkeypatch.setenv("XDG_CACHE_HOME", str(home / ".cache"))
    monkeypatch.delenv("SHARPZONE_CATALOG", raising=False)
    yield home


# ---- catalogue fixtures ---------------------------------------------------------------
# Every catalogue test gets a fresh catalogue, once on SQLite and once on PostgreSQL. The
# PostgreSQL run needs SHARPZONE_TEST_POSTGRES_URL naming a scratch database (its schema
# "public" is dropped and made anew for each test); without it those tests are reported as
# skipped, never silently left out. .ci/run starts a throwaway server and sets the variable.

import itertools  # noqa: E402
import os  # noqa: E402

POSTGRES_URL_VAR = "SHARPZONE_TEST_POSTGRES_URL"


def _psycopg_installed() -> bool:
    try:
        import psycopg  # noqa: F401
    except ImportError:
        return False
    return True


# For tests that need the PostgreSQL driver but no server (connection errors, URL handling):
# the README's test command installs only ".[test]"; .ci/run installs ".[test,postgres]".
needs_psycopg = pytest.mark.skipif(
    not _psycopg_installed(), reason="psycopg is not installed: pip install '.[postgres]' (.ci/run does)")
CATALOG_BACKENDS = ["sqlite", "postgres"]


def postgres_test_url() -> str:
    """The scratch PostgreSQL database's URL; skips the calling test when none is set."""
    url = os.environ.get(POSTGRES_URL_VAR, "").strip()
    if not url:
        pytest.skip(f"no PostgreSQL: set {POSTGRES_URL_VAR} to a scratch database (.ci/run starts one)")
    return url


def _empty_postgres(url: str) -> str:
    """Drop every table in the scratch PostgreSQL database so each test starts empty."""
    from sqlalchemy import create_engine, text

    engine = create_engine(url)
    with engine.begin() as connection:
        connection.execute(text("DROP SCHEMA IF EXISTS public CASCADE"))
        connection.execute(text("CREATE SCHEMA public"))
    engine.dispose()
    return url


@pytest.fixture
def postgres_url() -> str:
    """URL of an empty scratch PostgreSQL database (the test skips without one)."""
    return _empty_postgres(postgres_test_url())


@pytest.fixture(params=CATALOG_BACKENDS)
def catalog_url(request, tmp_path) -> str:
    """URL of a catalogue that does not exist yet (opening it creates it at head)."""
    if request.param == "postgres":
        request.applymarker(pytest.mark.postgres)
        return request.getfixturevalue("postgres_url")
    from sharpzone.catalog.location import sqlite_url

    return sqlite_url(tmp_path / "catalog.sqlite")


@pytest.fixture
def catalog(catalog_url):
    """An open ``Catalog`` (created at the newest schema, shipped formats seeded)."""
    from sharpzone.catalog.engine import open_catalog

    with open_catalog(catalog_url) as opened:
        yield opened


@pytest.fixture
def catalog_session(catalog):
    """A session in one unit of work on ``catalog``; committed when the test ends.

    Once it has written, it holds SQLite's write lock until the test ends: a second session
    on the same catalogue in that test would wait (30 s) for it. Commit first, or use
    ``catalog.session_scope()`` for each unit of work instead.
    """
    with catalog.session_scope() as session:
        yield session


_factory_numbers = itertools.count(1)


def _saved(session, row):
    session.add(row)
    session.flush()
    return row


@pytest.fixture
def make_format(catalog_session):
    """``make_format(**fields)`` → a new ``SensorFormatRow`` (36 × 24 mm unless told)."""
    from sharpzone.catalog.models import SensorFormatRow

    def make(**fields):
        values = {"name": f"test-format-{next(_factory_numbers)}", "width_mm": 36.0, "height_mm": 24.0, **fields}
        return _saved(catalog_session, SensorFormatRow(**values))

    return make


@pytest.fixture
def make_body(catalog_session, make_format):
    """``make_body(**fields)`` → a new confirmed ``Body`` by the invented maker Korvath."""
    from sharpzone.catalog.models import Body

    def make(**fields):
        number = next(_factory_numbers)
        values = {"name": f"Test body {number}", "exif_make": "Korvath", "exif_model": f"KV-{number}", **fields}
        if "sensor_format" not in values and "format_id" not in values:
            values["sensor_format"] = make_format()
        return _saved(catalog_session, Body(**values))

    return make


@pytest.fixture
def make_lens(catalog_session):
    """``make_lens(**fields)`` → a new 50 mm f/2 prime (min f/22); ``exif_names=[...]`` adds aliases."""
    from sharpzone.catalog.models import Lens, LensAlias

    def make(exif_names=(), **fields):
        number = next(_factory_numbers)
        values = {
            "name": f"Altamira Optical {number} 50/2",
            "focal_min_mm": 50.0,
            "focal_max_mm": 50.0,
            "max_aperture_wide": 2.0,
            "max_aperture_tele": 2.0,
            "min_aperture": 22.0,
            **fields,
        }
        return _saved(catalog_session, Lens(**values, aliases=[LensAlias(exif_name=name) for name in exif_names]))

    return make


@pytest.fixture
def make_shoot(catalog_session):
    """``make_shoot(**fields)`` → a new ``Shoot`` without a plan unless told."""
    from sharpzone.catalog.models import Shoot

    def make(**fields):
        return _saved(catalog_session, Shoot(**{"name": f"Test shoot {next(_factory_numbers)}", **fields}))

    return make


@pytest.fixture
def make_frame(catalog_session, make_body, make_lens):
    """``make_frame(**fields)`` → a new ``Frame``: 50 mm, f/8, focused at 3 m (from EXIF),
    on a fresh body and lens unless ``body=``/``lens=`` are given (``None`` leaves them out)."""
    from sharpzone.catalog.models import Frame

    def make(**fields):
        number = next(_factory_numbers)
        values = {
            "path": f"/photos/test/frame-{number:05d}.jpg",
            "file_size": 2_000_000 + number,
            "file_mtime_ns": 1_700_000_000_000_000_000 + number,
            "focal_mm": 50.0,
            "f_number": 8.0,
            "exposure_s": 1 / 125,
            "iso": 200,
            "focus_mm": 3000.0,
            "focus_source": "exif",
            **fields,
        }
        if "body" not in values and "body_id" not in values:
            values["body"] = make_body()
        if "lens" not in values and "lens_id" not in values:
            values["lens"] = make_lens()
        return _saved(catalog_session, Frame(**values))

    return make
