"""The migration runner: new catalogues, upgrades with rows in them, refusals, no drift."""

from __future__ import annotations

import math
import sqlite3
import warnings

import pytest
from sqlalchemy import create_engine, select, text

from sharpzone.catalog import migrate
from sharpzone.catalog.engine import create_catalog_engine, open_catalog
from sharpzone.catalog.location import sqlite_path, sqlite_url
from sharpzone.catalog.models import Base, Body, Frame, IngestProblem, Lens, LensAlias, SensorFormatRow, Shoot
from sharpzone.catalog.service import add_lens
from sharpzone.errors import CatalogError
from sharpzone.seed import shipped_formats


def test_revisions_form_one_line_from_0001_to_head():
    assert migrate.known_revisions() == ["0001", "0002", "0003", "0004", "0005"]
    assert migrate.head_revision() == "0005"
    assert migrate.next_revision_id() == "0006"


def test_quick_head_and_stamp_readers_agree_with_alembic(catalog_url):
    # head_revision reads file names and current_revision a plain query, so opening a
    # catalogue need not load Alembic; Alembic itself must say the same.
    from alembic.runtime.migration import MigrationContext

    assert migrate.head_revision() == migrate.script_directory().get_current_head()
    migrate.upgrade(catalog_url, "0001")
    engine = create_engine(catalog_url)
    with engine.connect() as connection:
        assert migrate.current_revision(connection) == MigrationContext.configure(connection).get_current_revision() == "0001"
    engine.dispose()


def _version_table(connection) -> tuple:
    from sqlalchemy import inspect

    inspector = inspect(connection)
    columns = [(c["name"], str(c["type"]), c["nullable"]) for c in inspector.get_columns("alembic_version")]
    key = inspector.get_pk_constraint("alembic_version")
    rows = connection.execute(text("SELECT version_num FROM alembic_version")).scalars().all()
    return columns, key["constrained_columns"], key.get("name"), rows


def test_our_stamp_writes_the_version_table_as_alembic_stamp_does(catalog_url):
    # A new catalogue is stamped without loading Alembic; the reference is Alembic's own
    # ``stamp`` command on the same kind of database.
    from alembic import command

    engine = create_engine(catalog_url)
    with engine.begin() as connection:
        config = migrate.alembic_config()
        config.attributes["connection"] = connection
        command.stamp(config, "head")
        by_alembic = _version_table(connection)
        connection.execute(text("DROP TABLE alembic_version"))
        migrate.stamp_head(connection)
        ours = _version_table(connection)
    engine.dispose()
    assert by_alembic[3] == ["0005"]
    assert ours == by_alembic


def test_migrations_are_found_inside_the_package():
    folder = migrate.migrations_folder()
    assert (folder / "env.py").is_file()
    assert (folder / "script.py.mako").is_file()
    assert sorted(p.name for p in (folder / "versions").glob("*.py"))[:5] == [
        "0001_initial_schema.py",
        "0002_pupils_warnings_problems.py",
        "0003_focus_brackets_and_measured_blur.py",
        "0004_database_checks.py",
        "0005_index_frame_captured_at.py",
    ]


def test_empty_database_is_created_at_head_with_the_shipped_formats(catalog_url):
    result = migrate.prepare_catalog(catalog_url)
    assert result.created and result.revision == "0005"
    engine = create_engine(catalog_url)
    with engine.connect() as connection:
        assert migrate.current_revision(connection) == "0005"
        names = set(connection.scalars(select(SensorFormatRow.name)))
    engine.dispose()
    assert names == {shipped.format.name for shipped in shipped_formats()}
    assert migrate.prepare_catalog(catalog_url) == migrate.PreparedCatalog(revision="0005")


