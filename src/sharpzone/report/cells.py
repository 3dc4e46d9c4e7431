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
from typing import TYPE_CHECKING, Any

from sharpzone.report.spreadsheet import FORMULA_STARTS, safe_cell

if TYPE_CHECKING:
    import numpy as np


_SCALARS = frozenset((float, int, bool, type(None)))


class NumberColumn:
    """A column of numbers kept as an array until it is written: ``values`` (floats, NaN
    unknown, or integers) and ``texts``, pairs of (which rows, value) whose rows read that
    value (``None``, ``"inf"``) instead of their number."""

    __slots__ = ("values", "texts")

    def __init__(self, values, texts=()):
        self.values, self.texts = values, texts

    def tolist(self) -> list:
        """The column's plain values: numbers, the ``texts``' values, ``None`` for NaN."""
        import numpy as np

        out = self.values.astype(object)
        for rows, value in self.texts:
            out[rows] = value
        if self.values.dtype.kind == "f":
            out[np.isnan(self.values)] = None
        return out.tolist()


def float_values(column) -> np.ndarray:
    """A frames column (a ``Series``) as floats, NaN for unknown and for what is no number;
    a column of floats as it is (not copied: read it, do not change it)."""
    import numpy as np
    import pandas as pd

    if isinstance(column.dtype, np.dtype) and column.dtype.kind == "f":
        return column.to_numpy(dtype=float)
    return pd.to_numeric(column, errors="coerce").to_numpy(dtype=float)


def as_list(column) -> list:
    """A column's plain values, whether a list or a ``NumberColumn``."""
    return column.tolist() if isinstance(column, NumberColumn) else column


def _number_cells(column: NumberColumn) -> bytes | list[bytes]:
    """``json_column`` of a ``NumberColumn``: the numbers in one orjson call (which writes
    NaN as null, as it writes ``None``), the ``texts``' rows then set."""
    import numpy as np
    import orjson

    cells = orjson.dumps(column.values.tolist())[1:-1].split(b",") if len(column.values) else []
    for rows, value in column.texts:
        text = orjson.dumps(value)
        for row in np.flatnonzero(rows).tolist():
            cells[row] = text
    return cells[0] if cells and cells.count(cells[0]) == len(cells) else cells


def json_column(values, default=None) -> bytes | list[bytes]:
    """The column (a list or a ``NumberColumn``) as orjson writes each value (``default``
    for what orjson does not know): one text when every row's value writes the same (equal
    text, numbers or ``None``; one shared list), else each row's text. Numbers and text in one call, cut at the commas
    when those are all separators (their count says so); text holding commas once per
    distinct value; anything else (lists, dicts) once per distinct object."""
    import orjson

    if isinstance(values, NumberColumn):
        return _number_cells(values)
    kinds = set(map(type, values))
    if not values:
        return []
    first = values[0]
    if len(kinds) == 1 and type(first) in (str, int, float, type(None)) and values.count(first) == len(values):
        if first or type(first) is not float:  # equal floats other than ±0 write the same
            return orjson.dumps(first)
    if kinds <= _SCALARS | {str}:
        text = orjson.dumps(values)
        if text.count(b",") == len(values) - 1:
            return text[1:-1].split(b",")
        if kinds <= {str, type(None)}:  # text holding commas
            said = {value: orjson.dumps(value) for value in dict.fromkeys(values)}
            return list(map(said.__getitem__, values))
    shared: dict[int, bytes] = {}
    cells = [shared[key] if (key := id(value)) in shared else shared.setdefault(key, orjson.dumps(value, default=default))
             for value in values]
    return cells[0] if len(shared) == 1 else cells


# Columns filled into one template at a time: a row's values pass in a tuple, and CPython
# reuses tuples of fewer than 20 items (larger ones are allocated afresh for every row).
_TEMPLATE_COLUMNS = 16


