"""The column-at-a-time writers of ``--json``/``--jsonl`` and ``--csv`` give, byte for byte,
what the general-purpose libraries give a row at a time: ``orjson.dumps`` of each row's dict
(the previous path) and Python's ``csv.writer`` over each row (RFC 4180 quoting as the
module does it), on awkward data: quotes, commas, newlines, carriage returns, unicode,
backslashes, ``%`` (the row template's own mark), leading ``=`` ``+`` ``-`` ``@``, NaN, None,
infinity, -0.0, numbers orjson needs ``default`` for, shared lists."""

from __future__ import annotations

import csv
import io
import itertools
import json
import math

import numpy as np
import orjson
from hypothesis import given, settings
from hypothesis import strategies as st

from sharpzone.report.cells import csv_lines, json_objects
from sharpzone.report.jsonout import plain
from sharpzone.report.spreadsheet import FORMULA_STARTS, safe_cell

TEXTS = [
    "plain", "a,b", 'say "cheese"', '","', '"', "ends with a backslash\\", '\\",\\"', "line\nbreak",
    "cr\rreturn", "crlf\r\n", "tab\there", "", " leading space", "Größe ƒ/1.8 — 東京", "emoji \U0001f600",
    "=cmd|' /C calc'!A0", "+1+2", "-2+3", "@SUM(A1)", "\tx", "\rx", "-0.5", "+3", "nul\x00byte", "%s %d %%",
    "null", "inf", "rtl\u202eevil\u202c", "\u2028separator",
]
FLOATS = [0.0, -0.0, 1e-7, 1e22, 1.5, 2.8, math.nan, math.inf, -math.inf, 123456789.123456789, 5e-324]
SHARED = ["too-wide-open", "past-diffraction"]
OTHERS = [None, 0, -1, 2**53, True, False, SHARED, SHARED, [], ["a,b", "c"], ["=x"], np.float64(2.5)]
REMEDIES = [[{"flag": "out-of-reach", "text": 'a, "b"\nc'}], [], {"flag": "x", "text": "y"}]  # JSON only


def _columns(count: int, *, remedies: bool = False) -> list[list]:
    """Columns of every kind the writers meet: text, numbers, mixed, lists (and dicts)."""
    everything = TEXTS + FLOATS + OTHERS
    kinds = [TEXTS, FLOATS, everything, everything[::-1], [None, "inf", 3.5, "-inf"], OTHERS]
    return [list(itertools.islice(itertools.cycle(values), count)) for values in kinds + [REMEDIES] * remedies]


def _by_orjson(keys, columns) -> list[bytes]:
    """The previous path: a dict per row, ``orjson.dumps`` per dict."""
    return [orjson.dumps(dict(zip(keys, row)), default=plain) for row in zip(*columns)]


def _by_csv_module(columns) -> str:
    """``csv.writer`` a row at a time over the cells as ``frames --csv`` defines them: lists
    joined by ``;``, text a spreadsheet would run marked (``safe_cell``, OWASP's rule)."""
    def cell(value):
        if type(value) is list:
            value = ";".join(value)
        return safe_cell(value) if type(value) is str and value.startswith(FORMULA_STARTS) else value

    def line(row) -> str:  # quoting as for "\r\n" line ends (a bare CR quoted too), ended "\n"
        buffer = io.StringIO()
        csv.writer(buffer, lineterminator="\r\n").writerow([cell(value) for value in row])
        return buffer.getvalue()[:-2] + "\n"

    return "".join(map(line, zip(*columns)))


def test_json_objects_are_orjson_of_each_rows_dict_on_awkward_data():
    columns = _columns(3 * len(TEXTS + FLOATS + OTHERS), remedies=True)
    keys = ("text", "number", "mixed", "reversed", "distance", "other", "remedies")
    written = json_objects(keys, columns, default=plain)
    assert written == _by_orjson(keys, columns)
    # Read back by Python's own parser (RFC 8259): the values, NaN and infinity as null.
    second = json.loads(written[1])
    assert second["text"] == "a,b" and math.copysign(1, second["number"]) == -1.0  # -0.0 kept
    assert [json.loads(row)["number"] for row in written[6:9]] == [None, None, None]  # NaN, ±infinity


def test_a_column_cut_at_commas_only_where_they_separate():
    # Text holding commas and quotes next to numbers: the whole-column cut must not apply.
    columns = [['a","b', 1.5, None, "c,d"], [["x", "y"], [], ["z"], ["x", "y"]]]
    assert json_objects(("a", "b"), columns) == _by_orjson(("a", "b"), columns)


