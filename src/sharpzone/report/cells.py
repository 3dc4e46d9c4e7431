"""Columns of machine values written as JSON or CSV text a column at a time, byte for byte as
orjson writes them inside an object and as the ``csv`` module writes them in a row, so a
chunk of ten thousand frames costs a few calls per column instead of a dict and an encoder
call per frame (issue 16). Values are the machine interface's plain values: numbers, text,
``None``, lists and the dicts of the blur and remedies (rows that share one list or dict
share its text).
"""

from __future__ import annotations

import csv
import io
import re
from typing import Any

from sharpzone.report.spreadsheet import FORMULA_STARTS, safe_cell


_SCALARS = frozenset((float, int, bool, type(None)))


def json_cells(values: list, default=None) -> list[bytes]:
    """Each value as orjson writes it (``default`` for what orjson does not know): a column
    of numbers in one call, cut at its commas (numbers hold none); text once per distinct
    value; anything else (lists, dicts, mixed) once per distinct object, so rows that
    share one list share its text."""
    import orjson

    kinds = set(map(type, values))
    if kinds <= _SCALARS | {str}:
        if str not in kinds:
            return orjson.dumps(values)[1:-1].split(b",") if values else []
        if kinds <= {str, type(None)}:
            said = {value: orjson.dumps(value) for value in dict.fromkeys(values)}
            return list(map(said.__getitem__, values))
        text = orjson.dumps(values)  # numbers and text: cut where the commas are all separators
        if text.count(b",") == len(values) - 1:
            return text[1:-1].split(b",")
    shared: dict[int, bytes] = {}
    return [shared[key] if (key := id(value)) in shared else shared.setdefault(key, orjson.dumps(value, default=default))
            for value in values]


def json_objects(keys: tuple[str, ...], columns: list[list], default=None) -> list[bytes]:
    """The rows as compact JSON objects, ``keys`` in order, exactly as ``orjson.dumps`` of
    ``dict(zip(keys, row))``: one template filled per row."""
    import orjson

    template = b"{" + b",".join(orjson.dumps(key).replace(b"%", b"%%") + b":%s" for key in keys) + b"}"
    return list(map(template.__mod__, zip(*(json_cells(column, default) for column in columns))))


# What makes the csv module quote a cell, or what it may treat specially (NUL): such text is
# handed to the module itself; other text it writes as it is.
_CSV_SPECIAL = re.compile('[,"\r\n\x00]')


def _csv_module_cell(value: Any) -> str:
    buffer = io.StringIO()
    csv.writer(buffer, lineterminator="\n").writerow([value, None])
    return buffer.getvalue()[:-2]  # the cell, without the empty one after it and the line end


def _csv_cell(value: Any) -> str:
    """One cell as ``csv.writer`` writes it, lists joined by ``;`` and text a spreadsheet
    would run marked (``safe_cell``)."""
    if type(value) is list:
        value = ";".join(value)
    if type(value) is str:
        if value.startswith(FORMULA_STARTS):  # only such text goes through safe_cell (which decides)
            value = safe_cell(value)
        if not _CSV_SPECIAL.search(value):
            return value
    return _csv_module_cell(value)


def csv_cells(values: list) -> list[str]:
    """A column as CSV cells (see ``_csv_cell``; unknown empty, a float as its ``repr``,
    which is the module's ``str``), each distinct text or list once."""
    said: dict[Any, str] = {}

    def cell(value):
        key = value if type(value) is str else id(value)
        text = said.get(key)
        if text is None:
            text = said[key] = _csv_cell(value)
        return text

    return [repr(value) if type(value) is float else "" if value is None else cell(value) for value in values]


def csv_lines(columns: list[list]) -> str:
    """The rows of two or more ``columns`` as CSV lines (each ending ``\\n``), as ``csv.writer``
    writes them (a row of one column differs: the module writes one empty cell as ``""``)."""
    if not columns[0]:
        return ""
    return "\n".join(map(",".join, zip(*(csv_cells(column) for column in columns)))) + "\n"
