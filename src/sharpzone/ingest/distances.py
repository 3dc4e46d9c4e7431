"""Focus distances the user gives in a CSV file, and the precedence of distance sources."""

from __future__ import annotations

import csv
import math
import os

from sharpzone.errors import InvalidValue
from sharpzone.ingest.records import FileReadError, os_error_reason, printable_path
from sharpzone.units import DISTANCE_HELP, parse_distance

_PATH_COLUMNS = ("path", "file")
_DISTANCE_COLUMN = "distance"

# Where a frame's focus distance came from, strongest first.


def read_user_distances(csv_path: str | os.PathLike) -> dict[str, float]:
    """Read ``path``/``file`` → ``distance`` rows into {key: focus distance in mm}.

    A key with a folder part becomes an absolute path (relative ones are taken from the
    CSV's folder); a bare file name stays a name and matches that name in any folder.
    Distances take units (``3m``, ``250cm``, ``10ft``, ``inf``); a bare number is metres.
    A bad row raises one ``InvalidValue`` naming the line and the value.
    """
    shown = printable_path(os.fspath(csv_path))
    try:
        with open(csv_path, newline="", encoding="utf-8-sig") as file:
            return _parse_rows(file, shown, os.path.dirname(os.path.abspath(csv_path)))
    except UnicodeDecodeError:
        raise InvalidValue(f"{shown}: not UTF-8 text; save the distances CSV as UTF-8") from None
    except OSError as err:
        raise FileReadError(os.fspath(csv_path), os_error_reason(err)) from None


def _parse_rows(file, shown: str, base_folder: str) -> dict[str, float]:
    sample = file.read(4096)
    file.seek(0)
    try:
        dialect = csv.Sniffer().sniff(sample, delimiters=",;\t")
    except csv.Error:
        dialect = csv.excel
    reader = csv.reader(file, dialect)
    header = next(reader, None)
    if header is None:
        raise InvalidValue(f"{shown}: empty file; expected a header with 'path' (or 'file') and 'distance'")
    names = [name.strip().lower() for name in header]
    path_column = next((names.index(name) for name in _PATH_COLUMNS if name in names), None)
    if path_column is None or _DISTANCE_COLUMN not in names:
        raise InvalidValue(
            f"{shown}, line 1: columns {', '.join(map(repr, header))}; expected 'path' (or 'file') and 'distance'"
        )
    distance_column = names.index(_DISTANCE_COLUMN)
    distances: dict[str, float] = {}
    first_line: dict[str, int] = {}
    for row in reader:
        line = reader.line_num
        if not any(cell.strip() for cell in row):
            continue
        if len(row) <= max(path_column, distance_column):
            raise InvalidValue(f"{shown}, line {line}: {len(row)} columns, expected at least {len(names)}")
        key = _key(row[path_column].strip(), base_folder)
        if not key:
            raise InvalidValue(f"{shown}, line {line}: the {names[path_column]} is empty")
        text = row[distance_column]
        try:
            distance_mm = parse_distance(text)
        except InvalidValue:
            raise InvalidValue(f"{shown}, line {line}: distance {text!r} is not a distance: expected {DISTANCE_HELP}") from None
        if distance_mm == 0:
            raise InvalidValue(f"{shown}, line {line}: distance {text!r} must be greater than zero")
        if key in distances and distances[key] != distance_mm:
            raise InvalidValue(
                f"{shown}, line {line}: {printable_path(key)} already has distance on line {first_line[key]}"
            )
        distances[key] = distance_mm
        first_line.setdefault(key, line)
    return distances


def _key(text: str, base_folder: str) -> str:
    if not text or os.sep not in text and (os.altsep is None or os.altsep not in text):
        return text
    return os.path.normpath(os.path.join(base_folder, os.path.expanduser(text)))


def lookup_user_distance(distances: dict[str, float], image_path: str) -> float | None:
    """The user's distance for an image: by its absolute path first, then by its file name."""
    absolute = os.path.normpath(os.path.abspath(image_path))
    if absolute in distances:
        return distances[absolute]
    return distances.get(os.path.basename(absolute))


def choose_focus_distance(
    user_mm: float | None, exif_mm: float | None, xmp_mm: float | None
) -> tuple[float | None, str]:
    """(focus distance in mm, source): the user's value, else EXIF, else the XMP sidecar, else none."""
    for source, value in zip(("user", "exif", "xmp"), (user_mm, exif_mm, xmp_mm)):
        if value is not None and not (isinstance(value, float) and math.isnan(value)):
            return value, source
    return None, "none"
