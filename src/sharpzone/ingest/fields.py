"""The field table: every capture-record field, where each reader finds it, how it converts.

A reader (see ``sharpzone.ingest.readers``) gives tags keyed ``"Group.Name"`` in libexiv2's
naming (``"Exif.Photo.FNumber"``, ``"Exif.CanonFi.FocusDistanceUpper"``); exifread's names are
mapped onto the same keys through ``STANDARD_TAGS``, so a reader is a column of this table
and the normaliser never forks by reader. Each ``Field`` lists its standard EXIF keys (first
present wins), then its maker-note keys in order of preference, and its converter.

Focus distances have their own table, ``DISTANCE_KEYS``: each key's unit, its "unknown" and
"infinity" codes and its precision (what bracket of distances the recorded value can mean).
Units and codes were checked against libexiv2 0.28's own printed (calibrated) values on files
it wrote itself (tests/ingest/test_makernotes.py), and against CIPA DC-008 for EXIF.
"""

from __future__ import annotations

import math
import re
from collections.abc import Callable
from dataclasses import dataclass
from datetime import datetime, timedelta

# ---------------------------------------------------------------------------------------
# Standard tags (CIPA DC-008 / EXIF 2.3 tag numbers) and their keys. The exifread reader
# names a tag by (its IFD, its number) through this list; libexiv2 uses the same names.
# ---------------------------------------------------------------------------------------

IFD_GROUPS = {"Image": "Exif.Image", "EXIF": "Exif.Photo", "GPS": "Exif.GPSInfo"}

STANDARD_TAGS: dict[tuple[str, int], str] = {
    ("Image", 0x010F): "Exif.Image.Make",
    ("Image", 0x0110): "Exif.Image.Model",
    ("Image", 0x0100): "Exif.Image.ImageWidth",
    ("Image", 0x0101): "Exif.Image.ImageLength",
    ("Image", 0x00FE): "Exif.Image.NewSubfileType",
    ("EXIF", 0x829A): "Exif.Photo.ExposureTime",
    ("EXIF", 0x829D): "Exif.Photo.FNumber",
    ("EXIF", 0x8827): "Exif.Photo.ISOSpeedRatings",
    ("EXIF", 0x8832): "Exif.Photo.RecommendedExposureIndex",
    ("EXIF", 0x8831): "Exif.Photo.StandardOutputSensitivity",
    ("EXIF", 0x9003): "Exif.Photo.DateTimeOriginal",
    ("EXIF", 0x9011): "Exif.Photo.OffsetTimeOriginal",
    ("EXIF", 0x9202): "Exif.Photo.ApertureValue",
    ("EXIF", 0x9206): "Exif.Photo.SubjectDistance",
    ("EXIF", 0x920A): "Exif.Photo.FocalLength",
    ("EXIF", 0x9214): "Exif.Photo.SubjectArea",
    ("EXIF", 0x9291): "Exif.Photo.SubSecTimeOriginal",
    ("EXIF", 0xA002): "Exif.Photo.PixelXDimension",
    ("EXIF", 0xA003): "Exif.Photo.PixelYDimension",
    ("EXIF", 0xA20E): "Exif.Photo.FocalPlaneXResolution",
    ("EXIF", 0xA20F): "Exif.Photo.FocalPlaneYResolution",
    ("EXIF", 0xA210): "Exif.Photo.FocalPlaneResolutionUnit",
    ("EXIF", 0xA214): "Exif.Photo.SubjectLocation",
    ("EXIF", 0xA405): "Exif.Photo.FocalLengthIn35mmFilm",
    ("EXIF", 0xA40C): "Exif.Photo.SubjectDistanceRange",
    ("EXIF", 0xA431): "Exif.Photo.BodySerialNumber",
    ("EXIF", 0xA432): "Exif.Photo.LensSpecification",
    ("EXIF", 0xA433): "Exif.Photo.LensMake",
    ("EXIF", 0xA434): "Exif.Photo.LensModel",
    ("EXIF", 0xA435): "Exif.Photo.LensSerialNumber",
}

# Keys a reader adds about the container itself, not from a tag: the pixel size of the main
# image as the container's own image header gives it (libexiv2 ``Image.pixelWidth()``).
CONTAINER_WIDTH = "Container.PixelWidth"
CONTAINER_HEIGHT = "Container.PixelHeight"
CONTAINER_IS_RAW = "Container.IsRaw"
# Suffix of a key that holds libexiv2's printed (interpreted) value of that tag, e.g. the
# lens name it looks up for a maker-note lens id.
PRINTED = ":printed"

