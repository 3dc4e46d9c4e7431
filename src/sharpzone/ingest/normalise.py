"""Turn a tag dictionary into a ``CaptureRecord``: pure, no files, never raises on bad values.

Tag meanings follow EXIF 2.3 (CIPA DC-008 / JEITA CP-3451). A value that makes no optical
sense is dropped to ``None`` with a warning, so one odd frame never stops an ingest.
"""

from __future__ import annotations

import math
import re
from datetime import datetime, timedelta

from sharpzone.ingest.records import CaptureRecord

from sharpzone.optics.limits import MIN_F_NUMBER  # the one home of the floor, with its reason
# APEX Av 32 is f/65536: anything beyond is damage, not a lens.
_MAX_APERTURE_VALUE = 32
# Focus closer than 1 mm from the sensor is physically meaningless for a camera.
MIN_FOCUS_MM = 1.0

# CIPA DC-008 SubjectDistanceRange codes (0 = unknown).
_DISTANCE_RANGES = {1: "macro", 2: "close", 3: "distant"}
# CIPA DC-008 FocalPlaneResolutionUnit: 2 = inch (the default), 3 = centimetre.
_FOCAL_PLANE_UNIT_MM = {2: 25.4, 3: 10.0}
# EXIF 2.3: ISO values of 65535 and above are written as 65535; the exact value then
# lives in the sensitivity tags.
_ISO_SATURATED = 65535

_OFFSET = re.compile(r"^([+-])(\d{2}):(\d{2})$")


def normalise_capture(tags: dict, path: str) -> CaptureRecord:
    """Build the capture record of the image at ``path`` from its tags (as ``read_tags`` gives).

    Lengths in mm; ``focus_mm`` from SubjectDistance (metres in EXIF; 0 = unknown,
    ``"inf"``/infinite = infinity); ``f_number`` from FNumber, else from the APEX
    ApertureValue (N = 2^(Av/2)).
    """
    warnings: list[str] = []
    focus_mm = _focus_mm(tags.get("SubjectDistance"), warnings)
    width_px = _positive_int(tags, ("ExifImageWidth", "ImageWidth"), warnings)
    height_px = _positive_int(tags, ("ExifImageLength", "ImageLength"), warnings)
    captured_at = _captured_at(tags, warnings)
    return CaptureRecord(
        path=path,
        focal_mm=_positive(tags, "FocalLength", "focal length", "mm", warnings),
        f_number=_f_number(tags, warnings),
        exposure_s=_positive(tags, "ExposureTime", "exposure time", "s", warnings),
        iso=_iso(tags, warnings),
        focus_mm=focus_mm,
        focus_source="exif" if focus_mm is not None else "none",
        subject_distance_range=_DISTANCE_RANGES.get(_as_int(tags.get("SubjectDistanceRange"))),
        focal_35mm_mm=_focal_35mm(tags, warnings),
        lens_spec=_lens_spec(tags.get("LensSpecification"), warnings),
        exif_make=_text(tags.get("Make")),
        exif_model=_text(tags.get("Model")),
        lens_make=_text(tags.get("LensMake")),
        lens_model=_text(tags.get("LensModel")),
        body_serial=_text(tags.get("BodySerialNumber")),
        lens_serial=_text(tags.get("LensSerialNumber")),
        captured_at=captured_at,
        utc_offset_minutes=_utc_offset_minutes(tags.get("OffsetTimeOriginal"), warnings),
        width_px=width_px,
        height_px=height_px,
        focal_plane_width_mm=_focal_plane_mm(tags, "FocalPlaneXResolution", width_px, warnings),
        focal_plane_height_mm=_focal_plane_mm(tags, "FocalPlaneYResolution", height_px, warnings),
        warnings=tuple(warnings),
    )


def _number(value) -> float | None:
    """A finite float from a tag value (first of a tuple), or ``None``."""
    if isinstance(value, tuple):
        value = value[0] if value else None
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        return None
    number = float(value)
    return number if math.isfinite(number) else None


def _as_int(value) -> int | None:
    number = _number(value)
    return int(number) if number is not None and number == int(number) else None


def _positive(tags: dict, name: str, label: str, unit: str, warnings: list[str]) -> float | None:
    if name not in tags or tags[name] is None:
        return None
    number = _number(tags[name])
    if number is None or number <= 0:
        shown = f"{tags[name]!r} {unit}".rstrip()
        warnings.append(f"{label} {shown} ignored: expected a positive number")
        return None
    return number


def _positive_int(tags: dict, names: tuple[str, ...], warnings: list[str]) -> int | None:
    for name in names:
        number = _as_int(tags.get(name))
        if number is not None and number > 0:
            return number
    return None


