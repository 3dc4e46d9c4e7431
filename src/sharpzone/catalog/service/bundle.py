"""Export and import the whole catalogue as a bundle, losing nothing.

Two forms carry the same rows (``BUNDLE_FORMAT_VERSION`` 1):

- JSON, one file ``*.json``::

    {"format": "sharpzone-catalogue-bundle", "format_version": 1, "schema_revision": "0002",
     "exported_at": "2026-12-01T22:10:00", "tables": {"sensor_format": [{...}, ...], ...}}

- CSV, one zip ``*.zip`` holding ``manifest.json`` (the same header without ``tables``) and
  one ``<table>.csv`` per table with a header row.

Rows carry every column of the catalogue except the numeric ids; a reference to another
row is by that row's name instead (``body.format``, ``lens_alias.lens``, ``frame.shoot``,
``frame.body``, ``frame.lens``, ``ingest_problem.shoot``), so a bundle can be imported into
any catalogue. Values: lengths in mm and times in seconds as stored; infinity is ``"inf"``;
an unknown value is ``null`` (JSON) or an empty field (CSV: the catalogue never stores empty
text in a nullable column, so the two cannot be confused); booleans are ``true``/``false``
(CSV) and timestamps ISO 8601 without a zone (as stored).

Import matches rows by natural key (name; ``exif_name`` for aliases; ``path`` for frames;
the whole row for ingest problems). An identical row is left alone, a new one added; one
that differs is a ``Conflict`` unless ``replace=True``. Everything happens in the caller's
unit of work, so a refused import writes nothing.
"""

from __future__ import annotations

import csv
import datetime as dt
import io
import json
import math
import os
import tempfile
import zipfile
from dataclasses import dataclass, field
from pathlib import Path

from sqlalchemy import Boolean, DateTime, Double, Integer, select
from sqlalchemy.orm import Session

from sharpzone.catalog.models import (
    TABLES_IN_DEPENDENCY_ORDER,
    Body,
    Frame,
    FrameBlur,
    IngestProblem,
    Lens,
    LensAlias,
    SensorFormatRow,
    Shoot,
)
from sharpzone.errors import CatalogError, Conflict, InvalidValue

BUNDLE_FORMAT = "sharpzone-catalogue-bundle"
BUNDLE_FORMAT_VERSION = 1
MANIFEST_NAME = "manifest.json"

# (table, foreign-key column) → (field name in the bundle, the referenced model)
REFERENCES = {
    ("body", "format_id"): ("format", SensorFormatRow),
    ("lens_alias", "lens_id"): ("lens", Lens),
    ("frame", "shoot_id"): ("shoot", Shoot),
    ("frame", "body_id"): ("body", Body),
    ("frame", "lens_id"): ("lens", Lens),
    ("frame_blur", "frame_id"): ("frame", Frame),
    ("ingest_problem", "shoot_id"): ("shoot", Shoot),
}
NATURAL_KEYS = {
    SensorFormatRow: ("name",),
    Body: ("name",),
    Lens: ("name",),
    LensAlias: ("exif_name",),
    Shoot: ("name",),
    Frame: ("path",),
    FrameBlur: ("frame_id",),
    IngestProblem: None,
}


@dataclass(frozen=True)
class BundleField:
    """One field of a bundle table: its bundle name, the model column, its kind, and the
    referenced model when the field names another row."""

    name: str
    column: str
    kind: str  # text | float | int | bool | datetime
    nullable: bool
    refers_to: type | None = None


@dataclass
class ImportResult:
    """Per table: rows added, rows replaced, identical rows left alone."""

    added: dict[str, int] = field(default_factory=dict)
    replaced: dict[str, int] = field(default_factory=dict)
    unchanged: dict[str, int] = field(default_factory=dict)


def bundle_fields(model) -> list[BundleField]:
    """The fields of ``model``'s bundle table, in column order (derived from the model, so
    a new column is exported without further work)."""
    fields = []
    for column in model.__table__.columns:
        if column.primary_key:
            continue
        reference = REFERENCES.get((model.__tablename__, column.name))
        if reference:
            fields.append(BundleField(reference[0], column.name, "text", column.nullable, reference[1]))
        else:
            fields.append(BundleField(column.name, column.name, _kind(column.type), column.nullable))
    return fields