# Raw files keep their full sensor image in one of these directories (TIFF/EP and DNG
# SubIFDs); a NewSubfileType of 0 marks the primary, full-resolution image.
_IMAGE_DIRECTORIES = ("Exif.Image",) + tuple(f"Exif.SubImage{n}" for n in range(1, 10))


# ---------------------------------------------------------------------------------------
# Focus distance keys: ONE table of units, codes and precision.
# ---------------------------------------------------------------------------------------

EXACT = "exact"          # the value is the distance as written
BRACKET = "bracket"      # a lower/upper pair of keys: the bracket itself
STEP = "step"            # a logarithmic step code: ± half a step
RESOLUTION = "resolution"  # a value rounded to its unit: ± half the unit


@dataclass(frozen=True)
class DistanceKey:
    """One key that records a focus distance.

    ``mm_per_unit`` converts the stored number to millimetres (``None`` for a step code);
    ``unknown`` and ``infinity`` are the stored codes with those meanings (after the reader's
    conventions: an unsigned rational with numerator 0xFFFFFFFF already arrives as ``inf``);
    ``pair`` is the key of the other end of a bracket; ``source`` the ``FOCUS_SOURCES`` word.
    """

    key: str
    precision: str
    mm_per_unit: float | None
    unknown: tuple = (0,)
    infinity: tuple = ()
    pair: str | None = None
    source: str = "makernote"
    note: str = ""


# Nikon lens-data step code: distance = 0.01 m × 10^(code / 40) (libexiv2 0.28 prints code 80
# as "1.00 m" and 120 as "10.00 m"); one step is a factor 10^(1/40), ± half a step 10^(1/80).
NIKON_STEP_BASE_MM = 10.0
NIKON_STEPS_PER_DECADE = 40.0

DISTANCE_KEYS: tuple[DistanceKey, ...] = (
    DistanceKey("Exif.Photo.SubjectDistance", EXACT, 1000.0, unknown=(0,), infinity=(math.inf,), source="exif",
                note="metres, rational; 0 = unknown, numerator 0xFFFFFFFF = infinity (CIPA DC-008)"),
    DistanceKey("Exif.CanonFi.FocusDistanceLower", BRACKET, 10.0, unknown=(0,), infinity=(-1, 65535),
                pair="Exif.CanonFi.FocusDistanceUpper",
                note="centimetres, 16-bit; the nearest and farthest end of the focus the lens reports;"
                     " upper 0xFFFF (-1 signed) = infinity, 0 = unknown"),
    DistanceKey("Exif.NikonLd4.FocusDistance", STEP, None, unknown=(0,),
                note="step code, lens data 0800+: 0.01 m × 10^(code/40); 0 = unknown"),
    DistanceKey("Exif.NikonLd3.FocusDistance", STEP, None, unknown=(0,),
                note="step code, lens data 0204 (encrypted; libexiv2 decrypts)"),
    DistanceKey("Exif.NikonLd2.FocusDistance", STEP, None, unknown=(0,),
                note="step code, lens data 0101 and 0201-0203 (the latter encrypted; libexiv2 decrypts)"),
    DistanceKey("Exif.OlympusFi.FocusDistance", RESOLUTION, 1000.0, unknown=(0,), infinity=(math.inf,),
                note="read from libexiv2's printed metres (it takes the numerator as mm, to 0.01 m);"
                     " numerator 0xFFFFFFFF = infinity, 0 = unknown"),
    DistanceKey("Exif.Nikon3.FocusDistance", EXACT, 1000.0, unknown=(0,), infinity=(math.inf,),
                note="metres, rational (compact cameras); 0 = unknown"),
    DistanceKey("Exif.CanonSi.SubjectDistance", RESOLUTION, 10.0, unknown=(0,),
                note="centimetres (compact cameras; libexiv2 prints value / 100 m); 0 = unknown"),
    DistanceKey("Exif.Casio.ObjectDistance", RESOLUTION, 1.0, unknown=(0,),
                note="millimetres; 0 = unknown"),
    DistanceKey("Exif.Casio2.ObjectDistance", RESOLUTION, 1.0, unknown=(0,),
                note="millimetres; 0 = unknown"),
)

# Keys that are read through libexiv2's printed value, not the stored number.
PRINTED_DISTANCE_KEYS = frozenset({"Exif.OlympusFi.FocusDistance"})
_PRINTED_METRES = re.compile(r"^\s*(\d+(?:\.\d+)?)\s*m\s*$")


@dataclass(frozen=True)
class FocusDistance:
    """A focus distance in mm from the sensor, with its bracket and the key it came from."""

    nominal_mm: float
    near_mm: float
    far_mm: float
    key: str
    source: str


