"""The primary reader: libexiv2 0.28 through the ``exiv2`` bindings (0.19).

It decodes the maker notes of every major maker (decrypting the encrypted lens-data
blocks), opens every raw container and ISO BMFF (HEIF, AVIF, CR3), and prints calibrated
values (lens names for lens ids). Rules kept here, learned the hard way:

* only explicit key look-ups (``ExifData.findKey(ExifKey(...))``): the bindings' convenience
  functions (``exiv2.subjectDistance()``, ``exiv2.lensName()`` ...) crash the interpreter on
  files where the key is absent;
* read-only: ``readMetadata`` only, never ``writeMetadata``;
* libexiv2's log is muted (``silence_exiv2``); its exceptions become ``FileReadError``;
* libexiv2 silently drops a directory it finds too large and reads the rest, so a crafted
  file would pass as a frame without metadata: the shared directory check of
  ``containers`` runs first, and its damage verdict is final.
"""

from __future__ import annotations

import contextlib
import math
import os

from sharpzone.ingest import fields, formats
from sharpzone.ingest.exiv2_quiet import silence_exiv2
from sharpzone.ingest.readers import Tags, TagValue
from sharpzone.ingest.readers.containers import directory_damage
from sharpzone.ingest.records import FileReadError, os_error_reason

# libexiv2 TypeId values (TIFF 6.0 field types plus its own string types).
_ASCII, _UNDEFINED = 2, 7
_UNSIGNED_RATIONAL, _SIGNED_RATIONAL = 5, 10
_FLOATS = (11, 12)
_TEXT_TYPES = frozenset({_ASCII, 0x10000, 0x10001, 0x10002, 0x10003})
# BYTE, SHORT, LONG, SBYTE, SSHORT, SLONG, IFD: whole numbers.
_WHOLE_TYPES = frozenset({1, 3, 4, 6, 8, 9, 13})
# A tag we look up never holds more values than this; more is damage, not information.
_MAX_VALUES = 64
_MAX_TEXT_BYTES = 1024
# Its text decides which maker-note keys a file can hold (``fields.keys_for_make``).
_MAKE_KEY = "Exif.Image.Make"
_UNSEEN = object()  # no Make entry met yet in the pass
from sharpzone.vocabulary import SUBJECT_DISTANCE_INFINITY as _INFINITE_NUMERATOR  # noqa: E402
# Containers whose main image is not the sensor data (libexiv2 MIME types).
_NOT_RAW_TYPES = frozenset({"image/jpeg", "image/png", "image/webp", "image/tiff", "image/heic", "image/heif",
                            "image/avif", "image/jxl"})
_BMFF_TYPES = frozenset({"image/heic", "image/heif", "image/avif", "image/x-canon-cr3", "video/quicktime"})

_keys = None
# Distinct (Make, raw?) pairs whose key lists are kept; a card holds few.
_MAX_CACHED_MAKES = 64


class Exiv2Reader:
    """Every tag the field table names, standard and maker-note, through libexiv2."""

    name = "exiv2"
    kinds = frozenset({formats.JPEG, formats.TIFF, formats.PNG, formats.HEIF, formats.WEBP, formats.BMFF_RAW,
                       formats.MRW, formats.CIFF, formats.RAF})

    def read(self, path: str, *, checked: bool = False, metadata: bytes | None = None) -> Tags:
        """``checked``: the shared directory check already ran on this file (``read_tags``
        runs it once, on the open it sniffs the kind with); ``metadata``: a checked JPEG's
        bytes up to its image data, which libexiv2 then reads from memory (everything it
        decodes of a JPEG lies there; the file would be opened three times more)."""
        import exiv2

        silence_exiv2()
        if not checked:
            _check_budget(path)
        try:
            if checked and metadata is not None:
                image = exiv2.ImageFactory.open(metadata)
                image.readMetadata()
            else:
                with _openable_name(path) as name:
                    image = exiv2.ImageFactory.open(name)
                    image.readMetadata()
            data = image.exifData()
            mime = image.mimeType()
            is_raw = mime not in _NOT_RAW_TYPES or formats.is_raw_name(path)
            tags = _tags(data, is_raw)
            width, height = image.pixelWidth(), image.pixelHeight()
        except exiv2.Exiv2Error as err:
            raise FileReadError(path, f"the metadata reader refused the file ({_error_name(err)})") from None
        except FileReadError:
            raise
        except Exception as err:  # noqa: BLE001 - the boundary: the fallback reader gets its turn
            raise FileReadError(path, f"the metadata reader failed ({type(err).__name__})") from None
        # For ISO BMFF libexiv2 falls back to the EXIF pixel dimensions when the file has no
        # image-size property, so there the size would only echo EXIF: left out.
        if width > 0 and height > 0 and mime not in _BMFF_TYPES:
            tags[fields.CONTAINER_WIDTH] = int(width)
            tags[fields.CONTAINER_HEIGHT] = int(height)
        tags[fields.CONTAINER_IS_RAW] = is_raw
        return tags


@contextlib.contextmanager
def _openable_name(path: str):
    """A name libexiv2 can open: it takes a UTF-8 string, so a file name with undecodable
    bytes is opened through its descriptor's name in /proc (Linux); elsewhere it is refused
    (and read by the fallback reader)."""
    try:
        path.encode("utf-8")
    except UnicodeEncodeError:
        if not os.path.isdir("/proc/self/fd"):
            raise FileReadError(path, "the metadata reader cannot open this file name") from None
        try:
            descriptor = os.open(path, os.O_RDONLY)
        except OSError as err:
            raise FileReadError(path, os_error_reason(err)) from None
        try:
            yield f"/proc/self/fd/{descriptor}"
        finally:
            os.close(descriptor)
        return
    yield path


