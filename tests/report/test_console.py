"""``report.console``: fitting a table by column priority, wrapping without parting a number
from its unit."""

from __future__ import annotations

import io

from sharpzone.report.console import Column, SafeConsole, fit_table, print_fitted, wrap_text
from sharpzone.report.frames_render import CHECK_DETAIL_ROWS


def test_the_check_detail_limit_is_the_documented_one():
    assert CHECK_DETAIL_ROWS == 20


def test_fit_table_drops_by_priority_and_never_cuts():
    rows = [{"name": "VHB_0001.JPG", "value": "12345.678 mm", "minor": "0.00617 mm", "note": "a b c d e f g h"}]
    columns = [
        Column("File", lambda row: row["name"]),
        Column("Value", lambda row: row["value"], "right"),
        Column("Minor", lambda row: row["minor"], "right", priority=2),
        Column("Note", lambda row: row["note"], wrap=True, priority=1),
    ]
    for width, kept in ((80, ["Minor", "Note"]), (45, ["Note"]), (30, [])):
        buffer = io.StringIO()
        console = SafeConsole(file=buffer, width=width, markup=False)
        fitted = fit_table(columns, rows, console=console)
        print_fitted(console, fitted)
        text = buffer.getvalue()
        assert "VHB_0001.JPG" in text and "12345.678 mm" in text and "…" not in text
        assert [header for header in ("Minor", "Note") if header not in fitted.dropped] == kept


def test_wrapping_never_parts_a_number_from_its_unit():
    wrapped = wrap_text("a focus stack of 14 frames at f/2.8 would hold 41.7 cm–42.5 cm", 18).plain
    for piece in ("14 frames", "41.7 cm–42.5 cm"):
        assert piece in wrapped.splitlines() or any(piece in line for line in wrapped.splitlines())


def test_the_worst_frames_come_first_in_the_documented_verdict_order():
    """``worst_first``: the most serious verdict first (the order of ``FLAG_STYLES``, the
    README's verdict list), more verdicts before fewer, and frames of equal severity in
    their own order (Python's sort is stable: the order ``sorted`` of the rows gave)."""
    from sharpzone.report.frames_render import worst_first

    shared = ["out-of-reach"]
    flag_lists = [["distance-unknown"], shared, ["too-wide-open", "past-diffraction"], ["past-diffraction"],
                  shared, ["too-wide-open"], ["some-future-verdict"], [], ["out-of-reach", "past-diffraction"]]
    # too-wide-open with two verdicts, then alone; out-of-reach with two, then the two alone in
    # frame order; past-diffraction; distance-unknown; a code not listed; none.
    assert worst_first(flag_lists) == [2, 5, 8, 1, 4, 3, 0, 6, 7]
    assert worst_first([]) == []


def test_a_fitted_table_draws_as_rich_would_lay_it_out_itself():
    """A table that fits is handed to rich with each column's width (so rich measures no
    cell again); rich laying out the same table without those widths (the reference) draws
    it character for character the same, at every terminal width."""
    import copy

    from rich.text import Text

    rows = [{"name": f"VHB_{number:04d}.JPG", "value": f"{number * 37.5:.1f} mm", "lines": "a\nlonger line",
             "note": "wraps at spaces " * (number % 4), "flag": Text("too-wide-open", style="bold")}
            for number in range(40)]
    columns = [
        Column("File", lambda row: row["name"]),
        Column("Value with a long header", lambda row: row["value"], "right"),
        Column("Lines", lambda row: row["lines"]),
        Column("Note", lambda row: row["note"].strip(), wrap=True, priority=1),
        Column("Verdict", lambda row: row["flag"]),
    ]
    for width in (50, 80, 120):
        console = SafeConsole(file=io.StringIO(), width=width, markup=False)
        fitted = fit_table(columns, rows, console=console)
        # At 50 columns the note must wrap narrower than its natural width: rich lays that out.
        assert any(column.width is not None for column in fitted.table.columns) == (width > 50)
        reference = copy.deepcopy(fitted.table)
        for column in reference.columns:
            column.width = None
        drawn = []
        for table in (fitted.table, reference):
            buffer = io.StringIO()
            SafeConsole(file=buffer, width=width, markup=False).print(table)
            drawn.append(buffer.getvalue())
        assert drawn[0] == drawn[1]
