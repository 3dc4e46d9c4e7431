"""Machine output written a chunk at a time: the same frames, in the same order, whatever the
chunk size; ``--json`` a list of objects and ``--jsonl`` one object a line, both read back by
Python's own ``json`` module (RFC 8259 parser, the reference for "valid JSON" here)."""

from __future__ import annotations

import csv
import io
import json

from typer.testing import CliRunner

from sharpzone.cli.app import app
from tests.cli.test_frames_commands import shoot_catalog  # noqa: F401  (the five-frame shoot)

runner = CliRunner()


def run(url, *args):
    return runner.invoke(app, ["--catalog", url, *args])


def test_chunks_give_the_frames_of_one_pass_in_the_same_order(shoot_catalog, monkeypatch):  # noqa: F811
    from sharpzone.analysis.frames import FrameFilter, check_shoot, iter_check_shoot
    from sharpzone.catalog.engine import session_scope
    from sharpzone.report.frames_machine import check_records

    with session_scope(shoot_catalog) as session:
        whole = check_records(check_shoot(session, FrameFilter()).frames)
        chunks = list(iter_check_shoot(session, FrameFilter(), chunk_rows=2))
        pieces = [item for chunk in chunks for item in check_records(chunk)]
    assert [len(chunk) for chunk in chunks] == [2, 2, 1]
    assert pieces == whole
    assert [item["path"].rsplit("/", 1)[1] for item in whole] == [
        "held.jpg", "wide.jpg", "misfocused.jpg", "unknown.jpg", "infinity.jpg"]  # capture order


def test_streamed_json_is_one_document_whatever_the_chunk(shoot_catalog, monkeypatch):  # noqa: F811
    import sharpzone.analysis.frames as frames_module

    whole = run(shoot_catalog, "check", "--json")
    monkeypatch.setattr(frames_module, "CHUNK_ROWS", 2)
    monkeypatch.setattr(frames_module.iter_checked, "__kwdefaults__",
                        {**frames_module.iter_checked.__kwdefaults__, "chunk_rows": 2})
    chunked = run(shoot_catalog, "check", "--json")
    assert whole.exit_code == 0 and chunked.exit_code == 0, whole.output + chunked.output
    assert chunked.stdout == whole.stdout
    document = json.loads(whole.stdout)
    assert isinstance(document, list) and len(document) == 5
    by_name = {item["path"].rsplit("/", 1)[1]: item for item in document}
    assert by_name["infinity.jpg"]["far_m"] == "inf" and by_name["infinity.jpg"]["focus_m"] == "inf"
    assert by_name["unknown.jpg"]["focus_m"] is None
    # One object a line, indented by two spaces, between the brackets.
    lines = whole.stdout.splitlines()
    assert lines[0] == "[" and lines[-1] == "]" and all(line.startswith("  {") for line in lines[1:-1])


def test_jsonl_is_the_json_objects_one_a_line(shoot_catalog):  # noqa: F811
    for command in ("frames", "check"):
        listed = json.loads(run(shoot_catalog, command, "--json").stdout)
        lines = run(shoot_catalog, command, "--jsonl").stdout.splitlines()
        assert [json.loads(line) for line in lines] == listed


def test_csv_streams_the_same_rows_as_the_frames_json(shoot_catalog):  # noqa: F811
    listed = json.loads(run(shoot_catalog, "frames", "--json").stdout)
    for command in ("frames", "check"):
        rows = list(csv.DictReader(io.StringIO(run(shoot_catalog, command, "--csv").stdout)))
        assert [row["path"] for row in rows] == [item["path"] for item in listed]
        assert [row["far_m"] for row in rows] == ["" if item["far_m"] is None else str(item["far_m"])
                                                  for item in listed]


