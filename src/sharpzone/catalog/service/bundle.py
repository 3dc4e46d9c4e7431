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

Every row passes the same rules as the service functions (``sharpzone.catalog.rules``).
A bundle cannot exhaust the machine: both forms are read as streams, row by row, and
written in batches; zip entry names are checked before anything is read, the uncompressed
size is capped (``MAX_BUNDLE_BYTES``), so are one field (``MAX_FIELD_BYTES``) and the
nesting (a row holds plain values only). JSON tables must come in dependency order (as
export writes them), the header before ``tables``.
"""

from __future__ import annotations

import contextlib
import csv
import datetime as dt
import errno
import io
import json
import math
import os
import re
import tempfile
import zipfile
from collections.abc import Iterable, Iterator
from dataclasses import dataclass, field
from itertools import islice
from pathlib import Path

from sqlalchemy import BigInteger, Boolean, DateTime, Double, Integer, String, select
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
from sharpzone.catalog.rules import BIG_INTEGER_RANGE, INTEGER_RANGE, check_row
from sharpzone.errors import CatalogError, Conflict, InvalidValue, SharpzoneError

BUNDLE_FORMAT = "sharpzone-catalogue-bundle"
BUNDLE_FORMAT_VERSION = 1
MANIFEST_NAME = "manifest.json"

# A bundle's uncompressed size (the JSON file, or the zip's entries together). 1 GiB holds
# about a million frames; memory stays bounded whatever the size (rows are streamed).
MAX_BUNDLE_BYTES = 1 << 30
# One field: Python's csv module's own default limit, applied to JSON strings too.
MAX_FIELD_BYTES = 128 * 1024
MAX_MANIFEST_BYTES = 64 * 1024
# Rows decided and written together.
ROW_BATCH = 2000

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
_TABLE_NAMES = tuple(model.__tablename__ for model in TABLES_IN_DEPENDENCY_ORDER)


@dataclass(frozen=True)
class BundleField:
    """One field of a bundle table: its bundle name, the model column, its kind, and the
    referenced model when the field names another row; ``length`` caps text, ``big`` says
    a whole number has 64 bits (else 32)."""

    name: str
    column: str
    kind: str  # text | float | int | bool | datetime
    nullable: bool
    refers_to: type | None = None
    length: int | None = None
    big: bool = False


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
        storage = getattr(column.type, "impl_instance", column.type)  # a TypeDecorator's storage type
        length = getattr(storage, "length", None) if isinstance(storage, String) else None
        if reference:
            fields.append(BundleField(reference[0], column.name, "text", column.nullable, reference[1], length))
        else:
            fields.append(BundleField(column.name, column.name, _kind(storage), column.nullable, None, length,
                                      isinstance(storage, BigInteger)))
    return fields


def _kind(column_type) -> str:
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


def _table_rows(session: Session, model) -> Iterator[dict]:
    """Every row of ``model`` as a JSON-ready dict (references by name, inf as "inf"),
    read in batches."""
    fields = bundle_fields(model)
    names = {f.refers_to: _names_by_id(session, f.refers_to) for f in fields if f.refers_to}
    statement = select(model.__table__).order_by(model.__table__.c.id).execution_options(yield_per=ROW_BATCH)
    for row in session.execute(statement).mappings():
        yield {f.name: names[f.refers_to].get(row[f.column]) if f.refers_to else _to_json(row[f.column])
               for f in fields}


def export_catalog(session: Session, destination: str | os.PathLike) -> dict[str, int]:
    """Write the whole catalogue to ``destination`` (``.json`` or ``.zip`` of CSV files);
    returns rows written per table. The file appears complete or not at all: a failed
    write (a full disk) removes what it had written."""
    from sharpzone.catalog.migrate import current_revision

    target = Path(destination)
    form = _form_of(target)
    header = {
        "format": BUNDLE_FORMAT,
        "format_version": BUNDLE_FORMAT_VERSION,
        "schema_revision": current_revision(session.connection()),
        "exported_at": dt.datetime.now(dt.timezone.utc).replace(tzinfo=None).isoformat(timespec="seconds"),
    }
    counts: dict[str, int] = {}
    with _atomic_file(target) as stream:
        if form == "json":
            text = io.TextIOWrapper(stream, encoding="utf-8", newline="\n")
            text.write(json.dumps(header, indent=1, ensure_ascii=False)[:-2] + ',\n "tables": {')
            for position, model in enumerate(TABLES_IN_DEPENDENCY_ORDER):
                table = model.__tablename__
                text.write(("," if position else "") + f"\n  {json.dumps(table)}: [")
                counts[table] = 0
                for row in _table_rows(session, model):
                    text.write(("," if counts[table] else "") + "\n   " + json.dumps(row, ensure_ascii=False))
                    counts[table] += 1
                text.write("\n  ]")
            text.write("\n }\n}\n")
            text.flush()
            text.detach()
        else:
            with zipfile.ZipFile(stream, "w", compression=zipfile.ZIP_DEFLATED) as archive:
                archive.writestr(MANIFEST_NAME, json.dumps({**header, "tables": list(_TABLE_NAMES)}, indent=1))
                for model in TABLES_IN_DEPENDENCY_ORDER:
                    counts[model.__tablename__] = _write_csv(archive, model, _table_rows(session, model))
    return counts


def _to_json(value):
    if isinstance(value, float) and math.isnan(value):
        return None  # unknown (a NaN can only come from another writer)
    if isinstance(value, float) and math.isinf(value):
        return "inf" if value > 0 else "-inf"
    if isinstance(value, dt.datetime):
        return value.isoformat()
    return value


def _write_csv(archive: zipfile.ZipFile, model, rows: Iterable[dict]) -> int:
    fields = bundle_fields(model)
    count = 0
    with archive.open(f"{model.__tablename__}.csv", "w", force_zip64=True) as entry:
        text = io.TextIOWrapper(entry, encoding="utf-8", newline="")
        writer = csv.writer(text, lineterminator="\n")
        writer.writerow([f.name for f in fields])
        for row in rows:
            writer.writerow([_to_csv(row[f.name]) for f in fields])
            count += 1
        text.flush()
        text.detach()
    return count


def _to_csv(value) -> str:
    """A bundle value as CSV text: unknown (``None``, NaN) is the empty field."""
    if value is None or (isinstance(value, float) and math.isnan(value)):
        return ""
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, float):
        return repr(value)  # shortest text that reads back as the same float
    return str(value)


@contextlib.contextmanager
def _atomic_file(target: Path):
    """A binary stream to a temporary file beside ``target``, renamed onto it when the
    block ends; on any failure the temporary file is removed and an ``OSError`` becomes
    one ``CatalogError`` line ("disk full" for a full disk or quota)."""
    temporary = None
    try:
        target.parent.mkdir(parents=True, exist_ok=True)
        handle, temporary = tempfile.mkstemp(dir=target.parent, prefix=f".{target.name}.", suffix=".part")
        with os.fdopen(handle, "wb") as stream:
            yield stream
        os.replace(temporary, target)
        temporary = None
    except OSError as error:
        if error.errno in (errno.ENOSPC, errno.EDQUOT):
            raise CatalogError(f"cannot write {target}: disk full",
                               hint=f"free space on the disk of {target.parent}, or export elsewhere") from None
        raise CatalogError(f"cannot write {target}: {error.strerror or error}",
                           hint=f"check permissions of {target.parent}") from None
    finally:
        if temporary is not None:
            with contextlib.suppress(OSError):
                os.unlink(temporary)


# ---- reading ----------------------------------------------------------------------------


@contextlib.contextmanager
def _bundle_stream(path: Path):
    """``(form, tables)``: tables an iterator of ``(table name, iterator of rows)`` read
    from ``path`` as the caller consumes them. Every problem becomes one ``InvalidValue``."""
    form = _form_of(path)
    try:
        with contextlib.ExitStack() as stack:
            if form == "json":
                tables = _json_tables(stack.enter_context(_capped_file(path)), path)
            else:
                tables = _csv_tables(stack.enter_context(zipfile.ZipFile(path)), path)
            yield form, tables
    except FileNotFoundError:
        raise InvalidValue(f"bundle {path} does not exist") from None
    except SharpzoneError:
        raise
    except (OSError, KeyError, UnicodeDecodeError, ValueError, RecursionError, csv.Error, zipfile.BadZipFile,
            zipfile.LargeZipFile, EOFError) as error:
        reason = str(error).splitlines()[0] if str(error) else type(error).__name__
        raise InvalidValue(f"bundle {path} cannot be read: {reason[:200]}") from None


@contextlib.contextmanager
def _capped_file(path: Path):
    size = path.stat().st_size
    if size > MAX_BUNDLE_BYTES:
        raise InvalidValue(f"bundle {path} is {size / 2**20:.0f} MiB: more than the {MAX_BUNDLE_BYTES >> 20} MiB "
                           "a bundle may hold")
    with open(path, "rb") as raw:
        yield _TokenGuard(raw, path)


_UNESCAPED_QUOTE = re.compile(rb'(?<!\\)"')


class _TokenGuard(io.RawIOBase):
    """A read-only stream that refuses a run of more than ``MAX_FIELD_BYTES`` without a
    string boundary, so the JSON parser never holds one huge string or number in memory.
    (Field names are quoted every few bytes in any real bundle.)"""

    def __init__(self, raw, path: Path) -> None:
        self._raw, self._path, self._run = raw, path, 0

    def readable(self) -> bool:
        return True

    def readinto(self, buffer) -> int:
        data = self._raw.read(min(len(buffer), 64 * 1024))
        last = None
        for last in _UNESCAPED_QUOTE.finditer(data):
            pass
        if last is None:
            self._run += len(data)
        else:
            first = _UNESCAPED_QUOTE.search(data)
            if self._run + first.start() > MAX_FIELD_BYTES:
                self._refuse()
            self._run = len(data) - last.end()
        if self._run > MAX_FIELD_BYTES:
            self._refuse()
        buffer[: len(data)] = data
        return len(data)

    def _refuse(self):
        raise InvalidValue(f"bundle {self._path} has a value longer than {MAX_FIELD_BYTES // 1024} KiB")


class _Events:
    """The JSON events of a bundle with one token of look-ahead."""

    def __init__(self, stream, path: Path) -> None:
        import ijson

        self._events = ijson.basic_parse(stream, use_float=True)
        self.path = path

    def next(self) -> tuple[str, object]:
        import ijson

        try:
            return next(self._events)
        except StopIteration:
            raise InvalidValue(f"bundle {self.path} ends too early") from None
        except ijson.JSONError as error:
            reason = str(error).splitlines()[0] if str(error) else "parse error"
            if "integer overflow" in reason:
                reason = f"a whole number beyond {BIG_INTEGER_RANGE[1]} (64 bits)"
            raise InvalidValue(f"bundle {self.path} is not valid JSON: {reason[:200]}") from None

    def expect(self, wanted: str, what: str) -> None:
        event, _ = self.next()
        if event != wanted:
            raise InvalidValue(f"bundle {self.path}: {what}")

    def scalar(self, what: str):
        event, value = self.next()
        if event in ("start_map", "start_array"):
            raise InvalidValue(f"bundle {self.path}: {what} must be a plain value, not a nested "
                               f"{'object' if event == 'start_map' else 'list'}")
        return value


def _json_tables(stream, path: Path) -> Iterator[tuple[str, Iterator[dict]]]:
    events = _Events(stream, path)
    events.expect("start_map", "expected a JSON object with a header and 'tables'")
    header: dict = {}
    while True:
        event, key = events.next()
        if event == "end_map":
            _check_header(header, path)
            raise InvalidValue(f"bundle {path} has no 'tables' object")
        if key == "tables":
            break
        header[key] = events.scalar(f"header field {key!r}")
    _check_header(header, path)
    events.expect("start_map", "'tables' must be an object of tables")
    while True:
        event, table = events.next()
        if event == "end_map":
            break
        event, _ = events.next()
        if event != "start_array":
            raise InvalidValue(f"bundle table {table!r} must be a list of rows")
        rows = _json_rows(events, table)
        yield table, rows
        for _ in rows:  # what the caller left unread
            pass
    while True:  # the rest of the header, after the tables
        event, key = events.next()
        if event == "end_map":
            return
        events.scalar(f"header field {key!r}")


def _json_rows(events: _Events, table: str) -> Iterator[dict]:
    number = 0
    while True:
        event, value = events.next()
        if event == "end_array":
            return
        number += 1
        where = f"bundle {table} row {number}"
        if event != "start_map":
            shown = "a list" if event == "start_array" else type(value).__name__ if value is not None else "null"
            raise InvalidValue(f"{where}: expected an object of fields, got {shown}")
        row: dict = {}
        while True:
            event, key = events.next()
            if event == "end_map":
                break
            if key in row:
                raise InvalidValue(f"{where}: field {key!r} appears twice")
            row[key] = events.scalar(f"{where}: field {key!r}")
        yield row


def _csv_tables(archive: zipfile.ZipFile, path: Path) -> Iterator[tuple[str, Iterator[dict]]]:
    allowed = {MANIFEST_NAME, *(f"{table}.csv" for table in _TABLE_NAMES)}
    infos = archive.infolist()
    seen = set()
    for info in infos:  # names and sizes are checked before anything is decompressed
        if info.filename not in allowed:
            shown = info.filename if info.filename.isprintable() else repr(info.filename)
            raise InvalidValue(f"bundle {path} holds {shown[:80]!r}: expected only {MANIFEST_NAME} and "
                               "<table>.csv files at the top")
        if info.filename in seen:
            raise InvalidValue(f"bundle {path} holds {info.filename} twice")
        seen.add(info.filename)
    total = sum(info.file_size for info in infos)
    if total > MAX_BUNDLE_BYTES:
        raise InvalidValue(f"bundle {path} expands to {total / 2**20:.0f} MiB: more than the "
                           f"{MAX_BUNDLE_BYTES >> 20} MiB a bundle may hold")
    if MANIFEST_NAME not in seen:
        raise InvalidValue(f"bundle {path} has no {MANIFEST_NAME}")
    if archive.getinfo(MANIFEST_NAME).file_size > MAX_MANIFEST_BYTES:
        raise InvalidValue(f"bundle {path}: {MANIFEST_NAME} is larger than {MAX_MANIFEST_BYTES // 1024} KiB")
    _check_header(json.loads(archive.read(MANIFEST_NAME)), path)
    for table in _TABLE_NAMES:
        if f"{table}.csv" in seen:
            with archive.open(f"{table}.csv") as entry:
                rows = _csv_rows(io.TextIOWrapper(entry, encoding="utf-8", newline=""), table)
                yield table, rows
                for _ in rows:
                    pass


def _csv_rows(text, table: str) -> Iterator[dict]:
    reader = csv.DictReader(text)
    for number, row in enumerate(reader, start=1):
        if None in row:
            raise InvalidValue(f"bundle {table} row {number}: more fields than the header names")
        if None in row.values():
            raise InvalidValue(f"bundle {table} row {number}: fewer fields than the header names")
        yield row


def _check_header(header: dict, path: Path) -> None:
    if not isinstance(header, dict) or header.get("format") != BUNDLE_FORMAT:
        raise InvalidValue(f"{path} is not a sharpzone catalogue bundle")
    version = header.get("format_version")
    if isinstance(version, bool) or not isinstance(version, int) or version > BUNDLE_FORMAT_VERSION:
        raise InvalidValue(
            f"bundle {path} has format version {version!r}; this program reads up to {BUNDLE_FORMAT_VERSION}"
        )


# ---- import -----------------------------------------------------------------------------


def import_catalog(session: Session, source: str | os.PathLike, *, replace: bool = False) -> ImportResult:
    """Add the rows of the bundle ``source`` to the catalogue (see the module docs for the
    matching rules); a refused import raises before the unit of work commits anything."""
    with _bundle_stream(Path(source)) as (form, tables):
        return import_tables(session, tables, replace=replace, form=form)


def import_tables(session: Session, tables: dict[str, Iterable[dict]] | Iterable[tuple[str, Iterable[dict]]], *,
                  replace: bool = False, form: str = "json") -> ImportResult:
    """Import bundle-form ``tables`` (a dict of table name to rows, or an iterator of
    ``(table, rows)``), in dependency order; ``form`` says how values are
    written (``"json"``: typed; ``"csv"``: text).

    Each row is checked with the catalogue's rules, then batches of rows are decided
    against the catalogue (and the rows before them) and written in bulk (``upsert_rows``)."""
    pairs = tables.items() if isinstance(tables, dict) else tables
    result = ImportResult()
    last = -1
    for table, records in pairs:
        if table not in _TABLE_NAMES:
            raise InvalidValue(f"bundle table {table!r} is not a catalogue table: expected {', '.join(sorted(_TABLE_NAMES))}")
        position = _TABLE_NAMES.index(table)
        if position <= last:
            raise InvalidValue(f"bundle table {table!r} comes after {_TABLE_NAMES[last]!r}: tables must come once "
                               f"each, in the order {', '.join(_TABLE_NAMES)}")
        last = position
        if not isinstance(records, Iterable) or isinstance(records, (str, bytes, dict)):
            raise InvalidValue(f"bundle table {table!r} must be a list of rows")
        _import_table(session, TABLES_IN_DEPENDENCY_ORDER[position], records, replace, form, result)
    for table in _TABLE_NAMES:
        for counts in (result.added, result.replaced, result.unchanged):
            counts.setdefault(table, 0)
    return result


def _import_table(session: Session, model, records: Iterable[dict], replace: bool, form: str, result: ImportResult) -> None:
    from sharpzone.catalog.upsert import upsert_rows

    table = model.__tablename__
    fields = bundle_fields(model)
    ids_by_name = {f.refers_to: _ids_by_name(session, f.refers_to) for f in fields if f.refers_to}
    natural_key = NATURAL_KEYS[model]
    added = replaced = unchanged = 0
    claims = _catalogue_claims(session, model)
    numbered = enumerate(records, start=1)
    while batch := list(islice(numbered, ROW_BATCH)):
        decoded = []
        for number, record in batch:
            where = f"bundle {table} row {number}"
            decoded.append(_decode_row(model, fields, ids_by_name, record, where, form))
            _claim(claims, model, decoded[-1], where)
        known_rows = _existing_rows(session, model, decoded)
        to_write: list[dict] = []
        inserted = 0
        for values in decoded:
            key = _key_of(model, values)
            existing = known_rows.get(key)
            if existing is None:
                to_write.append(values)
                inserted += 1
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
        if written.inserted != inserted:
            raise Conflict(f"another program changed {table} rows during the import; nothing was imported: run it again")
        added += inserted
    result.added[table], result.replaced[table], result.unchanged[table] = added, replaced, unchanged


def _claims_of(model, values: dict) -> list[tuple[str, object]]:
    """What a row claims that no other row of its table may (beyond the unique columns the
    database checks by name): a format's names and aliases ignoring case (the service's
    rule), a body's EXIF identity (make, model, serial)."""
    if model is SensorFormatRow:
        names = [values.get("name") or "", *(values.get("aliases") or "").split(";")]
        return [("the name", name.strip().lower()) for name in names if name.strip()]
    if model is Body:
        return [("the EXIF identity", (values.get("exif_make"), values.get("exif_model"), values.get("serial") or ""))]
    return []


