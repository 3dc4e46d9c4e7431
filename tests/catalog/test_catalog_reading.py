"""Read commands never create a catalogue, and read one that cannot be written (issue 11
part 6)."""

from __future__ import annotations

import contextlib
import os
import shutil
import tempfile

import pytest
from typer.testing import CliRunner

from sharpzone.catalog.engine import open_catalog, read_only_url, session_scope
from sharpzone.catalog.models import SensorFormatRow
from sharpzone.cli.app import app
from tests.ingest.images import exif_block, jpeg

READ = [["frames"], ["check", "--near", "1", "--far", "2"], ["stats"], ["body", "list"], ["lens", "list"],
        ["format", "list"], ["shoot", "list"], ["catalog", "info"]]


@pytest.mark.parametrize("command", READ, ids=" ".join)
def test_read_commands_do_not_create_a_named_catalogue(tmp_path, command):
    path = tmp_path / "missing.sqlite"
    result = CliRunner().invoke(app, ["--catalog", str(path), *command])
    assert result.exit_code == 1
    assert f"no catalogue at {path}" in result.stderr and len(result.stderr.strip().splitlines()) == 1
    assert not path.exists()


def test_a_command_that_writes_creates_it(tmp_path):
    path = tmp_path / "new.sqlite"
    (tmp_path / "card").mkdir()
    (tmp_path / "card" / "a.jpg").write_bytes(jpeg(exif_block()))
    assert CliRunner().invoke(app, ["--catalog", str(path), "ingest", str(tmp_path / "card")]).exit_code == 0
    assert path.exists()


def _read_only_copy(tmp_path):
    path = tmp_path / "ro" / "catalog.sqlite"
    path.parent.mkdir()
    with open_catalog(path):
        pass
    return path


def test_a_read_only_url_reads_without_writing_beside_the_file(tmp_path):
    path = _read_only_copy(tmp_path)
    before = sorted(os.listdir(path.parent))
    with session_scope(read_only_url(path)) as session:
        assert session.query(SensorFormatRow).count() > 0
    assert sorted(os.listdir(path.parent)) == before


@contextlib.contextmanager
def _as_other_user():
    """Run as a user whom file permissions stop (root is not stopped): the effective user
    becomes "nobody" for the block, when we are root."""
    if os.geteuid() != 0:
        yield
        return
    os.setegid(65534)
    os.seteuid(65534)
    try:
        yield
    finally:
        os.seteuid(0)
        os.setegid(0)


@pytest.mark.parametrize("what", ["folder", "file", "both"])
def test_every_read_command_reads_a_read_only_catalogue(what):
    folder = tempfile.mkdtemp(prefix="sharpzone-ro-")  # reachable by the other user
    try:
        os.chmod(folder, 0o755)
        path = os.path.join(folder, "catalog.sqlite")
        with open_catalog(path):
            pass
        for command in READ:  # imports first, as ourselves: "nobody" may not read this Python's library
            assert CliRunner().invoke(app, ["--catalog", path, *command]).exit_code == 0
        os.chmod(path, 0o444 if what != "folder" else 0o644)
        if what != "file":
            os.chmod(folder, 0o555)
        for command in READ:
            with _as_other_user():
                result = CliRunner().invoke(app, ["--catalog", path, *command])
            assert result.exit_code == 0, (command, result.stderr)
            assert result.stderr == ""
    finally:
        os.chmod(folder, 0o755)
        shutil.rmtree(folder)