def json_objects(keys: tuple[str, ...], columns: list[list], default=None) -> list[bytes]:
    """The rows as compact JSON objects, ``keys`` in order, exactly as ``orjson.dumps`` of
    ``dict(zip(keys, row))``: a column every row writes the same is part of the template,
    the others are filled in per row, ``_TEMPLATE_COLUMNS`` at a time (each template after
    the first taking the rows' text so far as its first value)."""
    import orjson

    count = len(columns[0]) if columns else 0
    groups: list[tuple[bytes, list]] = [(b"{", [])]  # (template, its columns)
    for position, (key, column) in enumerate(zip(keys, columns)):
        prefix = (b"," if position else b"") + orjson.dumps(key) + b":"
        text = json_column(column, default)
        template, cells = groups[-1]
        if isinstance(text, bytes):
            groups[-1] = (template + (prefix + text).replace(b"%", b"%%"), cells)
        elif len(cells) == _TEMPLATE_COLUMNS:
            groups.append((prefix.replace(b"%", b"%%") + b"%s", [text]))
        else:
            groups[-1] = (template + prefix.replace(b"%", b"%%") + b"%s", [*cells, text])
    template, cells = groups[-1]
    groups[-1] = (template + b"}", cells)
    if not count:
        return []
    if not groups[0][1]:  # every row the same
        return [groups[0][0].replace(b"%%", b"%")] * count
    filled = None
    for template, cells in groups:  # each template after the first starts with the rows so far
        if filled is not None:
            template, cells = b"%s" + template, [filled, *cells]
        filled = list(map(template.__mod__, zip(*cells)))
    return filled


# What makes the csv module quote a cell, or what it may treat specially (NUL): such text is
# handed to the module itself; other text it writes as it is.
_CSV_SPECIAL = re.compile('[,"\r\n\x00]')


def _csv_module_cell(value: Any) -> str:
    # Told that lines end in "\r\n", the module quotes a cell holding either character
    # (RFC 4180 2.6). With "\n" it leaves a bare carriage return unquoted, and its own reader
    # then refuses the file; the lines themselves still end in "\n".
    buffer = io.StringIO()
    csv.writer(buffer, lineterminator="\r\n").writerow([value, None])
    return buffer.getvalue()[:-3]  # the cell, without the empty one after it and the line end


def _csv_cell(value: Any) -> str:
    """One cell as ``csv.writer`` writes it (unknown empty, a float as its ``repr``, which is
    the module's ``str``), lists joined by ``;`` and text a spreadsheet would run marked
    (``safe_cell``)."""
    if value is None:
        return ""
    if type(value) is float:
        return repr(value)
    if type(value) is list:
        value = ";".join(value)
    if type(value) is str:
        if value.startswith(FORMULA_STARTS):  # only such text goes through safe_cell (which decides)
            value = safe_cell(value)
        if not _CSV_SPECIAL.search(value):
            return value
    return _csv_module_cell(value)


def csv_cells(values) -> list[str]:
    """A column (a list or a ``NumberColumn``) as CSV cells (``_csv_cell``), each distinct
    value once: numbers and text by value (but 0.0 and -0.0, one key and two cells),
    anything else by object."""
    values = as_list(values)
    if set(map(type, values)) <= {float, str, type(None)}:
        distinct = dict.fromkeys(values)
        if 0.0 not in distinct:
            said = {value: _csv_cell(value) for value in distinct}
            return list(map(said.__getitem__, values))
    shared: dict[int, str] = {}
    return [shared[key] if (key := id(value)) in shared else shared.setdefault(key, _csv_cell(value))
            for value in values]


def csv_lines(columns: list[list]) -> str:
    """The rows of two or more ``columns`` as CSV lines (each ending ``\\n``), as ``csv.writer``
    writes them (a row of one column differs: the module writes one empty cell as ``""``)."""
    if not columns[0]:
        return ""
    return "\n".join(map(",".join, zip(*(csv_cells(column) for column in columns)))) + "\n"