@pytest.mark.parametrize("path", ["revisions", "created"])
def test_models_and_migrations_do_not_drift(catalog_url, path):
    # A new catalogue is made from the models (create_at_head); an old one goes through
    # the revisions: both must give the models' schema.
    from alembic.autogenerate import compare_metadata
    from alembic.runtime.migration import MigrationContext

    if path == "revisions":
        migrate.upgrade(catalog_url)
    else:
        migrate.prepare_catalog(catalog_url)
    engine = create_catalog_engine(catalog_url)
    with engine.connect() as connection, warnings.catch_warnings():
        # SQLite cannot reflect the expression index on body; the test below checks it.
        warnings.simplefilter("ignore")
        context = MigrationContext.configure(connection, opts={"compare_type": True})
        assert compare_metadata(context, Base.metadata) == []
    engine.dispose()


@pytest.mark.parametrize("path", ["revisions", "created"])
def test_body_identity_index_exists_after_migration(tmp_path, path):
    url = sqlite_url(tmp_path / "c.sqlite")
    migrate.upgrade(url) if path == "revisions" else migrate.prepare_catalog(url)
    connection = sqlite3.connect(tmp_path / "c.sqlite")
    sql = connection.execute("SELECT sql FROM sqlite_master WHERE name = 'uq_body_exif_identity'").fetchone()[0]
    connection.close()
    assert "UNIQUE" in sql.upper() and "coalesce(serial, '')" in sql


def test_an_upgrade_through_every_revision_says_nothing_on_the_way(tmp_path):
    # A photographer opening an old catalogue sees the upgrade's one line, not a library's
    # notice about an index it never copies (the index is kept: the test above).
    url = sqlite_url(tmp_path / "c.sqlite")
    migrate.upgrade(url, "0001")
    _fill_revision_0001(url)
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        migrate.upgrade(url)
    connection = sqlite3.connect(tmp_path / "c.sqlite")
    assert connection.execute("SELECT count(*) FROM sqlite_master WHERE name = 'uq_body_exif_identity'").fetchone() == (1,)
    connection.close()


def _fill_revision_0001(url: str) -> None:
    """Rows in every 0001 table, written with plain SQL in the 0001 shape."""
    engine = create_engine(url)
    with engine.begin() as connection:
        connection.execute(text(
            "INSERT INTO sensor_format (id, name, width_mm, height_mm, coc_divisor, aliases, description, source) "
            "VALUES (1, 'test-36x24', 36, 24, 1500, 'ff;135', 'a frame', 'invented')"
        ))
        connection.execute(text(
            "INSERT INTO body (id, name, exif_make, exif_model, serial, format_id, pixel_width, pixel_height, confirmed) "
            "VALUES (1, 'Korvath K1', 'Korvath', 'K1', NULL, 1, 6000, 4000, TRUE)"
        ))
        connection.execute(text(
            "INSERT INTO lens (id, name, focal_min_mm, focal_max_mm, max_aperture_wide, max_aperture_tele, "
            "min_aperture, close_focus_mm, confirmed) VALUES (1, 'Altamira 24-70', 24, 70, 2.8, 2.8, 22, 380, FALSE)"
        ))
        connection.execute(text("INSERT INTO lens_alias (id, lens_id, exif_name) VALUES (1, 1, 'ALT 24-70mm F2.8')"))
        connection.execute(text(
            "INSERT INTO shoot (id, name, root_folder, created_at, plan_kind, plan_near_mm, plan_far_mm) "
            "VALUES (1, 'Harbour', '/photos/harbour', '2026-11-30 10:00:00', 'range', 4000, 9000)"
        ))
        connection.execute(
            text(
                "INSERT INTO frame (id, shoot_id, path, file_size, file_mtime_ns, captured_at, utc_offset_minutes, "
                "body_id, lens_id, focal_mm, f_number, exposure_s, iso, focus_mm, focus_source) VALUES "
                "(1, 1, '/photos/harbour/a.jpg', 123, 1700000000000000000, '2026-11-30 10:01:02', 60, "
                "1, 1, 35, 8, 0.004, 100, :inf, 'exif')"
            ),
            {"inf": math.inf},
        )
    engine.dispose()


