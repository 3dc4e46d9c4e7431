"""Tables fit 80 and 120 columns without cutting a number or a file name; minor columns
give way in a stated order, ``--wide`` shows them all, long checks show the worst first."""

from __future__ import annotations

import datetime as dt
import os
import re

import pytest
from typer.testing import CliRunner

from sharpzone.cli.app import app

CHECK_DETAIL_ROWS = 20  # what the README promises: the 20 worst flagged frames unless --all

runner = CliRunner()
LENS = "Altamira Optical 24-70mm F2.8 Mark II Asph"  # invented, long on purpose


@pytest.fixture
def long_catalog(tmp_path):
    """60 frames through a long-named lens, planned to hold 2.5–4 m; most miss it."""
    from sharpzone.catalog.engine import session_scope
    from sharpzone.catalog.models import Frame
    from sharpzone.catalog.service import add_body, add_lens, add_shoot

    url = str(tmp_path / "catalog.sqlite")
    with session_scope(url) as session:
        body = add_body(session, "Korvath K7 Pro Studio", exif_make="Korvath", exif_model="K7", format_name="36x24",
                        pixel_width=6000, pixel_height=4000)
        lens = add_lens(session, LENS, focal_min_mm=24, focal_max_mm=70, max_aperture_wide=2.8, min_aperture=22,
                        close_focus_mm=380, exif_names=["ALTAMIRA 24-70mm F2.8 AX II"])
        shoot = add_shoot(session, "Boathouse group portraits", near_mm=2500, far_mm=4000)
        for number in range(60):
            f_number = (2.8, 4.0, 8.0)[number % 3]
            session.add(Frame(path=f"/cards/2026-05-01/wedding [final] VHB_{number:04d}.JPG", file_size=1000,
                              file_mtime_ns=number, shoot=shoot, body=body, lens=lens, focal_mm=70.0,
                              f_number=f_number, focus_mm=3000.0 + number, focus_source="exif",
                              captured_at=dt.datetime(2026, 5, 1, 10, number)))
    return url


def _run(catalog, columns, *args):
    result = runner.invoke(app, ["--catalog", catalog, *args], env={"COLUMNS": str(columns)})
    assert result.exit_code == 0, result.output
    return result.output




@pytest.mark.parametrize("columns", [80, 120])
@pytest.mark.parametrize("command", [("frames",), ("check",), ("stats",), ("lens", "list"), ("body", "list"),
                                     ("shoot", "list"), ("format", "list")])
def test_tables_fit_without_cutting(long_catalog, columns, command):
    output = _run(long_catalog, columns, *command)
    assert "…" not in output, output
    assert max(len(line.rstrip()) for line in output.splitlines()) <= columns, output
    if command in (("frames",), ("check",)):
        assert "wedding [final] VHB_0001.JPG" in output  # the file name whole, as written
    if command == ("frames",):
        for number in ("70 mm", "f/2.8", "3.00 m"):
            assert number in output


def test_minor_columns_go_first_and_wide_shows_all(long_catalog):
    narrow = _run(long_catalog, 80, "frames")
    assert "Near" in narrow and "Far" in narrow and "Verdict" in narrow
    assert "Airy disk" not in narrow.split("Not shown")[0]
    assert "Not shown at this width: Airy disk, CoC, Hyperfocal" in " ".join(narrow.split())
    wide = _run(long_catalog, 80, "frames", "--wide")
    for header in ("Lens", "Depth", "Hyperfocal", "CoC", "Airy disk"):
        assert header in wide
    assert "Not shown" not in wide


def test_coc_and_airy_disk_in_the_same_unit(long_catalog):
    wide = _run(long_catalog, 80, "frames", "--wide")
    row = next(line for line in wide.splitlines() if "VHB_0000" in line)
    assert "µm" not in row and row.count(" mm") >= 3  # focal, CoC and Airy disk all in mm


def test_long_check_shows_the_summary_and_the_worst_first(long_catalog):
    short = _run(long_catalog, 120, "check")
    assert "By verdict" in short and "By lens" in short
    assert short.count("VHB_") == CHECK_DETAIL_ROWS
    assert "--all lists every one" in short
    everything = _run(long_catalog, 120, "check", "--all")
    assert everything.count("VHB_") > CHECK_DETAIL_ROWS
    assert "--all lists" not in everything
    # Every frame listed was flagged, so the titles say so, with the counts the summary gives.
    flagged = int(re.search(r"([\d,]+) flagged", short).group(1).replace(",", ""))
    assert f"The {CHECK_DETAIL_ROWS} worst of {flagged:,} flagged frames" in short
    assert f"{flagged - CHECK_DETAIL_ROWS:,} more not shown" in short
    assert "Flagged frames and what would have worked" in everything