def _check_budget(path: str) -> None:
    """Run the shared directory check (the work budget) on the file's EXIF block, if we can
    walk its container; a damaged verdict is final, other walking trouble is left to libexiv2."""
    try:
        with open(path, "rb") as file:
            damage = directory_damage(file)
    except OSError as err:
        raise FileReadError(path, os_error_reason(err)) from None
    if damage is not None:
        raise FileReadError(path, damage)


def _wanted_names(make: str | None, is_raw: bool) -> frozenset[str]:
    """The keys the field table reads from a file of this Make, built once per Make."""
    global _keys
    if _keys is None:
        _keys = {"": tuple(fields.wanted_keys())}
    cache_key = (make, is_raw)
    if cache_key not in _keys:
        if len(_keys) > _MAX_CACHED_MAKES:
            _keys = {"": _keys[""]}
        _keys[cache_key] = frozenset(fields.keys_for_make(_keys[""], make, is_raw))
    return _keys[cache_key]


def _tags(data, is_raw: bool) -> Tags:
    # One pass over the decoded entries, keeping the wanted ones: a file holds a few dozen
    # entries, and one pass costs about a fortieth of looking up each wanted key by name.
    # Every Make's keys are kept on the way and those of other Makes' maker notes dropped
    # after: the Make is learned in the same pass (a look-up of it first cost two more
    # calls into the bindings a file).
    tags: Tags = {}
    wanted = _wanted_names(None, is_raw)
    make = _UNSEEN
    type_ids = _type_table()
    printed_keys = fields.PRINTED_KEYS
    for datum in data:
        name = datum.key()
        if name not in wanted or name in tags:  # the first of a repeated key, as a look-up gives
            continue
        if make is _UNSEEN and name == _MAKE_KEY:
            make = datum.toString()[:_MAX_TEXT_BYTES]
        # The common shapes (text, one whole number, one rational) inline, as _plain_value
        # reads them; a tag is read this way a few dozen times a frame.
        type_id = type_ids.get(datum.typeName())
        if type_id in _TEXT_TYPES:
            value = datum.toString()[:_MAX_TEXT_BYTES].strip("\x00 \t\r\n") or None
        elif type_id in _WHOLE_TYPES and datum.count() == 1:
            value = int(datum.toInt64(0))
        elif type_id == _UNSIGNED_RATIONAL and datum.count() == 1:
            value = _rational(*datum.toRational(0), _UNSIGNED_RATIONAL)
        else:
            value = _plain_value(datum, type_ids)
        if value is None:
            continue
        tags[name] = value
        if name in printed_keys:
            printed = datum.print(data)
            if printed:
                tags[name + fields.PRINTED] = printed[:_MAX_TEXT_BYTES].strip()
    for_make = _wanted_names(None if make is _UNSEEN else make, is_raw)
    if len(for_make) < len(wanted):
        tags = {name: value for name, value in tags.items() if name.removesuffix(fields.PRINTED) in for_make}
    return tags


_type_ids: dict[str, int] | None = None


def _type_table() -> dict[str, int]:
    """TypeId numbers by type name: the bindings turn ``typeId()`` into a Python enum
    member, which costs three times asking for the name."""
    global _type_ids
    if _type_ids is None:
        import exiv2

        _type_ids = {exiv2.TypeInfo.typeName(member): int(member) for member in exiv2.TypeId}
        _type_ids.pop(None, None)  # types without a name are asked for their number
    return _type_ids


def _plain_value(datum, type_ids: dict[str, int]) -> TagValue:
    type_id = type_ids.get(datum.typeName())
    if type_id is None:
        type_id = int(datum.typeId())
    if type_id in _TEXT_TYPES:
        text = datum.toString()[:_MAX_TEXT_BYTES].strip("\x00 \t\r\n")
        return text or None
    count = datum.count()
    if count == 0 or count > _MAX_VALUES:
        return None
    if type_id == _UNDEFINED:
        return bytes(datum.getValue().data())
    if type_id == _UNSIGNED_RATIONAL or type_id == _SIGNED_RATIONAL:
        values = [_rational(*datum.toRational(index), type_id) for index in range(count)]
    elif type_id in _FLOATS:
        values = [float(datum.toFloat(index)) for index in range(count)]
    elif count == 1:  # the common case: one whole number
        return int(datum.toInt64(0))
    else:
        values = [int(datum.toInt64(index)) for index in range(count)]
    return values[0] if count == 1 else tuple(values)


def _rational(numerator: int, denominator: int, type_id: int) -> float | None:
    """A rational as the package's value conventions say: 0/0 (any x/0) is unknown, an
    unsigned numerator of 0xFFFFFFFF is infinity."""
    if type_id == _UNSIGNED_RATIONAL:
        numerator, denominator = numerator % (1 << 32), denominator % (1 << 32)
        if numerator == _INFINITE_NUMERATOR:
            return math.inf
    return numerator / denominator if denominator else None


def _error_name(err) -> str:
    code = err.args[0] if err.args else None
    name = getattr(code, "name", None) or type(err).__name__
    return name.removeprefix("ker")
