"""One frame, read end to end: EXIF tags → capture record → focus distance by precedence.

``read_capture`` is a plain module-level function taking and returning picklable values,
so a process pool can map it over a shoot.
"""

from __future__ import annotations

import dataclasses
import os

from sharpzone.errors import ReadError
from sharpzone.ingest.distances import choose_focus_distance
from sharpzone.ingest.exif import read_tags
from sharpzone.ingest.normalise import normalise_capture
from sharpzone.ingest.records import CaptureRecord, FileReadError, ReadProblem
from sharpzone.ingest.sidecar import read_xmp_focus_distance


def read_capture(path: str | bytes, user_focus_mm: float | None = None) -> CaptureRecord | ReadProblem:
    """Read one image into a ``CaptureRecord``, or a ``ReadProblem`` saying why it could not be.

    ``user_focus_mm`` is a distance the user gave for this frame (it wins over EXIF, which
    wins over the XMP sidecar). A damaged sidecar only adds a warning. Never raises for a
    bad file.
    """
    path = os.fsdecode(path)
    try:
        tags = read_tags(path)
    except FileReadError as err:
        return ReadProblem(path, err.reason)
    record = normalise_capture(tags, path)
    warnings = list(record.warnings)
    xmp_mm = None
    if user_focus_mm is None and record.focus_mm is None:
        try:
            xmp_mm = read_xmp_focus_distance(path)
        except ReadError as err:
            warnings.append(f"XMP sidecar ignored: {getattr(err, 'reason', err)}")
    focus_mm, source = choose_focus_distance(user_focus_mm, record.focus_mm, xmp_mm)
    return dataclasses.replace(record, focus_mm=focus_mm, focus_source=source, warnings=tuple(warnings))