def test_old_catalogue_with_rows_is_backed_up_and_upgraded_keeping_every_row(catalog_url, tmp_path):
    # Rows written with their own ids, as a hand-made or copied catalogue would have them.
    url = catalog_url
    migrate.upgrade(url, "0001")
    _fill_revision_0001(url)

    with open_catalog(url) as catalog, catalog.session_scope() as session:
        assert [f.name for f in session.scalars(select(SensorFormatRow))] == ["test-36x24"]  # not seeded again
        body = session.scalars(select(Body)).one()
        assert (body.name, body.serial, body.sensor_format.name, body.pixel_width) == ("Korvath K1", None, "test-36x24", 6000)
        lens = session.scalars(select(Lens)).one()
        assert (lens.focal_min_mm, lens.focal_max_mm, lens.close_focus_mm, lens.confirmed) == (24, 70, 380, False)
        assert lens.pupil_magnification == 1.0  # the 0002 default for existing lenses
        assert [a.exif_name for a in lens.aliases] == ["ALT 24-70mm F2.8"]
        shoot = session.scalars(select(Shoot)).one()
        assert (shoot.plan_kind, shoot.plan_near_mm, shoot.plan_far_mm) == ("range", 4000, 9000)
        frame = session.scalars(select(Frame)).one()
        assert (frame.shoot_id, frame.body_id, frame.lens_id, frame.utc_offset_minutes) == (1, 1, 1, 60)
        assert math.isinf(frame.focus_mm) and frame.warnings is None
        # 0003: an exact distance of a 0002 catalogue is its own bracket, with its key.
        assert math.isinf(frame.focus_near_mm) and math.isinf(frame.focus_far_mm)
        assert frame.focus_key == "Exif.Photo.SubjectDistance"
        assert frame.device is None and frame.focus_point_x is None
        assert body.format_id == 1 and lens.max_magnification is None
        assert session.scalars(select(IngestProblem)).all() == []
        assert session.scalars(select(LensAlias)).one().lens_id == 1

    with open_catalog(url) as catalog, catalog.session_scope() as session:  # new ids do not collide
        lens = add_lens(session, "Altamira 50/1.4", focal_min_mm=50, max_aperture_wide=1.4)
        assert lens.id == 2

    if sqlite_path(url) is None:
        return  # a server database is not copied: its upgrade is one transaction of DDL
    backups = list(tmp_path.glob("catalog.sqlite.bak-0001-*"))
    assert len(backups) == 1
    kept = sqlite3.connect(backups[0])
    assert kept.execute("SELECT version_num FROM alembic_version").fetchone() == ("0001",)
    assert kept.execute("SELECT count(*) FROM frame").fetchone() == (1,)
    kept.close()


def test_catalogue_newer_than_the_program_is_refused(tmp_path):
    path = tmp_path / "future.sqlite"
    url = sqlite_url(path)
    migrate.prepare_catalog(url)
    connection = sqlite3.connect(path)
    connection.execute("UPDATE alembic_version SET version_num = '0099'")
    connection.commit()
    connection.close()
    with pytest.raises(CatalogError, match=r"unknown schema revision '0099': this program knows 0001 to 0005"):
        with open_catalog(url):
            pass
    assert not list(tmp_path.glob("*.bak-*"))


def test_foreign_database_is_refused(tmp_path):
    path = tmp_path / "other.sqlite"
    connection = sqlite3.connect(path)
    connection.execute("CREATE TABLE recipes (id INTEGER PRIMARY KEY)")
    connection.commit()
    connection.close()
    with pytest.raises(CatalogError, match="not a sharpzone catalogue"):
        migrate.prepare_catalog(sqlite_url(path))


