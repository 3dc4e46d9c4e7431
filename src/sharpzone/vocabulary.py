"""Closed sets of words the catalogue stores and every layer shares.

Kept here, outside both ``ingest`` and ``catalog``, so the readers and the models name the
same values without importing each other.
"""

from __future__ import annotations

# Where a frame's focus distance came from, in order of precedence: a distance the user gave
# (CSV), the standard EXIF SubjectDistance, a maker-note record, the XMP sidecar; "none" when
# nowhere. The exact key it was read from is stored beside it (``Frame.focus_key``).
FOCUS_SOURCES = ("user", "exif", "makernote", "xmp", "none")

# CIPA DC-008 SubjectDistanceRange words (code 0, unknown, is stored as no value).
SUBJECT_DISTANCE_RANGES = ("macro", "close", "distant")

# EXIF 2.3 / CIPA DC-008 SubjectDistance (tag 0x9206): a numerator of 0xFFFFFFFF means
# infinity, 0 means unknown.
SUBJECT_DISTANCE_INFINITY = 0xFFFFFFFF

# A shoot's plan: an absolute range from the sensor, or a depth around the focus point.
PLAN_KINDS = ("range", "depth")