def _f_number(tags: dict, warnings: list[str]) -> float | None:
    f_number = _positive(tags, "FNumber", "f-number", "", warnings)
    aperture_value = _number(tags.get("ApertureValue"))
    if f_number is None and aperture_value is not None:
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


def _iso(tags: dict, warnings: list[str]) -> int | None:
    iso = _as_int(tags.get("ISOSpeedRatings"))
    if iso == _ISO_SATURATED:
        exact = _as_int(tags.get("RecommendedExposureIndex")) or _as_int(tags.get("StandardOutputSensitivity"))
        iso = exact or iso
    if iso is not None and iso <= 0:
        return None
    return iso


def _focus_mm(value, warnings: list[str]) -> float | None:
    """SubjectDistance in metres → mm; 0 means unknown (CIPA DC-008), "inf" means infinity."""
    if value is None:
        return None
    if value == "inf" or (isinstance(value, float) and math.isinf(value) and value > 0):
        return math.inf
    metres = _number(value)
    if metres is None:
        warnings.append(f"subject distance {value!r} ignored: not a number")
        return None
    if metres == 0:
        return None
    focus_mm = metres * 1000.0
    if focus_mm < MIN_FOCUS_MM:
        warnings.append(f"subject distance {metres:g} m ignored: expected at least {MIN_FOCUS_MM:g} mm")
        return None
    return focus_mm


def _focal_35mm(tags: dict, warnings: list[str]) -> float | None:
    number = _number(tags.get("FocalLengthIn35mmFilm"))
    if number is None or number == 0:  # 0 = unknown (CIPA DC-008)
        return None
    if number < 0:
        warnings.append(f"35 mm equivalent focal length {number:g} mm ignored: negative")
        return None
    return number


def _lens_spec(value, warnings: list[str]):
    """(min focal mm, max focal mm, min f-number at min focal, at max focal); 0/0 unknown."""
    if value is None:
        return None
    if not isinstance(value, tuple) or len(value) != 4:
        warnings.append(f"lens specification {value!r} ignored: expected four numbers")
        return None
    spec = tuple(None if (number := _number(item)) is None or number <= 0 else number for item in value)
    return None if all(item is None for item in spec) else spec


def _text(value) -> str | None:
    if isinstance(value, bytes):
        value = value.decode("utf-8", "replace")
    if not isinstance(value, str):
        return None
    text = value.strip("\x00 \t\r\n")
    return text or None


def _captured_at(tags: dict, warnings: list[str]) -> datetime | None:
    """DateTimeOriginal ("YYYY:MM:DD HH:MM:SS", local time) plus SubSecTimeOriginal."""
    text = _text(tags.get("DateTimeOriginal"))
    if text is None:
        return None
    try:
        moment = datetime.strptime(text, "%Y:%m:%d %H:%M:%S")
    except ValueError:
        # CIPA DC-008: an unknown date and time is written as blanks or zeros.
        if text.strip(" :0") != "":
            warnings.append(f"capture time {text!r} ignored: expected 'YYYY:MM:DD HH:MM:SS'")
        return None
    sub_second = _text(tags.get("SubSecTimeOriginal"))
    if sub_second is not None:
        if sub_second.isdigit():
            # The digits are a decimal fraction: "05" is 0.05 s.
            moment += timedelta(microseconds=round(int(sub_second) / 10 ** len(sub_second) * 1e6))
        else:
            warnings.append(f"sub-second time {sub_second!r} ignored: expected digits")
    return moment


def _utc_offset_minutes(value, warnings: list[str]) -> int | None:
    text = _text(value)
    if text is None or text.strip(" :") == "":
        return None
    match = _OFFSET.match(text)
    if not match or int(match.group(3)) >= 60 or int(match.group(2)) > 14:
        warnings.append(f"UTC offset {text!r} ignored: expected '+HH:MM' or '-HH:MM'")
        return None
    minutes = int(match.group(2)) * 60 + int(match.group(3))
    return -minutes if match.group(1) == "-" else minutes


def _focal_plane_mm(tags: dict, name: str, pixels: int | None, warnings: list[str]) -> float | None:
    """Sensor size estimate: pixels / (pixels per unit on the focal plane) × unit in mm."""
    resolution = _number(tags.get(name))
    if resolution is None or pixels is None:
        return None
    unit = _as_int(tags.get("FocalPlaneResolutionUnit"))
    unit = 2 if unit is None else unit  # CIPA DC-008: default is inches
    if resolution <= 0 or unit not in _FOCAL_PLANE_UNIT_MM:
        warnings.append(f"{name} {resolution:g} (unit {unit}) ignored: cannot give a sensor size")
        return None
    return pixels / resolution * _FOCAL_PLANE_UNIT_MM[unit]