def _catalogue_claims(session: Session, model) -> dict:
    """Claims of the rows already in the catalogue, each with the name of the row making it."""
    if model not in (SensorFormatRow, Body):
        return {}
    claims = {}
    for row in session.execute(select(model.__table__)).mappings():
        for claim in _claims_of(model, row):
            claims[claim] = row["name"]
    return claims


def _claim(claims: dict, model, values: dict, where: str) -> None:
    for claim in _claims_of(model, values):
        owner = claims.setdefault(claim, values.get("name"))
        if owner != values.get("name"):
            what, value = claim
            shown = " ".join(part for part in value if part) if isinstance(value, tuple) else value
            raise Conflict(f"{where}: {model.__tablename__} {values.get('name')!r} claims {what} {shown!r}, "
                           f"which {owner!r} already has")


def _decode_row(model, fields: list[BundleField], ids_by_name: dict, record, where: str, form: str) -> dict:
    if not isinstance(record, dict):
        raise InvalidValue(f"{where}: expected an object of fields, got {type(record).__name__}")
    extra = sorted(set(record) - {f.name for f in fields}, key=str)
    if extra:
        raise InvalidValue(f"{where}: unknown field {str(extra[0])[:80]!r}")
    values = {}
    for f in fields:
        if f.name not in record:
            if not f.nullable and model.__table__.columns[f.column].default is None:
                raise InvalidValue(f"{where}: field {f.name!r} is missing")
            continue
        value = _decode_value(record[f.name], f, where, form)
        if f.refers_to is not None and value is not None:
            if value not in ids_by_name[f.refers_to]:
                raise InvalidValue(f"{where}: {f.name} {value[:80]!r} is not in the bundle or the catalogue")
            value = ids_by_name[f.refers_to][value]
        values[f.column] = value
    try:
        return check_row(model.__tablename__, values)
    except InvalidValue as error:
        raise InvalidValue(f"{where}: {error.message}", hint=error.hint) from None