def _one_lens_catalog(tmp_path, lens: tuple[str, float], frames: list[dict], *, near_mm=2000, far_mm=6000,
                      widest: float = 2.8) -> str:
    """A catalogue of one body, one lens (name, focal length; ``widest`` f-number) and one
    shoot "Quay" planned to hold ``near_mm``–``far_mm``, with ``frames`` (each a dict of
    Frame fields; the file name, shoot, body, lens and focal length filled in where not
    given)."""
    from sharpzone.catalog.engine import session_scope
    from sharpzone.catalog.models import Frame
    from sharpzone.catalog.service import add_body, add_lens, add_shoot

    url = str(tmp_path / "catalog.sqlite")
    name, focal = lens
    with session_scope(url) as session:
        body = add_body(session, "Korvath K1", exif_make="Korvath", exif_model="K1", format_name="36x24")
        lens_row = add_lens(session, name, focal_min_mm=focal, max_aperture_wide=widest, min_aperture=22)
        shoot = add_shoot(session, "Quay", near_mm=near_mm, far_mm=far_mm)
        for number, fields in enumerate(frames):
            values = {"path": f"/cards/quay/QY_{number:04d}.JPG", "file_size": 1, "file_mtime_ns": number,
                      "focal_mm": float(focal), **fields}
            session.add(Frame(shoot=shoot, body=body, lens=lens_row, **values))
    return url


def _frame(number: int, focus, near=None, far=None, f_number=4.0, name="QY_{:04d}.JPG") -> dict:
    return {"path": "/cards/quay/" + name.format(number), "focus_mm": focus, "focus_near_mm": near,
            "focus_far_mm": far, "f_number": f_number, "focus_source": "exif" if focus else "none"}


def test_a_check_listing_frames_that_were_not_judged_does_not_call_them_flagged(tmp_path):
    """Frames with no focus distance are not judged; they are listed with the flagged ones
    (they may need a look), and the title names them for what they are; counts of a
    thousand and more are grouped by thousands, as everywhere a person reads them."""
    url = _one_lens_catalog(tmp_path, ("Altamira 50mm", 50), [
        _frame(number, None if number % 2 else 3000.0 + number, f_number=1.8) for number in range(2400)],
        near_mm=2500, far_mm=4000, widest=1.8)
    short = _run(url, 120, "check")
    assert "Checked 2,400 frames" in short and "1,200 not judged" in short
    assert "flagged frames" not in short
    assert f"The {CHECK_DETAIL_ROWS} worst of" in short and "frames that did not pass" in short


@pytest.mark.parametrize("width", [30, 44, 60, 80, 200])
def test_a_long_table_is_fitted_as_rich_measures_the_whole_of_it(width):
    """``fit_table`` measures only the rows that decide each column's width; rich (the
    reference here) measuring the whole fitted table must agree: it fits, and the column
    given way last would not have."""
    from rich.console import Console
    from rich.measure import Measurement

    from sharpzone.report.console import Column, fit_table

    rows = [{"name": f"frame {'x' * (n % 17)}", "note": "wide open " * (n % 5) + f"run{'y' * (n % 23)}",
             "focus": f"{n * 1.37:.2f} m", "id": str(n ** 3)} for n in range(400)]
    rows[251]["note"] = "one-very-long-word-only-here-" * 2  # the longest word, deep in the rows
    columns = [Column("Frame", lambda row: row["name"]), Column("Note", lambda row: row["note"], priority=1, wrap=True),
               Column("Focus", lambda row: row["focus"], justify="right", priority=2),
               Column("Id", lambda row: row["id"], justify="right", priority=3)]
    console = Console(width=width, file=open(os.devnull, "w"))  # noqa: SIM115 - closed with the console
    fitted = fit_table(columns, rows, console=console)

    def measured(table):
        return Measurement.get(console, console.options.update(width=10**6), table)

    assert len(fitted.table.rows) == len(rows)
    shown = [column for column in columns if column.header not in fitted.dropped]
    if len(shown) > 1:  # one column left may be wider than the screen: nothing more to drop
        assert measured(fitted.table).minimum <= width
    if fitted.dropped:
        restored = fit_table([*shown, next(c for c in columns if c.header == fitted.dropped[-1])], rows,
                             console=console, wide=True)
        assert measured(restored.table).minimum > width
    every = fit_table(columns, rows, console=console, wide=True)  # --wide: as wide as the widest row needs
    console.width = every.width
    with console.capture() as captured:
        console.print(every.table)
    longest = max((row["note"] for row in rows), key=len)
    assert any(longest in line for line in captured.get().splitlines())  # on one line, unwrapped
    console.file.close()