def step_code_distance_mm(code: float) -> tuple[float, float, float]:
    """Nominal, near and far distance (mm) of a Nikon lens-data step code (see the table)."""
    nominal = NIKON_STEP_BASE_MM * 10 ** (code / NIKON_STEPS_PER_DECADE)
    half_step = 10 ** (0.5 / NIKON_STEPS_PER_DECADE)
    return nominal, nominal / half_step, nominal * half_step


def printed_metres_mm(text) -> float | None:
    """Millimetres from a libexiv2 printed distance ("2.50 m", "Infinity"), ``None`` if not one."""
    if not isinstance(text, str):
        return None
    if text.strip().lower() in ("infinity", "infinite", "inf"):
        return math.inf
    match = _PRINTED_METRES.match(text)
    return float(match.group(1)) * 1000.0 if match else None


def focus_distance(tags: dict, warnings: list[str], min_mm: float) -> FocusDistance | None:
    """The first usable distance in ``DISTANCE_KEYS`` order, or ``None``."""
    for entry in DISTANCE_KEYS:
        if entry.key in PRINTED_DISTANCE_KEYS:
            raw = tags.get(entry.key)
            if raw is None:
                continue
            value = printed_metres_mm(tags.get(entry.key + PRINTED))
            if value is None or raw in entry.unknown:
                continue
            found = _from_mm(value, 5.0, entry)  # printed to 0.01 m: ± 5 mm
        else:
            value = _number_or_inf(tags.get(entry.key))
            if value is None:
                if entry.key in tags and not _is_blank(tags.get(entry.key)):
                    warnings.append(f"{_distance_label(entry)} {tags[entry.key]!r} ignored: not a number")
                continue
            if value in entry.unknown:
                continue
            found = _convert_distance(entry, value, tags)
        if found is None:
            continue
        if found.nominal_mm < min_mm:
            shown = tags.get(entry.key)
            shown = f"{shown:g} m" if entry.source == "exif" and isinstance(shown, float) else repr(shown)
            warnings.append(f"{_distance_label(entry)} {shown} ignored: expected at least {min_mm:g} mm")
            continue
        return found
    return None


def _distance_label(entry: DistanceKey) -> str:
    return "subject distance" if entry.source == "exif" else f"focus distance {entry.key}"


def _convert_distance(entry: DistanceKey, value: float, tags: dict) -> FocusDistance | None:
    if value in entry.infinity or value == math.inf:
        return FocusDistance(math.inf, math.inf, math.inf, entry.key, entry.source)
    if entry.precision == STEP:
        nominal, near, far = step_code_distance_mm(value)
        return FocusDistance(nominal, near, far, entry.key, entry.source)
    if entry.precision == BRACKET:
        lower_mm = value * entry.mm_per_unit
        upper = _number_or_inf(tags.get(entry.pair))
        if upper is None or upper == 0:
            return FocusDistance(lower_mm, lower_mm, lower_mm, entry.key, entry.source)
        if upper in entry.infinity or upper == math.inf:
            # The focus reaches infinity: the far end is infinite, the nominal the lower end.
            return FocusDistance(lower_mm, lower_mm, math.inf, entry.key, entry.source)
        upper_mm = upper * entry.mm_per_unit
        near, far = min(lower_mm, upper_mm), max(lower_mm, upper_mm)
        # The middle of the bracket in dioptres (focus travel is close to linear in 1/d).
        nominal = 2.0 / (1.0 / near + 1.0 / far) if near > 0 else far
        return FocusDistance(nominal, near, far, entry.key, entry.source)
    mm = value * entry.mm_per_unit
    half = entry.mm_per_unit / 2 if entry.precision == RESOLUTION else 0.0
    return _from_mm(mm, half, entry)


def _from_mm(mm: float, half_mm: float, entry: DistanceKey) -> FocusDistance:
    if mm == math.inf:
        return FocusDistance(math.inf, math.inf, math.inf, entry.key, entry.source)
    return FocusDistance(mm, max(mm - half_mm, 0.0), mm + half_mm, entry.key, entry.source)


def _number_or_inf(value) -> float | None:
    if value == "inf":
        return math.inf
    if isinstance(value, float) and math.isinf(value) and value > 0:
        return math.inf
    return number(value)


def _is_blank(value) -> bool:
    return value is None or (isinstance(value, str) and not value.strip())


# ---------------------------------------------------------------------------------------
# Lens names from maker-note lens ids (libexiv2's printed value), in order of preference.
# ---------------------------------------------------------------------------------------