def test_nothing_matching_is_an_empty_list(shoot_catalog):  # noqa: F811
    assert run(shoot_catalog, "frames", "--json", "--f-min", "16").stdout == "[]\n"
    assert run(shoot_catalog, "check", "--jsonl", "--f-min", "16").stdout == ""
    assert run(shoot_catalog, "frames", "--csv", "--f-min", "16").stdout.splitlines()[0].startswith("path,")


def test_check_json_refuses_a_shoot_without_plan_before_writing(catalog_url):
    from sharpzone.catalog.engine import session_scope
    from sharpzone.catalog.models import Frame
    from sharpzone.catalog.service import add_shoot

    with session_scope(catalog_url) as session:
        shoot = add_shoot(session, "Unplanned")
        session.add(Frame(path="/shoots/x.jpg", file_size=1, file_mtime_ns=1, shoot=shoot, focal_mm=50.0,
                          f_number=8.0, focus_mm=3000.0, focus_source="exif"))
    result = run(catalog_url, "check", "--shoot", "Unplanned", "--json")
    assert result.exit_code != 0
    assert result.stdout == ""
    assert "no plan" in result.output


def test_frames_without_a_measurement_read_the_same_once_another_is_measured(shoot_catalog):  # noqa: F811
    # While frame_blur is empty the frames query leaves its join out; once one frame is
    # measured it joins again: the unmeasured frames' objects must not change (invented data).
    from sqlalchemy import select

    from sharpzone.analysis.frames import FrameFilter, frames_with_zones
    from sharpzone.catalog.engine import session_scope
    from sharpzone.catalog.models import Frame, FrameBlur
    from sharpzone.report.frames_machine import check_records

    with session_scope(shoot_catalog) as session:
        before = check_records(frames_with_zones(session, FrameFilter()).frames)
        first = session.execute(select(Frame).order_by(Frame.captured_at, Frame.path)).scalars().first()
        session.add(FrameBlur(frame_id=first.id, method="invented", method_version=1, analysed_long_px=640,
                              focus_blur_px=2.0, best_blur_px=1.5, regions_measured=4, regions_total=9))
    with session_scope(shoot_catalog) as session:
        after = check_records(frames_with_zones(session, FrameFilter()).frames)
    assert all(item["blur"] is None for item in before)
    assert after[0]["blur"]["analysed_long_px"] == 640 and after[0]["blur"]["focus_blur_px"] == 2.0
    assert after[1:] == before[1:]


def test_a_reader_that_goes_away_part_way_gets_no_traceback(tmp_path):
    """``sharpzone frames --jsonl | head``: the command stops quietly (exit 1, nothing on
    stderr), its cursor closed while the catalogue is still open."""
    import os
    import subprocess
    import sys

    from sharpzone.catalog.engine import session_scope
    from sharpzone.catalog.models import Frame
    from sharpzone.catalog.service import add_shoot

    url = str(tmp_path / "big.sqlite")
    with session_scope(url) as session:
        shoot = add_shoot(session, "Long day")
        session.add_all(Frame(path=f"/cards/day/IMG_{number:05d}.JPG", file_size=1000, file_mtime_ns=number,
                              shoot=shoot, focal_mm=50.0, f_number=4.0, focus_mm=3000.0 + number, focus_source="exif")
                        for number in range(6000))  # a few MB of output: far more than a pipe holds
    # Buffered, as a shell runs it (unbuffered, a write the reader cut short returns short
    # instead of failing, and a command whose output was one write ends with 0).
    env = {**{key: value for key, value in os.environ.items() if key != "PYTHONUNBUFFERED"}, "SHARPZONE_CATALOG": url}
    for output in ("--jsonl", "--json", "--csv"):
        command = subprocess.Popen([sys.executable, "-m", "sharpzone", "frames", output], stdout=subprocess.PIPE,
                                   stderr=subprocess.PIPE, env=env)
        assert len(command.stdout.read(300)) == 300
        command.stdout.close()  # the reader goes away
        errors = command.stderr.read().decode()
        assert command.wait(timeout=60) == 1, errors
        assert errors == "", output
