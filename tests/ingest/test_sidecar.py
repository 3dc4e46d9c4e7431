"""XMP sidecar focus distance: exif:SubjectDistance as element or attribute; bombs refused.

XMP (ISO 16684-1) writes EXIF properties in the namespace http://ns.adobe.com/exif/1.0/;
rationals as "numerator/denominator" text (XMP Specification Part 2, EXIF schema; from memory).
"""

from __future__ import annotations

import math

import pytest

from sharpzone.errors import ReadError
from sharpzone.ingest.sidecar import read_xmp_focus_distance

from . import images

RDF = "http://www.w3.org/1999/02/22-rdf-syntax-ns#"


def attribute_form(value: str) -> bytes:
    return (
        '<?xpacket begin="" id="W5M0MpCehiHzreSzNTczkc9d"?>'
        f'<x:xmpmeta xmlns:x="adobe:ns:meta/"><rdf:RDF xmlns:rdf="{RDF}">'
        f'<rdf:Description rdf:about="" xmlns:exif="http://ns.adobe.com/exif/1.0/" exif:SubjectDistance="{value}"/>'
        '</rdf:RDF></x:xmpmeta><?xpacket end="w"?>'
    ).encode()


def element_form(value: str) -> bytes:
    return (
        f'<x:xmpmeta xmlns:x="adobe:ns:meta/"><rdf:RDF xmlns:rdf="{RDF}">'
        '<rdf:Description rdf:about="" xmlns:exif="http://ns.adobe.com/exif/1.0/">'
        f'<exif:FNumber>28/10</exif:FNumber><exif:SubjectDistance> {value} </exif:SubjectDistance>'
        '</rdf:Description></rdf:RDF></x:xmpmeta>'
    ).encode()


@pytest.fixture
def image(written):
    return written("frame.jpg", images.jpeg())


@pytest.mark.parametrize("form", [attribute_form, element_form])
def test_subject_distance_in_metres_becomes_mm(written, image, form):
    written("frame.xmp", form("32/10"))
    assert read_xmp_focus_distance(image) == pytest.approx(3200.0)


def test_uppercase_extension_and_decimal_text(written, image):
    written("frame.XMP", attribute_form("1.25"))
    assert read_xmp_focus_distance(image) == pytest.approx(1250.0)


def test_zero_is_unknown_and_all_ones_is_infinity(written, image):
    # CIPA DC-008 SubjectDistance, carried unchanged into XMP: 0 unknown, 0xFFFFFFFF infinity.
    written("frame.xmp", attribute_form("0/1"))
    assert read_xmp_focus_distance(image) is None
    written("frame.xmp", attribute_form("4294967295/1"))
    assert read_xmp_focus_distance(image) == math.inf


def test_no_sidecar_or_no_distance(written, image):
    assert read_xmp_focus_distance(image) is None
    written("frame.xmp", element_form("3").replace(b"SubjectDistance", b"ExposureBias"))
    assert read_xmp_focus_distance(image) is None


def _reason(image) -> str:
    with pytest.raises(ReadError) as caught:
        read_xmp_focus_distance(image)
    return caught.value.reason


def test_entity_expansion_bomb_is_refused(written, image):
    bomb = (
        '<?xml version="1.0"?><!DOCTYPE x [<!ENTITY a "aaaaaaaaaa">'
        '<!ENTITY b "&a;&a;&a;&a;&a;&a;&a;&a;&a;&a;"><!ENTITY c "&b;&b;&b;&b;&b;&b;&b;&b;&b;&b;">]>'
        '<x:xmpmeta xmlns:x="adobe:ns:meta/">&c;</x:xmpmeta>'
    )
    written("frame.xmp", bomb.encode())
    assert _reason(image).startswith("XMP sidecar refused")


def test_external_entity_is_refused(written, image, tmp_path):
    (tmp_path / "secret.txt").write_text("private")
    xxe = f'<?xml version="1.0"?><!DOCTYPE x [<!ENTITY e SYSTEM "file://{tmp_path}/secret.txt">]><x>&e;</x>'
    written("frame.xmp", xxe.encode())
    assert _reason(image).startswith("XMP sidecar refused")


def test_malformed_xml_and_bad_values(written, image):
    written("frame.xmp", b"<x:xmpmeta><unclosed>")
    assert _reason(image).startswith("XMP sidecar is not well-formed XML")
    written("frame.xmp", attribute_form("near"))
    assert "'near'" in _reason(image)
    written("frame.xmp", attribute_form("-3/1"))
    assert "negative" in _reason(image)