LENS_NAME_KEYS = (
    "Exif.Canon.LensModel",
    "Exif.OlympusEq.LensModel",
    "Exif.Panasonic.LensType",
    "Exif.CanonCs.LensType" + PRINTED,
    "Exif.NikonLd4.LensIDNumber" + PRINTED,
    "Exif.NikonLd3.LensIDNumber" + PRINTED,
    "Exif.NikonLd2.LensIDNumber" + PRINTED,
    "Exif.NikonLd1.LensIDNumber" + PRINTED,
    "Exif.Sony2.LensID" + PRINTED,
    "Exif.Sony1.LensID" + PRINTED,
    "Exif.Pentax.LensType" + PRINTED,
    "Exif.PentaxDng.LensType" + PRINTED,
    "Exif.OlympusEq.LensType" + PRINTED,
    "Exif.Minolta.LensID" + PRINTED,
    "Exif.Samsung2.LensType" + PRINTED,
)
# libexiv2 prints an id it does not know as "(123)", "Unknown Lens (123)", "n/a", "None"...
_UNKNOWN_LENS = re.compile(r"^\(?-?\d+\)?$|unknown|^n/?a$|^none$|^----", re.IGNORECASE)


def lens_names(tags: dict) -> tuple[str, ...]:
    """The lens names the maker note's lens id may mean, best first ("A or B" → (A, B))."""
    for key in LENS_NAME_KEYS:
        value = tags.get(key)
        if value is None:  # the usual case: a file has one of these keys at most
            continue
        text = text_value(value)
        if text is None or _UNKNOWN_LENS.search(text):
            continue
        names = tuple(name.strip() for name in text.split(" or ") if name.strip())
        if names:
            return names
    return ()


_LENS_FOCAL = re.compile(r"(?<![\d.])(\d+(?:\.\d+)?)(?:\s*-\s*(\d+(?:\.\d+)?))?\s*mm", re.IGNORECASE)
_LENS_APERTURE = re.compile(r"(?:\bf\s*/?\s*|\b1\s*:\s*)(\d+(?:\.\d+)?)(?:\s*-\s*(\d+(?:\.\d+)?))?", re.IGNORECASE)


def lens_spec_from_name(name: str | None) -> tuple[float | None, float | None, float | None, float | None] | None:
    """(min focal mm, max focal mm, f-number at min focal, at max focal) from a lens name.

    "18-55mm F3.5-5.6" → (18, 55, 3.5, 5.6); "50mm f/1.8" → (50, 50, 1.8, 1.8); "1:2.8"
    also names an aperture. ``None`` when the name gives no focal length. Pure.
    """
    if not name:
        return None
    focal = _LENS_FOCAL.search(name)
    if focal is None:
        return None
    short = float(focal.group(1))
    long = float(focal.group(2)) if focal.group(2) else short
    if short <= 0 or long < short:
        return None
    aperture = _LENS_APERTURE.search(name[focal.end():]) or _LENS_APERTURE.search(name)
    wide = tele = None
    if aperture is not None:
        wide = float(aperture.group(1))
        tele = float(aperture.group(2)) if aperture.group(2) else wide
        if wide <= 0 or tele < wide:
            wide = tele = None
    return (short, long, wide, tele)


# ---------------------------------------------------------------------------------------
# Plain value helpers shared by the converters.
# ---------------------------------------------------------------------------------------

def number(value) -> float | None:
    """A finite float from a tag value (first of a tuple), or ``None``."""
    kind = type(value)  # the two common cases first: this runs dozens of times a frame
    if kind is float:
        return value if math.isfinite(value) else None
    if kind is int:
        return float(value)
    if isinstance(value, tuple):
        value = value[0] if value else None
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        return None
    result = float(value)
    return result if math.isfinite(result) else None


def as_int(value) -> int | None:
    result = number(value)
    return int(result) if result is not None and result == int(result) else None


def text_value(value) -> str | None:
    if type(value) is str:
        return value.strip("\x00 \t\r\n") or None
    if isinstance(value, bytes):
        value = value.decode("utf-8", "replace")
    if not isinstance(value, str):
        return None
    text = value.strip("\x00 \t\r\n")
    return text or None


