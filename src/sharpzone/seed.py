"""Loads the reference data shipped in ``seed_data/`` and validates it into core objects."""

from __future__ import annotations

import csv
import io
from dataclasses import dataclass
from functools import lru_cache
from importlib import resources

from sharpzone.errors import InvalidValue, NotFound
from sharpzone.optics.formats import SensorFormat
from sharpzone.optics.limits import DIAGONAL_DIVISOR


@dataclass(frozen=True)
class ShippedFormat:
    """A sensor format from ``sensor_formats.csv`` with the names it answers to and its source."""

    format: SensorFormat
    aliases: tuple[str, ...]
    description: str
    source: str


def parse_sensor_formats(text: str) -> list[ShippedFormat]:
    """Parse the sensor-format CSV text; a bad row raises ``InvalidValue`` naming the row."""
    rows = list(csv.DictReader(io.StringIO(text)))
    result: list[ShippedFormat] = []
    seen: set[str] = set()
    for number, row in enumerate(rows, start=2):
        try:
            fmt = SensorFormat(
                name=row["name"].strip(),
                width_mm=float(row["width_mm"]),
                height_mm=float(row["height_mm"]),
                coc_divisor=float(row.get("coc_divisor") or DIAGONAL_DIVISOR),
            )
        except (KeyError, TypeError, ValueError) as error:
            raise InvalidValue(f"sensor_formats.csv line {number}: {error}") from None
        if not (row.get("source") or "").strip():
            raise InvalidValue(f"sensor_formats.csv line {number}: {fmt.name!r} has no source")
        aliases = tuple(a.strip().lower() for a in (row.get("aliases") or "").split(";") if a.strip())
        for name in (fmt.name.lower(), *aliases):
            if name in seen:
                raise InvalidValue(f"sensor_formats.csv line {number}: name {name!r} is used twice")
            seen.add(name)
        result.append(ShippedFormat(fmt, aliases, (row.get("description") or "").strip(), row["source"].strip()))
    return result


@lru_cache(maxsize=1)
def shipped_formats() -> tuple[ShippedFormat, ...]:
    """The sensor formats that ship with sharpzone."""
    text = resources.files("sharpzone.seed_data").joinpath("sensor_formats.csv").read_text(encoding="utf-8")
    return tuple(parse_sensor_formats(text))


def find_shipped_format(name: str) -> SensorFormat:
    """The shipped format called ``name`` (or one of its aliases), case-insensitive."""
    wanted = name.strip().lower()
    for shipped in shipped_formats():
        if wanted == shipped.format.name.lower() or wanted in shipped.aliases:
            return shipped.format
    known = ", ".join(s.format.name for s in shipped_formats())
    raise NotFound(f"no sensor format {name!r}: expected one of {known}")
