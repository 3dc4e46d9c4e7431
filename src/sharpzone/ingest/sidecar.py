"""Focus distance from an XMP sidecar file (the EXIF SubjectDistance property in XMP).

XMP (ISO 16684-1) carries EXIF properties in the namespace http://ns.adobe.com/exif/1.0/;
``exif:SubjectDistance`` is a rational in metres, written as an element or an attribute.
The XML is parsed with defusedxml, which refuses entity expansion and external references.
"""

from __future__ import annotations

import math
import os
from fractions import Fraction

from sharpzone.ingest.records import FileReadError, os_error_reason

EXIF_NAMESPACE = "http://ns.adobe.com/exif/1.0/"
_SUBJECT_DISTANCE = f"{{{EXIF_NAMESPACE}}}SubjectDistance"
from sharpzone.vocabulary import SUBJECT_DISTANCE_INFINITY as _INFINITE_NUMERATOR  # noqa: E402


def sidecar_path(image_path: str | bytes) -> str | None:
    """The XMP sidecar next to an image, if any: ``NAME.xmp``/``NAME.XMP``, else ``NAME.EXT.xmp``."""
    image_path = os.fsdecode(image_path)
    stem = os.path.splitext(image_path)[0]
    # Same stem is the usual convention; some tools append to the full name (common practice).
    for candidate in (stem + ".xmp", stem + ".XMP", image_path + ".xmp", image_path + ".XMP"):
        if os.path.isfile(candidate):
            return candidate
    return None


def read_xmp_focus_distance(image_path: str | bytes) -> float | None:
    """Focus distance in mm (``math.inf`` for infinity) from the image's XMP sidecar, or ``None``.

    ``None`` when there is no sidecar, no SubjectDistance in it, or it says "unknown".
    Raises ``FileReadError`` for a sidecar that cannot be read, is not well-formed, is an
    XML bomb, or holds a SubjectDistance that is not a number.
    """
    path = sidecar_path(image_path)
    if path is None:
        return None
    from defusedxml import DefusedXmlException
    from defusedxml.ElementTree import ParseError, parse

    try:
        root = parse(path).getroot()
    except DefusedXmlException as err:
        raise FileReadError(path, f"XMP sidecar refused: {type(err).__name__} (entities or external references)") from None
    except ParseError as err:
        raise FileReadError(path, f"XMP sidecar is not well-formed XML ({err})") from None
    except OSError as err:
        raise FileReadError(path, os_error_reason(err)) from None
    for element in root.iter():
        text = element.attrib.get(_SUBJECT_DISTANCE)
        if text is None and element.tag == _SUBJECT_DISTANCE:
            text = element.text or ""
        if text is not None:
            return _distance_mm(text.strip(), path)
    return None


def _distance_mm(text: str, path: str) -> float | None:
    try:
        if "/" in text:
            numerator_text, denominator_text = text.split("/", 1)
            numerator, denominator = int(numerator_text), int(denominator_text)
            if numerator == _INFINITE_NUMERATOR:
                return math.inf
            metres = Fraction(numerator, denominator)
        else:
            metres = Fraction(text)
    except (ValueError, ZeroDivisionError):
        if text.startswith("0/"):
            return None
        raise FileReadError(path, f"XMP SubjectDistance {text!r} is not a distance in metres (like '32/10')") from None
    if metres < 0:
        raise FileReadError(path, f"XMP SubjectDistance {text!r} is negative")
    return None if metres == 0 else float(metres) * 1000.0