def sensor_pixels(tags: dict) -> tuple[int | None, int | None]:
    """The sensor's own pixel size, never a preview's or a downsized copy's.

    The rule: in a raw file, the largest directory marked as the primary image
    (NewSubfileType 0, TIFF 6.0 / DNG) among IFD0 and its SubIFDs, which is where raw
    containers keep the sensor data; in any other file, PixelX/YDimension only when they
    equal the container's own image size (so they describe this image, not a copy's
    source or a thumbnail) and the long side is at least ``_MIN_ORIGINAL_LONG_SIDE_PX``
    (smaller is a preview or a copy for the web, common practice); else unknown.
    """
    if tags.get(CONTAINER_IS_RAW):
        best = None
        for group in _IMAGE_DIRECTORIES:
            if as_int(tags.get(f"{group}.NewSubfileType")) not in (0, None):
                continue
            width, height = as_int(tags.get(f"{group}.ImageWidth")), as_int(tags.get(f"{group}.ImageLength"))
            if width and height and width > 0 and height > 0 and (best is None or width * height > best[0] * best[1]):
                best = (width, height)
        return best if best else (None, None)
    width, height = as_int(tags.get("Exif.Photo.PixelXDimension")), as_int(tags.get("Exif.Photo.PixelYDimension"))
    own_width, own_height = as_int(tags.get(CONTAINER_WIDTH)), as_int(tags.get(CONTAINER_HEIGHT))
    if not (width and height and width > 0 and height > 0) or (width, height) != (own_width, own_height):
        return None, None
    if max(width, height) < _MIN_ORIGINAL_LONG_SIDE_PX:
        return None, None
    return width, height


_MIN_ORIGINAL_LONG_SIDE_PX = 1024

# Maker-note keys that record the sensor's pixel pitch (width, height of one pixel), in µm:
# libexiv2 0.28 prints Exif.Nikon3.SensorPixelSize 84/10 84/10 as "8.4 x 8.4 um".
PIXEL_PITCH_KEYS = ("Exif.Nikon3.SensorPixelSize",)


def sensor_size_mm(tags: dict, width_px: int | None, height_px: int | None) -> tuple[float | None, float | None]:
    """The sensor's size in mm from a maker note's pixel pitch and the sensor's own pixels."""
    if not width_px or not height_px:
        return None, None
    for key in PIXEL_PITCH_KEYS:
        value = tags.get(key)
        pitch = value if isinstance(value, tuple) else (value, value)
        if len(pitch) != 2:
            continue
        pitch_x, pitch_y = number(pitch[0]), number(pitch[1])
        if pitch_x and pitch_y and pitch_x > 0 and pitch_y > 0:
            return width_px * pitch_x / 1000.0, height_px * pitch_y / 1000.0
    return None, None


# Maker-note AF areas libexiv2 0.28 decodes: the centre, width and height of the area that
# focused, in pixels of an image of the size the same block gives (AFImageWidth/Height).
AF_AREA_GROUPS = ("Exif.NikonAf2", "Exif.NikonAf22")
_AF_AREA_NAMES = ("AFImageWidth", "AFImageHeight", "AFAreaXPosition", "AFAreaYPosition", "AFAreaWidth",
                  "AFAreaHeight")
_AF_AREA_KEYS_BY_GROUP = {group: tuple(f"{group}.{name}" for name in _AF_AREA_NAMES) for group in AF_AREA_GROUPS}
AF_AREA_KEYS = tuple(key for keys in _AF_AREA_KEYS_BY_GROUP.values() for key in keys)


def focus_point(tags: dict, width_px: int | None, height_px: int | None):
    """(cx, cy, w, h) in fractions of the image, and the key it came from, or (None, None).

    First EXIF: CIPA DC-008 0x9214 SubjectArea: 2 values = a point, 3 = a circle (centre,
    diameter), 4 = a rectangle (centre, width, height); 0xA214 SubjectLocation: a point; all
    in pixels of the main image, from its top left. Then a maker note's AF area.
    """
    if width_px and height_px:
        for key in ("Exif.Photo.SubjectArea", "Exif.Photo.SubjectLocation"):
            area = _subject_area(tags.get(key), key.endswith("SubjectLocation"))
            if area is None or area[0] > width_px or area[1] > height_px:
                continue
            return (area[0] / width_px, area[1] / height_px, min(area[2] / width_px, 1.0),
                    min(area[3] / height_px, 1.0)), key
    for group, keys in _AF_AREA_KEYS_BY_GROUP.items():
        if keys[0] not in tags:  # no such block in this file (the usual case)
            continue
        frame_w, frame_h, x, y, w, h = (number(tags.get(key)) for key in keys)
        if not (frame_w and frame_h and x and y) or x > frame_w or y > frame_h:
            continue  # 0 = no area recorded (e.g. phase-detect frames)
        w, h = w or 0.0, h or 0.0
        return (x / frame_w, y / frame_h, min(w / frame_w, 1.0), min(h / frame_h, 1.0)), f"{group}.AFAreaXPosition"
    return None, None


def _subject_area(value, is_location: bool) -> tuple[float, float, float, float] | None:
    values = value if isinstance(value, tuple) else (value,)
    numbers = [number(item) for item in values]
    if not numbers or any(item is None or item < 0 for item in numbers):
        return None
    if len(numbers) == 2 or (is_location and len(numbers) >= 2):
        return (numbers[0], numbers[1], 0.0, 0.0)
    if len(numbers) == 3:
        return (numbers[0], numbers[1], numbers[2], numbers[2])
    if len(numbers) == 4:
        return tuple(numbers)
    return None


