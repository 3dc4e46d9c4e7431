"""Fixtures for the ingest tests: files written to tmp_path and proven unchanged afterwards."""

from __future__ import annotations

import hashlib
import os

import pytest


def _digest(path) -> str:
    with open(path, "rb") as file:
        return hashlib.sha256(file.read()).hexdigest()


@pytest.fixture
def written(tmp_path):
    """``written(name, data)`` writes a file under tmp_path and returns its path.

    At teardown every such file still readable is checksummed again: reading must never
    modify a user's image (DESIGN: read-only ingest).
    """
    checksums: dict[str, str] = {}

    def write(name: str | bytes, data: bytes, folder=None) -> str:
        base = os.fsencode(folder if folder is not None else tmp_path)
        path = os.path.join(base, os.fsencode(name))
        os.makedirs(os.path.dirname(path), exist_ok=True)
        with open(path, "wb") as file:
            file.write(data)
        decoded = os.fsdecode(path)
        checksums[decoded] = hashlib.sha256(data).hexdigest()
        return decoded

    yield write
    for path, checksum in checksums.items():
        if not os.path.lexists(path):
            continue  # the test removed it on purpose
        os.chmod(path, 0o644)
        assert _digest(path) == checksum, f"{path!r} was modified by reading it"