def test_the_streamed_check_report_prints_what_the_whole_check_prints(tmp_path):
    """``sharpzone check`` reads its frames a chunk at a time (``check_report``); over chunks
    of 7 frames its report is, character for character, the report of all the frames at
    once (``render_check`` of ``check_shoot``): the same counts, lenses, plans and the same
    frames listed, worst first, with and without ``--all``."""
    import io

    from sharpzone.analysis.frames import FrameFilter, check_shoot, iter_check_shoot
    from sharpzone.catalog.engine import session_scope
    from sharpzone.catalog.models import Frame
    from sharpzone.catalog.service import add_body, add_lens, add_shoot
    from sharpzone.report.console import SafeConsole
    from sharpzone.report.frames_render import check_report, render_check

    url = str(tmp_path / "catalog.sqlite")
    with session_scope(url) as session:
        body = add_body(session, "Korvath K1", exif_make="Korvath", exif_model="K1", format_name="36x24")
        lenses = [add_lens(session, name, focal_min_mm=focal, max_aperture_wide=2.8, min_aperture=22)
                  for name, focal in (("Altamira 35mm", 35), ("Senlo 85mm", 85))]
        shoot = add_shoot(session, "Quay", near_mm=2500, far_mm=4000)
        for number in range(90):
            lens = lenses[number % 2]
            focus = None if number % 5 == 0 else (1500.0, 3000.0, 3200.0, 9000.0)[number % 4]
            session.add(Frame(path=f"/cards/quay/QY_{number:04d}.JPG", file_size=1, file_mtime_ns=number,
                              shoot=shoot, body=body, lens=lens, focal_mm=lens.focal_min_mm,
                              f_number=(2.8, 5.6, 11.0, 22.0)[number % 4 - 1], focus_mm=focus,
                              focus_source="exif" if focus else "none"))

    def printed(result, show_all):
        buffer = io.StringIO()
        render_check(result, show_all=show_all, console=SafeConsole(file=buffer, width=120, markup=False))
        return buffer.getvalue()

    where = FrameFilter(shoot="Quay")
    with session_scope(url) as session:
        whole = check_shoot(session, where)
        for show_all in (False, True):
            streamed = check_report(iter_check_shoot(session, where, chunk_rows=7), keep=None if show_all else 20)
            assert printed(streamed, show_all) == printed(whole, show_all)
    verdicts = set(flag for flags in whole.frames["flags"] for flag in flags)
    assert "distance-unknown" in verdicts and len(verdicts) >= 3, verdicts  # a varied list
    assert "passed" in set(whole.frames["outcome"])


@pytest.mark.parametrize("imperial", [False, True])
def test_a_wide_focus_bracket_takes_two_lines_and_the_verdicts_stay_whole(tmp_path, imperial):
    """A bracket whose ends print in different units ("84.0 cm" to "1.02 m") is split after
    its dash in the frames table where the table would not fit 80 columns otherwise (long
    file names), so the verdict column is not cut; with room to spare it stays on one line.
    A bracket in one unit keeps that unit once ("(14.5–15.3)" under "14.9 m"; "(47.6–50.2)"
    under "48.9 ft")."""
    url = _one_lens_catalog(tmp_path, ("Senlo 100mm", 100), [
        _frame(number, focus, near, far, name="QUAY_{:06d}.JPG")
        for number, (focus, near, far) in enumerate([(881.0, 840.0, 1020.0), (14900.0, 14500.0, 15300.0)] * 3)])
    text = _run(url, 80, "frames", *(["--imperial"] if imperial else []))
    lines = text.splitlines()
    assert all(len(line) <= 80 for line in lines)
    if imperial:
        assert "(47.6–50.2)" in text and "(2 ft 9 in–" in text and "3 ft 4 in)" in text
    else:
        assert "(14.5–15.3)" in text and "(84.0 cm–" in text and "1.02 m)" in text
        assert "(84.0 cm–1.02 m)" not in text
        assert text.count("focus-misplaced") + text.count("out-of-reach") + text.count("too-wide-open") >= 6
        assert "(84.0 cm–1.02 m)" in _run(url, 120, "frames")