def _kind(column_type) -> str:
    column_type = getattr(column_type, "impl_instance", column_type)  # a TypeDecorator's storage type
    if isinstance(column_type, Boolean):
        return "bool"
    if isinstance(column_type, Double):
        return "float"
    if isinstance(column_type, Integer):
        return "int"
    if isinstance(column_type, DateTime):
        return "datetime"
    return "text"


# ---- export -----------------------------------------------------------------------------


def bundle_tables(session: Session) -> dict[str, list[dict]]:
    """Every row of every table as JSON-ready dicts (references by name, inf as "inf")."""
    tables: dict[str, list[dict]] = {}
    for model in TABLES_IN_DEPENDENCY_ORDER:
        fields = bundle_fields(model)
        names = {f.refers_to: _names_by_id(session, f.refers_to) for f in fields if f.refers_to}
        rows = []
        for row in session.scalars(select(model).order_by(model.id)).unique():
            record = {}
            for f in fields:
                value = getattr(row, f.column)
                record[f.name] = names[f.refers_to].get(value) if f.refers_to else _to_json(value)
            rows.append(record)
        tables[model.__tablename__] = rows
    return tables


def export_catalog(session: Session, destination: str | os.PathLike) -> dict[str, int]:
    """Write the whole catalogue to ``destination`` (``.json`` or ``.zip`` of CSV files);
    returns rows written per table. The file appears complete or not at all."""
    from sharpzone.catalog.migrate import current_revision

    target = Path(destination)
    form = _form_of(target)
    tables = bundle_tables(session)
    header = {
        "format": BUNDLE_FORMAT,
        "format_version": BUNDLE_FORMAT_VERSION,
        "schema_revision": current_revision(session.connection()),
        "exported_at": dt.datetime.now(dt.timezone.utc).replace(tzinfo=None).isoformat(timespec="seconds"),
    }
    if form == "json":
        data = json.dumps({**header, "tables": tables}, indent=1, ensure_ascii=False).encode("utf-8")
    else:
        buffer = io.BytesIO()
        with zipfile.ZipFile(buffer, "w", compression=zipfile.ZIP_DEFLATED) as archive:
            archive.writestr(MANIFEST_NAME, json.dumps({**header, "tables": list(tables)}, indent=1))
            for model in TABLES_IN_DEPENDENCY_ORDER:
                archive.writestr(f"{model.__tablename__}.csv", _csv_text(model, tables[model.__tablename__]))
        data = buffer.getvalue()
    _write_atomically(target, data)
    return {name: len(rows) for name, rows in tables.items()}


def _to_json(value):
    if isinstance(value, float) and math.isinf(value):
        return "inf" if value > 0 else "-inf"
    if isinstance(value, dt.datetime):
        return value.isoformat()
    return value


def _csv_text(model, rows: list[dict]) -> str:
    out = io.StringIO()
    writer = csv.writer(out, lineterminator="\n")
    fields = bundle_fields(model)
    writer.writerow([f.name for f in fields])
    for row in rows:
        writer.writerow([_to_csv(row[f.name]) for f in fields])
    return out.getvalue()


def _to_csv(value) -> str:
    if value is None:
        return ""
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, float):
        return repr(value)  # shortest text that reads back as the same float
    return str(value)


def _write_atomically(target: Path, data: bytes) -> None:
    try:
        target.parent.mkdir(parents=True, exist_ok=True)
        handle, temporary = tempfile.mkstemp(dir=target.parent, prefix=f".{target.name}.", suffix=".part")
        with os.fdopen(handle, "wb") as stream:
            stream.write(data)
        os.replace(temporary, target)
    except OSError as error:
        raise CatalogError(f"cannot write {target}: {error.strerror}", hint=f"check permissions of {target.parent}") from None


# ---- import -----------------------------------------------------------------------------