_INFINITIES = {"inf": math.inf, "-inf": -math.inf}


def _decode_value(raw, f: BundleField, where: str, form: str):
    """One bundle value as the column's Python value. JSON values must have their own
    type (a boolean is ``true``/``false``, never 1 or "yes"); CSV values are text."""
    if raw is None or (form == "csv" and raw == "" and (f.nullable or f.kind != "text")):
        if not f.nullable:
            raise InvalidValue(f"{where}: field {f.name!r} must have a value")
        return None
    shown = repr(raw) if not isinstance(raw, str) else repr(raw[:80]) + ("…" if len(raw) > 80 else "")
    invalid = InvalidValue(f"{where}: {f.name} {shown} is not a valid {f.kind}")
    if form == "csv" and not isinstance(raw, str):
        raise invalid
    if f.kind == "text":
        if not isinstance(raw, str):
            raise invalid
        limit = f.length or MAX_FIELD_BYTES
        if len(raw) > limit:
            raise InvalidValue(f"{where}: {f.name} {shown} is longer than {limit} characters")
        return raw
    if isinstance(raw, bool) and f.kind != "bool":
        raise invalid
    if f.kind == "float":
        if isinstance(raw, str):
            if raw.strip().lower() in _INFINITIES:
                return _INFINITIES[raw.strip().lower()]
            if form == "json":
                raise invalid
            try:
                number = float(raw)
            except ValueError:
                raise invalid from None
        elif isinstance(raw, (int, float)):
            number = float(raw)
        else:
            raise invalid
        if not math.isfinite(number):
            raise invalid  # NaN, or an overflow of a huge number; infinity is written "inf"
        return number
    if f.kind == "int":
        if isinstance(raw, str) and form == "csv" and re.fullmatch(r"\s*[+-]?\d{1,20}\s*", raw):
            number = int(raw)
        elif isinstance(raw, int) and form == "json":
            number = raw
        else:
            raise invalid
        low, high = BIG_INTEGER_RANGE if f.big else INTEGER_RANGE
        if not (low <= number <= high):
            raise InvalidValue(f"{where}: {f.name} {number} is out of range: expected {low} to {high}")
        return number
    if f.kind == "bool":
        if form == "json":
            if not isinstance(raw, bool):
                raise invalid
            return raw
        words = {"true": True, "false": False}
        if raw not in words:
            raise invalid
        return words[raw]
    if not isinstance(raw, str):
        raise invalid
    try:
        return dt.datetime.fromisoformat(raw)
    except ValueError:
        raise invalid from None


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


def _form_of(path: Path) -> str:
    suffix = path.suffix.lower()
    if suffix == ".json":
        return "json"
    if suffix == ".zip":
        return "csv"
    raise InvalidValue(f"bundle file {str(path)!r} must end in .json (one JSON file) or .zip (CSV files)")