def test_a_file_that_is_not_a_database_is_refused(tmp_path):
    path = tmp_path / "notes.sqlite"
    path.write_text("shopping list: film, batteries\n" * 100)
    with pytest.raises(CatalogError, match="not a sharpzone catalogue or is damaged"):
        migrate.prepare_catalog(sqlite_url(path))


# SQLite cannot reflect the expression index on body (checked by its own test above).
@pytest.mark.filterwarnings("ignore:.*expression-based index:UserWarning")
@pytest.mark.filterwarnings("ignore:.*expression-based index:sqlalchemy.exc.SAWarning")
def test_revision_helper_drafts_an_empty_revision_when_models_match(tmp_path, monkeypatch):
    import shutil

    copy = tmp_path / "migrations"
    shutil.copytree(migrate.migrations_folder(), copy, ignore=shutil.ignore_patterns("__pycache__"))
    monkeypatch.setattr(migrate, "migrations_folder", lambda: copy)
    path = migrate.new_revision("nothing changed")
    assert path.parent == copy / "versions" and path.name.startswith("0006_")
    draft = path.read_text(encoding="utf-8")
    assert "revision = '0006'" in draft and "down_revision = '0005'" in draft
    assert "op." not in draft.split("def upgrade() -> None:")[1].split("def downgrade")[0]


def test_two_programs_creating_one_catalogue_take_turns(catalog_url):
    from concurrent.futures import ThreadPoolExecutor

    url = catalog_url
    with ThreadPoolExecutor(max_workers=3) as pool:
        results = list(pool.map(lambda _: migrate.prepare_catalog(url), range(3)))
    assert sorted(result.created for result in results) == [False, False, True]
    engine = create_engine(url)
    with engine.connect() as connection:
        count = connection.execute(text("SELECT count(*) FROM sensor_format")).scalar()
    engine.dispose()
    assert count == len(shipped_formats())


def _fill_revision_0003(url: str) -> None:
    """0001 rows, then rows in the columns and table 0003 added."""
    _fill_revision_0001(url)
    engine = create_engine(url)
    with engine.begin() as connection:
        connection.execute(text(
            "UPDATE frame SET focus_source = 'makernote', focus_mm = 3000, focus_near_mm = 2500, focus_far_mm = :inf, "
            "focus_point_x = 0.5, focus_point_y = 0.25, focus_point_w = 0, focus_point_h = 0"), {"inf": math.inf})
        connection.execute(text(
            "INSERT INTO frame_blur (id, frame_id, method, method_version, measured_at, analysed_long_px, "
            "focus_blur_px, best_blur_px, median_blur_px, regions_measured, regions_total) "
            "VALUES (1, 1, 'edge-width', 1, '2026-12-01 10:00:00', 1024, 1.5, 0.9, 2.5, 40, 48)"))
        connection.execute(text("UPDATE lens SET max_magnification = 0.5"))
    engine.dispose()


def test_0004_keeps_every_row_and_the_body_identity_index(catalog_url):
    migrate.upgrade(catalog_url, "0003")
    _fill_revision_0003(catalog_url)
    result = migrate.prepare_catalog(catalog_url)
    assert (result.upgraded_from, result.revision) == ("0003", "0005")
    with open_catalog(catalog_url) as catalog, catalog.session_scope() as session:
        frame = session.scalars(select(Frame)).one()
        assert (frame.focus_source, frame.focus_mm, frame.focus_near_mm, frame.focus_point_y) == ("makernote", 3000, 2500, 0.25)
        assert math.isinf(frame.focus_far_mm)
        assert session.scalars(select(Lens)).one().max_magnification == 0.5
        assert session.scalars(select(Body)).one().name == "Korvath K1"
        # the identity index came back after the batch copy of body
        from sharpzone.catalog.service import add_body
        from sharpzone.errors import Conflict

        with pytest.raises(Conflict):
            add_body(session, "Twin", exif_make="Korvath", exif_model="K1", format_name="test-36x24")