def read_bundle(source: str | os.PathLike) -> dict[str, list[dict]]:
    """The tables of a bundle file (``.json`` or ``.zip``), values still in bundle form."""
    path = Path(source)
    form = _form_of(path)
    try:
        if form == "json":
            document = json.loads(path.read_text(encoding="utf-8"))
            _check_header(document, path)
            tables = document.get("tables")
            if not isinstance(tables, dict):
                raise InvalidValue(f"bundle {path} has no 'tables' object")
            return tables
        with zipfile.ZipFile(path) as archive:
            _check_header(json.loads(archive.read(MANIFEST_NAME)), path)
            tables = {}
            for name in archive.namelist():
                if name.endswith(".csv"):
                    text = archive.read(name).decode("utf-8")
                    tables[name[: -len(".csv")]] = list(csv.DictReader(io.StringIO(text)))
            return tables
    except FileNotFoundError:
        raise InvalidValue(f"bundle {path} does not exist") from None
    except (OSError, KeyError, UnicodeDecodeError, json.JSONDecodeError, zipfile.BadZipFile) as error:
        raise InvalidValue(f"bundle {path} cannot be read: {error}") from None


def import_catalog(session: Session, source: str | os.PathLike, *, replace: bool = False) -> ImportResult:
    """Add the rows of the bundle ``source`` to the catalogue (see the module docs for the
    matching rules); a refused import raises before the unit of work commits anything."""
    return import_tables(session, read_bundle(source), replace=replace)


def import_tables(session: Session, tables: dict[str, list[dict]], *, replace: bool = False) -> ImportResult:
    """Import bundle-form ``tables`` (as ``read_bundle`` or ``bundle_tables`` give them).

    Each table is decided row by row against the catalogue and the rows before it, then
    written in bulk (``upsert_rows``), parents before children."""
    from sharpzone.catalog.upsert import upsert_rows

    known = {model.__tablename__ for model in TABLES_IN_DEPENDENCY_ORDER}
    unknown = sorted(set(tables) - known)
    if unknown:
        raise InvalidValue(f"bundle table {unknown[0]!r} is not a catalogue table: expected {', '.join(sorted(known))}")
    result = ImportResult()
    for model in TABLES_IN_DEPENDENCY_ORDER:
        table = model.__tablename__
        records = tables.get(table) or []
        fields = bundle_fields(model)
        ids_by_name = {f.refers_to: _ids_by_name(session, f.refers_to) for f in fields if f.refers_to}
        decoded = [_decode_row(model, fields, ids_by_name, record, f"bundle {table} row {number}")
                   for number, record in enumerate(records, start=1)]
        natural_key = NATURAL_KEYS[model]
        known_rows = _existing_rows(session, model, decoded)
        to_write: list[dict] = []
        added = replaced = unchanged = 0
        for values in decoded:
            key = _key_of(model, values)
            existing = known_rows.get(key)
            if existing is None:
                to_write.append(values)
                added += 1
            elif all(_same(existing.get(column), value) for column, value in values.items()):
                unchanged += 1
                continue
            elif replace:
                to_write.append(values)
                replaced += 1
            else:
                shown = ", ".join(f"{k}={values[k]!r}" for k in natural_key)
                raise Conflict(f"{table} {shown} already exists with other values: say --replace to overwrite it")
            known_rows[key] = {**(existing or {}), **values}
        written = upsert_rows(session, model, to_write, natural_key or ())
        if written.inserted != added:
            raise Conflict(f"another program changed {table} rows during the import; nothing was imported: run it again")
        result.added[table], result.replaced[table], result.unchanged[table] = added, replaced, unchanged
    return result