def test_verdicts_too_long_for_80_columns_break_after_a_hyphen_not_off_the_edge(tmp_path):
    """With every droppable column gone the frames table is still wider than 80 columns when
    a verdict as long as "distance-uncertain" is in it: then the long verdicts take two
    lines, broken after their last hyphen, instead of the terminal cutting them; at 120
    columns they stay whole."""
    # A wide bracket around a good distance: some of it holds, some not (uncertain); a
    # frame focused too far; file names as long as a phone camera's.
    rows = [(3000.0, 1500.0, 9000.0, 5.6), (3000.0, 2000.0, 4500.0, 2.8), (14900.0, None, None, 2.8)]
    url = _one_lens_catalog(tmp_path, ("Altamira 24mm", 24), [
        _frame(number, focus, near, far, f_number, name="QUAY_{:05d}.JPEG")
        for number, (focus, near, far, f_number) in enumerate(rows * 2)])
    narrow = _run(url, 80, "frames")
    assert all(len(line) <= 80 for line in narrow.splitlines())
    assert "distance-uncertain" not in narrow and "distance-uncertai" not in narrow
    lines = narrow.splitlines()
    broken = [index for index, line in enumerate(lines) if line.rstrip().endswith("distance-")]
    assert broken and all(lines[index + 1].rstrip().endswith("uncertain") for index in broken)
    broken = [index for index, line in enumerate(lines) if line.rstrip().endswith("too-wide-")]
    assert broken and all(lines[index + 1].rstrip().endswith("open") for index in broken)
    assert "distance-uncertain" in _run(url, 120, "frames")


def test_a_list_at_80_columns_keeps_its_headers_whole_when_its_cells_fit(tmp_path):
    """The lens list at 80 columns: the wrapping columns' headers are broken at spaces to
    the width their cells need ("EXIF" over "names"), so rich does not widen those columns
    and squeeze the last one ("Confir" before); with room to spare they stay on one line."""
    from sharpzone.catalog.engine import session_scope
    from sharpzone.catalog.service import add_lens

    url = str(tmp_path / "catalog.sqlite")
    with session_scope(url) as session:
        for focal in (24, 50, 85, 200):
            add_lens(session, f"Altamira {focal}mm", focal_min_mm=focal, max_aperture_wide=2.8)
        add_lens(session, "Senlo 100mm", focal_min_mm=100, max_aperture_wide=2.8, min_aperture=22)
    narrow = _run(url, 80, "lens", "list")
    assert all(len(line) <= 80 for line in narrow.splitlines())
    assert "Confirmed" in narrow and "Max" in narrow and "magnification" in narrow
    wide = _run(url, 200, "lens", "list")
    assert "EXIF names" in wide and "Confirmed" in wide


def test_the_frames_table_in_feet_and_inches_fits_80_columns_without_cutting(tmp_path):
    """In feet and inches a close frame's near and far limits ("2 ft 10.2 in") and a long
    file name make the frames table wider than 80 columns with every droppable column gone:
    the limits then go feet over inches and the long verdicts break after a hyphen, and no
    line is cut."""
    from sharpzone.report.frames_render import FLAG_STYLES

    rows = [(881.0, 840.0, 1020.0, 4.0), (2900.0, None, None, 2.8), (None, None, None, 8.0)]
    url = _one_lens_catalog(tmp_path, ("Senlo 100mm", 100), [
        _frame(number, focus, near, far, f_number, name="QUAY_{:05d}.JPEG")
        for number, (focus, near, far, f_number) in enumerate(rows * 2)])
    lines = _run(url, 80, "frames", "--imperial").splitlines()
    assert all(len(line) <= 80 for line in lines)
    rows_at = [index for index, line in enumerate(lines) if line.startswith("QUAY_")]
    assert len(rows_at) == 6
    codes = set(FLAG_STYLES) | {"passed"}
    for index in rows_at:  # each row's verdict, whole or broken after a hyphen onto the next line
        last = lines[index].split()[-1]
        assert last in codes or (last.endswith("-") and last + lines[index + 1].split()[-1] in codes), lines[index]
    # The close frame's limits (2 ft 10½ in to 2 ft 11 in): feet on its line, inches below.
    first = rows_at[0]
    assert re.search(r"\b2 ft\s+2 ft\s", lines[first]) and re.search(r"\b10½ in\s+11 in\b", lines[first + 1])
