"""Ingest a shoot: scan folders, read each file's EXIF, normalise it into capture records.

Stages: ``scan.iter_scan`` (folders walked, content sniffed) → ``capture.read_capture`` in
contained worker processes (``workers.ReaderPool``; a reader from ``readers`` — libexiv2, or
exifread as the fallback — then ``normalise`` through the one field table in ``fields``, and a
sidecar's focus distance) → ``pipeline`` matches bodies and lenses (``match``) and writes each
batch to the catalogue. Everything before ``pipeline`` is pure of the catalogue.
"""