# ---------------------------------------------------------------------------------------
# The record's fields: standard keys, maker-note keys, converter.
# ---------------------------------------------------------------------------------------

Converter = Callable[[object, str, dict, list], object]


@dataclass(frozen=True)
class Field:
    """One capture-record field: where it comes from and how its value converts.

    ``convert(value, key, tags, warnings)`` turns the first present key's value into the
    record's value (``None`` to drop it, with a warning when that is worth saying).
    """

    name: str
    standard: tuple[str, ...]
    makernote: tuple[str, ...] = ()
    convert: Converter | None = None

    @property
    def keys(self) -> tuple[str, ...]:
        return self.standard + self.makernote

    def value(self, tags: dict, warnings: list[str]):
        for keys in (self.standard, self.makernote):
            for key in keys:
                value = tags.get(key)
                if value is not None:
                    return self.convert(value, key, tags, warnings) if self.convert else value
        return None


from sharpzone.optics.limits import MIN_F_NUMBER  # noqa: E402 - the one home of the floor, with its reason
# APEX Av 32 is f/65536: anything beyond is damage, not a lens.
_MAX_APERTURE_VALUE = 32
# CIPA DC-008 SubjectDistanceRange codes (0 = unknown).
_DISTANCE_RANGES = {1: "macro", 2: "close", 3: "distant"}
# CIPA DC-008 FocalPlaneResolutionUnit: 2 = inch (the default), 3 = centimetre.
_FOCAL_PLANE_UNIT_MM = {2: 25.4, 3: 10.0}
# EXIF 2.3: ISO values of 65535 and above are written as 65535; the exact value then
# lives in the sensitivity tags.
_ISO_SATURATED = 65535
_OFFSET = re.compile(r"^([+-])(\d{2}):(\d{2})$")


def positive(label: str, unit: str) -> Converter:
    def convert(value, key, tags, warnings):
        result = number(value)
        if result is None or result <= 0:
            shown = f"{value!r} {unit}".rstrip()
            warnings.append(f"{label} {shown} ignored: expected a positive number")
            return None
        return result
    return convert


def _text(value, key, tags, warnings):
    return text_value(value)


def _positive_int(value, key, tags, warnings):
    result = as_int(value)
    return result if result is not None and result > 0 else None


def _f_number(value, key, tags, warnings):
    if key == "Exif.Photo.FNumber":
        f_number = positive("f-number", "")(value, key, tags, warnings)
        if f_number is None and number(tags.get("Exif.Photo.ApertureValue")) is not None:
            return _f_number(tags["Exif.Photo.ApertureValue"], "Exif.Photo.ApertureValue", tags, warnings)
    else:
        aperture_value = number(value)
        if aperture_value is None:
            return None
        if aperture_value > _MAX_APERTURE_VALUE:
            warnings.append(f"ApertureValue {aperture_value:g} ignored: beyond f/{2 ** (_MAX_APERTURE_VALUE / 2):g}")
            return None
        # APEX (EXIF 2.3, ApertureValue): Av = 2 log2(N), so N = 2^(Av/2).
        f_number = 2 ** (aperture_value / 2)
        warnings.append("f-number taken from ApertureValue (FNumber missing)")
    if f_number is not None and f_number < MIN_F_NUMBER:
        warnings.append(f"f-number {f_number:g} ignored: below f/{MIN_F_NUMBER:g}, the limit for a lens in air")
        return None
    return f_number


def _iso(value, key, tags, warnings):
    iso = as_int(value)
    if iso == _ISO_SATURATED:
        exact = as_int(tags.get("Exif.Photo.RecommendedExposureIndex")) or as_int(
            tags.get("Exif.Photo.StandardOutputSensitivity"))
        iso = exact or iso
    return iso if iso is not None and iso > 0 else None


def _distance_range(value, key, tags, warnings):
    return _DISTANCE_RANGES.get(as_int(value))


def _focal_35mm(value, key, tags, warnings):
    result = number(value)
    if result is None or result == 0:  # 0 = unknown (CIPA DC-008)
        return None
    if result < 0:
        warnings.append(f"35 mm equivalent focal length {result:g} mm ignored: negative")
        return None
    return result


