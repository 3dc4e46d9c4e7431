"""Ingest a shoot: scan folders, read each file's EXIF, normalise it into capture records.

The read side is pure of the catalogue: nothing here opens a database. Stages:
``scan.scan_paths`` → ``capture.read_capture`` (``exif.read_tags`` → ``normalise``
→ sidecar focus distance) → (later) match and persist.
"""
