"""Turn a reader's tags into a ``CaptureRecord``: pure, no files, never raises on bad values.

Tag meanings follow EXIF 2.3 (CIPA DC-008 / JEITA CP-3451) and, for maker notes, libexiv2
0.28's decoding; where each field comes from and how it converts is the field table in
``sharpzone.ingest.fields``. A value that makes no optical sense is dropped to ``None`` with a
warning, so one odd frame never stops an ingest.
"""

from __future__ import annotations

from sharpzone.ingest import fields
from sharpzone.ingest.fields import MIN_F_NUMBER  # noqa: F401 - part of this module's contract
from sharpzone.ingest.records import CaptureRecord

# Focus closer than 1 mm from the sensor is physically meaningless for a camera.
MIN_FOCUS_MM = 1.0


def normalise_capture(tags: dict, path: str) -> CaptureRecord:
    """Build the capture record of the image at ``path`` from a reader's tags.

    Lengths in mm; the focus distance is the first usable key of ``fields.DISTANCE_KEYS``
    (standard SubjectDistance, then the maker notes), with its bracket and key; the lens
    model falls back to the maker note's decoded lens id, and the lens specification to the
    one parsed from the lens name.
    """
    warnings: list[str] = []
    values = {field.name: field.value(tags, warnings) for field in fields.FIELDS}
    focus = fields.focus_distance(tags, warnings, MIN_FOCUS_MM)
    candidates = fields.lens_names(tags)
    if values["lens_model"] is None and candidates:
        values["lens_model"] = candidates[0]
    else:
        candidates = ()
    values["lens_spec"] = _with_name_spec(values["lens_spec"], fields.lens_spec_from_name(values["lens_model"]))
    sensor_width_px, sensor_height_px = fields.sensor_pixels(tags)
    sensor_width_mm, sensor_height_mm = fields.sensor_size_mm(tags, sensor_width_px, sensor_height_px)
    image_width = values["width_px"] or fields.as_int(tags.get(fields.CONTAINER_WIDTH))
    image_height = values["height_px"] or fields.as_int(tags.get(fields.CONTAINER_HEIGHT))
    point, point_key = fields.focus_point(tags, image_width, image_height)
    return CaptureRecord(
        path=path,
        **values,
        focus_mm=focus.nominal_mm if focus else None,
        focus_near_mm=focus.near_mm if focus else None,
        focus_far_mm=focus.far_mm if focus else None,
        focus_key=focus.key if focus else None,
        focus_source=focus.source if focus else "none",
        lens_candidates=candidates,
        sensor_width_px=sensor_width_px,
        sensor_height_px=sensor_height_px,
        sensor_width_mm=sensor_width_mm,
        sensor_height_mm=sensor_height_mm,
        focal_plane_width_mm=fields.focal_plane_mm("Exif.Photo.FocalPlaneXResolution", values["width_px"], tags, warnings),
        focal_plane_height_mm=fields.focal_plane_mm("Exif.Photo.FocalPlaneYResolution", values["height_px"], tags, warnings),
        focus_point=point,
        focus_point_key=point_key,
        warnings=tuple(warnings),
    )


def _with_name_spec(spec, named):
    """The recorded lens specification, completed from the one in the lens name: the name's
    when none is recorded, its apertures when only the same focal range is."""
    if spec is None:
        return named
    if named is not None and spec[2] is None and spec[3] is None and tuple(spec[:2]) == tuple(named[:2]):
        return named
    return spec