def _decode_row(model, fields: list[BundleField], ids_by_name: dict, record: dict, where: str) -> dict:
    if not isinstance(record, dict):
        raise InvalidValue(f"{where}: expected an object of fields, got {type(record).__name__}")
    extra = sorted(set(record) - {f.name for f in fields})
    if extra:
        raise InvalidValue(f"{where}: unknown field {extra[0]!r}")
    values = {}
    for f in fields:
        if f.name not in record:
            if not f.nullable and model.__table__.columns[f.column].default is None:
                raise InvalidValue(f"{where}: field {f.name!r} is missing")
            continue
        value = _decode_value(record[f.name], f, where)
        if f.refers_to is not None and value is not None:
            if value not in ids_by_name[f.refers_to]:
                raise InvalidValue(f"{where}: {f.name} {value!r} is not in the bundle or the catalogue")
            value = ids_by_name[f.refers_to][value]
        values[f.column] = value
    return values


def _decode_value(raw, f: BundleField, where: str):
    if raw is None or (raw == "" and (f.nullable or f.kind != "text")):
        if not f.nullable:
            raise InvalidValue(f"{where}: field {f.name!r} must have a value")
        return None
    try:
        if f.kind == "text":
            return str(raw)
        if f.kind == "float":
            number = float(raw)
            if math.isnan(number):
                raise ValueError("NaN")
            return number
        if f.kind == "int":
            if isinstance(raw, float) and not raw.is_integer():
                raise ValueError("not a whole number")
            return int(raw)
        if f.kind == "bool":
            if isinstance(raw, bool):
                return raw
            return {"true": True, "false": False, "1": True, "0": False}[str(raw).strip().lower()]
        return dt.datetime.fromisoformat(str(raw))
    except (TypeError, ValueError, KeyError):
        raise InvalidValue(f"{where}: {f.name} {raw!r} is not a valid {f.kind}") from None


def _same(stored, incoming) -> bool:
    if isinstance(stored, float) and isinstance(incoming, (int, float)):
        return stored == incoming or (math.isnan(stored) and math.isnan(incoming))
    return stored == incoming


def _names_by_id(session: Session, model) -> dict[int, str]:
    """How a bundle names each row of ``model`` that others refer to: its name (a frame: its path)."""
    label = model.path if model is Frame else model.name
    return {row_id: name for row_id, name in session.execute(select(model.id, label))}


def _ids_by_name(session: Session, model) -> dict[str, int]:
    return {name: row_id for row_id, name in _names_by_id(session, model).items()}


def _key_of(model, values: dict) -> tuple:
    """A row's natural key; an ingest problem's key is the whole row."""
    columns = NATURAL_KEYS[model] or tuple(column.name for column in model.__table__.columns if not column.primary_key)
    return tuple(_key_value(values.get(column)) for column in columns)


def _key_value(value):
    return value.isoformat() if isinstance(value, dt.datetime) else value


def _existing_rows(session: Session, model, decoded: list[dict]) -> dict[tuple, dict]:
    """Rows already in the catalogue that share a natural key with ``decoded``, by key."""
    table = model.__table__
    natural_key = NATURAL_KEYS[model]
    statements = []
    if natural_key is None:  # few rows (problems): compare the whole table
        statements.append(select(table))
    elif decoded:
        wanted = sorted({values[natural_key[0]] for values in decoded if natural_key[0] in values})
        column = table.columns[natural_key[0]]
        statements = [select(table).where(column.in_(wanted[start:start + 1000])) for start in range(0, len(wanted), 1000)]
    found = {}
    for statement in statements:
        for row in session.execute(statement).mappings():
            found[_key_of(model, row)] = dict(row)
    return found


def _check_header(header: dict, path: Path) -> None:
    if not isinstance(header, dict) or header.get("format") != BUNDLE_FORMAT:
        raise InvalidValue(f"{path} is not a sharpzone catalogue bundle")
    version = header.get("format_version")
    if not isinstance(version, int) or version > BUNDLE_FORMAT_VERSION:
        raise InvalidValue(
            f"bundle {path} has format version {version!r}; this program reads up to {BUNDLE_FORMAT_VERSION}"
        )


def _form_of(path: Path) -> str:
    suffix = path.suffix.lower()
    if suffix == ".json":
        return "json"
    if suffix == ".zip":
        return "csv"
    raise InvalidValue(f"bundle file {str(path)!r} must end in .json (one JSON file) or .zip (CSV files)")