def test_csv_lines_are_the_csv_modules_rows_on_awkward_data():
    columns = _columns(3 * len(TEXTS + FLOATS + OTHERS))
    written = csv_lines(columns)
    assert written == _by_csv_module(columns)
    # Read back by the module's reader, which refuses a bare carriage return left unquoted.
    readable = TEXTS
    rows = list(csv.reader(io.StringIO(csv_lines([readable, FLOATS[: len(readable)] * 3]))))
    texts = [row[0] for row in rows]
    assert len(rows) == len(readable)
    # Formulas marked with an apostrophe (OWASP), number text left alone, the rest as written.
    assert texts[readable.index("=cmd|' /C calc'!A0")] == "'=cmd|' /C calc'!A0"
    assert texts[readable.index("@SUM(A1)")] == "'@SUM(A1)" and texts[readable.index("+1+2")] == "'+1+2"
    assert texts[readable.index("-0.5")] == "-0.5" and texts[readable.index("+3")] == "+3"
    assert texts[readable.index("line\nbreak")] == "line\nbreak"
    assert texts[readable.index("cr\rreturn")] == "cr\rreturn" and texts[readable.index("\rx")] == "'\rx"  # marked, as a tab
    assert texts[readable.index('say "cheese"')] == 'say "cheese"' and texts[readable.index('","')] == '","'
    assert [row[1] for row in rows[:4]] == ["0.0", "-0.0", "1e-07", "1e+22"]  # repr, as the module writes floats
    assert rows[6][1] == "nan" and rows[7][1] == "inf"


def test_columns_every_row_writes_the_same_go_into_the_template():
    # Equal floats write the same except 0.0 and -0.0 (equal, written differently); a
    # constant text holding "%" must not be read as a template mark.
    columns = [["same %s 100%"] * 4, [0.0, -0.0, 0.0, 0.0], [2.5] * 4, [None] * 4, [SHARED] * 4, [7] * 4,
               [1, True, 1, 1], ["a,b"] * 4]
    keys = tuple("abcdefgh")
    assert json_objects(keys, columns) == _by_orjson(keys, columns)
    constant = [columns[n] for n in (0, 2, 3, 4, 5, 7)]  # only columns every row writes the same
    assert json_objects(keys[: len(constant)], constant) == _by_orjson(keys[: len(constant)], constant)
    assert json_objects(("%d",), [["%s"] * 3]) == [b'{"%d":"%s"}'] * 3  # every row the same
    wide = [[float(row * column) for row in range(5)] for column in range(40)]  # more than one template
    assert json_objects(tuple(f"k{n}" for n in range(40)), wide) == _by_orjson(tuple(f"k{n}" for n in range(40)), wide)


def test_the_header_row_and_no_rows():
    assert csv_lines([["path"], ["far_m"]]) == "path,far_m\n"
    assert csv_lines([[], []]) == ""
    assert json_objects(("a",), [[]]) == []


VALUES = st.one_of(st.none(), st.floats(), st.integers(min_value=-2**63, max_value=2**64 - 1), st.booleans(),
                   st.text(), st.text(alphabet=',"\\\r\n=+-@%\t '), st.lists(st.text(max_size=4), max_size=3))


@settings(max_examples=300, deadline=None)
@given(st.lists(st.tuples(VALUES, VALUES, VALUES), max_size=12))
def test_any_values_are_written_as_the_libraries_write_them(rows):
    columns = [list(column) for column in zip(*rows)] if rows else [[], [], []]
    assert json_objects(("a", "b", "c"), columns, default=plain) == _by_orjson(("a", "b", "c"), columns)
    assert csv_lines(columns) == _by_csv_module(columns)


def test_float_values_read_as_pandas_to_numeric_reads_them():
    """``float_values`` takes a float column as it is and anything else through pandas'
    ``to_numeric(errors="coerce")``: the same numbers either way (pandas as the reference)."""
    import pandas as pd

    from sharpzone.report.cells import float_values

    columns = [pd.Series(FLOATS), pd.Series([1, 2, 3]), pd.Series([None, "2.5", "x", 4, math.inf], dtype=object),
               pd.Series([True, False]), pd.Series([], dtype=float), pd.Series([1, None], dtype="Int64")]
    for column in columns:
        expected = pd.to_numeric(column, errors="coerce").to_numpy(dtype=float)
        np.testing.assert_array_equal(float_values(column), expected)