BAD_ROWS = [
    ("UPDATE lens SET focal_min_mm = -50", "focal_min_mm_positive"),
    ("UPDATE lens SET max_aperture_wide = 0.1, max_aperture_tele = 0.1", "max_aperture_wide_f_number"),
    ("UPDATE shoot SET plan_kind = 'banana'", "plan_kind"),
    ("UPDATE frame SET focus_source = 'telepathy'", "focus_source"),
    ("UPDATE frame SET iso = -1", "iso_positive"),
    ("UPDATE frame SET focus_near_mm = 4000", "focus_bracket"),
    ("UPDATE frame SET focus_point_x = 1.5", "focus_point_x_fraction"),
    ("UPDATE frame_blur SET best_blur_px = -1", "best_blur_px_not_negative"),
]


@pytest.mark.parametrize(("statement", "rule"), BAD_ROWS)
def test_the_database_refuses_what_the_program_refuses(catalog_url, statement, rule):
    migrate.upgrade(catalog_url, "0003")
    _fill_revision_0003(catalog_url)
    migrate.prepare_catalog(catalog_url)
    engine = create_engine(catalog_url)
    from sqlalchemy.exc import IntegrityError

    with pytest.raises(IntegrityError, match=rule if sqlite_path(catalog_url) else "ck_"):
        with engine.begin() as connection:
            connection.execute(text(statement))
    engine.dispose()


@pytest.mark.parametrize(("statement", "rule"), BAD_ROWS[:4])
def test_0004_refuses_a_catalogue_holding_a_bad_row_in_one_line_and_changes_nothing(catalog_url, statement, rule):
    migrate.upgrade(catalog_url, "0003")
    _fill_revision_0003(catalog_url)
    engine = create_engine(catalog_url)
    with engine.begin() as connection:
        connection.execute(text(statement))
    engine.dispose()
    with pytest.raises(CatalogError, match=rf"cannot add the rule '{rule}' to table \w+: row id 1 breaks it") as refused:
        migrate.prepare_catalog(catalog_url)
    assert "\n" not in str(refused.value)
    engine = create_engine(catalog_url)
    with engine.connect() as connection:
        assert migrate.current_revision(connection) == "0003"
    engine.dispose()


@pytest.mark.parametrize("path", ["revisions", "created"])
def test_the_models_declare_the_check_constraints_the_migrations_made(catalog_url, path):
    from sqlalchemy import CheckConstraint, inspect

    migrate.upgrade(catalog_url) if path == "revisions" else migrate.prepare_catalog(catalog_url)
    engine = create_engine(catalog_url)
    with engine.connect() as connection:
        inspector = inspect(connection)
        in_database = {table: {c["name"] for c in inspector.get_check_constraints(table) if c["name"].startswith("ck_")}
                       for table in Base.metadata.tables}
    engine.dispose()
    declared = {name: {c.name for c in table.constraints if isinstance(c, CheckConstraint) and c.name.startswith("ck_")}
                for name, table in Base.metadata.tables.items()}
    assert in_database == declared
    assert "ck_frame_focus_source" in declared["frame"] and "ck_shoot_plan_shape" in declared["shoot"]


def test_a_stamp_that_does_not_match_the_tables_is_one_line_and_leaves_no_backup(tmp_path):
    path = tmp_path / "c.sqlite"
    url = sqlite_url(path)
    migrate.upgrade(url, "0002")
    connection = sqlite3.connect(path)
    connection.execute("UPDATE alembic_version SET version_num = '0001'")  # a 0002 schema stamped 0001
    connection.commit()
    connection.close()
    for _attempt in range(3):
        with pytest.raises(CatalogError, match=r"stamped with schema revision '0001' but its tables do not match it") as refused:
            migrate.prepare_catalog(url)
        assert "\n" not in str(refused.value) and "duplicate column" not in str(refused.value).lower()
    assert list(tmp_path.glob("c.sqlite.bak-*")) == []  # a failed attempt leaves no copy behind