def _lens_spec(value, key, tags, warnings):
    """(min focal mm, max focal mm, min f-number at min focal, at max focal); 0/0 unknown."""
    if key == CANON_FOCAL_RANGE_KEY:
        return _canon_focal_range(value)
    if not isinstance(value, tuple) or len(value) != 4:
        warnings.append(f"lens specification {value!r} ignored: expected four numbers")
        return None
    spec = tuple(None if (item := number(part)) is None or item <= 0 else item for part in value)
    return None if all(item is None for item in spec) else spec


# Canon camera settings "Lens": (long focal, short focal, focal units per mm), 16-bit;
# libexiv2 0.28 prints 85 18 1 as "18.0 - 85.0 mm". It names no apertures.
CANON_FOCAL_RANGE_KEY = "Exif.CanonCs.Lens"


def _canon_focal_range(value):
    if not isinstance(value, tuple) or len(value) != 3:
        return None
    long_end, short_end, units = (number(item) for item in value)
    if not (long_end and short_end and units) or min(long_end, short_end, units) <= 0 or short_end > long_end:
        return None
    return (short_end / units, long_end / units, None, None)


def _captured_at(value, key, tags, warnings):
    """DateTimeOriginal ("YYYY:MM:DD HH:MM:SS", local time) plus SubSecTimeOriginal."""
    text = text_value(value)
    if text is None:
        return None
    try:
        moment = _exif_moment(text)
    except ValueError:
        # CIPA DC-008: an unknown date and time is written as blanks or zeros.
        if text.strip(" :0") != "":
            warnings.append(f"capture time {text!r} ignored: expected 'YYYY:MM:DD HH:MM:SS'")
        return None
    sub_second = text_value(tags.get("Exif.Photo.SubSecTimeOriginal"))
    if sub_second is not None:
        if sub_second.isdigit():
            # The digits are a decimal fraction: "05" is 0.05 s.
            moment += timedelta(microseconds=round(int(sub_second) / 10 ** len(sub_second) * 1e6))
        else:
            warnings.append(f"sub-second time {sub_second!r} ignored: expected digits")
    return moment


# The form EXIF 2.3 prescribes, read without strptime (a fifth of a frame's normalising).
_MOMENT = re.compile(r"([0-9]{4}):([0-9]{2}):([0-9]{2}) ([0-9]{2}):([0-9]{2}):([0-9]{2})")


def _exif_moment(text: str) -> datetime:
    """``YYYY:MM:DD HH:MM:SS`` as a datetime; other spellings as ``strptime`` reads them."""
    match = _MOMENT.fullmatch(text)
    if match is None:
        return datetime.strptime(text, "%Y:%m:%d %H:%M:%S")
    return datetime(*map(int, match.groups()))


def _utc_offset_minutes(value, key, tags, warnings):
    text = text_value(value)
    if text is None or text.strip(" :") == "":
        return None
    match = _OFFSET.match(text)
    if not match or int(match.group(3)) >= 60 or int(match.group(2)) > 14:
        warnings.append(f"UTC offset {text!r} ignored: expected '+HH:MM' or '-HH:MM'")
        return None
    minutes = int(match.group(2)) * 60 + int(match.group(3))
    return -minutes if match.group(1) == "-" else minutes


def focal_plane_mm(resolution_key: str, pixels: int | None, tags: dict, warnings: list[str]) -> float | None:
    """Sensor size estimate: pixels / (pixels per unit on the focal plane) × unit in mm."""
    resolution = number(tags.get(resolution_key))
    if resolution is None or pixels is None:
        return None
    unit = as_int(tags.get("Exif.Photo.FocalPlaneResolutionUnit"))
    unit = 2 if unit is None else unit  # CIPA DC-008: default is inches
    if resolution <= 0 or unit not in _FOCAL_PLANE_UNIT_MM:
        name = resolution_key.rsplit(".", 1)[1]
        warnings.append(f"{name} {resolution:g} (unit {unit}) ignored: cannot give a sensor size")
        return None
    return pixels / resolution * _FOCAL_PLANE_UNIT_MM[unit]


FIELDS: tuple[Field, ...] = (
    Field("focal_mm", ("Exif.Photo.FocalLength",), convert=positive("focal length", "mm")),
    Field("f_number", ("Exif.Photo.FNumber", "Exif.Photo.ApertureValue"), convert=_f_number),
    Field("exposure_s", ("Exif.Photo.ExposureTime",), convert=positive("exposure time", "s")),
    Field("iso", ("Exif.Photo.ISOSpeedRatings",), convert=_iso),
    Field("subject_distance_range", ("Exif.Photo.SubjectDistanceRange",), convert=_distance_range),
    Field("focal_35mm_mm", ("Exif.Photo.FocalLengthIn35mmFilm",), convert=_focal_35mm),
    # Nikon's lens record holds the same four numbers as LensSpecification (libexiv2 prints
    # 180/10 550/10 35/10 56/10 as "18-55mm F3.5-5.6").
    Field("lens_spec", ("Exif.Photo.LensSpecification",), ("Exif.Nikon3.Lens", CANON_FOCAL_RANGE_KEY),
          convert=_lens_spec),
    Field("exif_make", ("Exif.Image.Make",), convert=_text),
    Field("exif_model", ("Exif.Image.Model",), convert=_text),
    Field("lens_model", ("Exif.Photo.LensModel",), convert=_text),
    Field("body_serial", ("Exif.Photo.BodySerialNumber",),
          ("Exif.Canon.SerialNumber", "Exif.Nikon3.SerialNumber", "Exif.Fujifilm.SerialNumber",
           "Exif.OlympusEq.SerialNumber", "Exif.Panasonic.InternalSerialNumber"),
          convert=_text),
    Field("captured_at", ("Exif.Photo.DateTimeOriginal",), convert=_captured_at),
    Field("utc_offset_minutes", ("Exif.Photo.OffsetTimeOriginal",), convert=_utc_offset_minutes),
    Field("width_px", ("Exif.Photo.PixelXDimension", "Exif.Image.ImageWidth"), convert=_positive_int),
    Field("height_px", ("Exif.Photo.PixelYDimension", "Exif.Image.ImageLength"), convert=_positive_int),
)

# Every key a reader should look up explicitly (libexiv2 is asked key by key).
DISTANCE_KEY_NAMES = tuple(entry.key for entry in DISTANCE_KEYS) + tuple(
    entry.pair for entry in DISTANCE_KEYS if entry.pair)
EXTRA_KEYS = (
    "Exif.Photo.ApertureValue", "Exif.Photo.RecommendedExposureIndex", "Exif.Photo.StandardOutputSensitivity",
    "Exif.Photo.SubSecTimeOriginal", "Exif.Photo.FocalPlaneXResolution", "Exif.Photo.FocalPlaneYResolution",
    "Exif.Photo.FocalPlaneResolutionUnit", "Exif.Photo.SubjectArea", "Exif.Photo.SubjectLocation",
    *PIXEL_PITCH_KEYS, *AF_AREA_KEYS,
) + tuple(f"{group}.{name}" for group in _IMAGE_DIRECTORIES
          for name in ("ImageWidth", "ImageLength", "NewSubfileType"))


# Which maker-note groups a file can hold, by its EXIF Make (lower case, a substring): libexiv2
# picks the maker-note layout by Make in the same way. A Make not listed here gets every key.
MAKER_GROUPS = {
    "canon": ("Canon",),
    "nikon": ("Nikon",),
    "olympus": ("Olympus",),
    "om digital": ("Olympus",),
    "casio": ("Casio",),
    "sony": ("Sony", "Minolta"),
    "minolta": ("Minolta",),
    "pentax": ("Pentax",),
    "ricoh": ("Pentax",),
    "samsung": ("Samsung",),
    "panasonic": ("Panasonic",),
    "leica": ("Panasonic",),
    "fujifilm": ("Fujifilm",),
}
_STANDARD_GROUPS = ("Exif.Image.", "Exif.Photo.", "Exif.GPSInfo.")


def keys_for_make(keys: tuple[str, ...], make: str | None, is_raw: bool) -> tuple[str, ...]:
    """The keys worth looking up in a file of this Make: the standard ones, the raw image
    directories only in a raw file, and only the maker-note groups its Make can hold."""
    groups = None
    lowered = (make or "").lower()
    for fragment, prefixes in MAKER_GROUPS.items():
        if fragment in lowered:
            groups = tuple(f"Exif.{prefix}" for prefix in prefixes)
            break
    chosen = []
    for key in keys:
        if key.startswith("Exif.SubImage"):
            if is_raw:
                chosen.append(key)
        elif key.startswith(_STANDARD_GROUPS) or groups is None or key.startswith(groups):
            chosen.append(key)
    return tuple(chosen)


def wanted_keys() -> tuple[str, ...]:
    """All keys the readers look up, in a stable order (printed-value keys without suffix)."""
    keys: list[str] = []
    for key in (*(k for f in FIELDS for k in f.keys), *DISTANCE_KEY_NAMES, *EXTRA_KEYS, *LENS_NAME_KEYS):
        key = key.removesuffix(PRINTED)
        if key not in keys:
            keys.append(key)
    return tuple(keys)


# Keys whose printed value a reader adds under ``key + PRINTED``.
PRINTED_KEYS = frozenset(key.removesuffix(PRINTED) for key in LENS_NAME_KEYS if key.endswith(PRINTED)) | PRINTED_DISTANCE_KEYS
