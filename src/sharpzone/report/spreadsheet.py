"""CSV cells a spreadsheet will not run.

A spreadsheet treats a cell that starts with ``=``, ``+``, ``-`` or ``@`` (and, in some,
a tab or carriage return) as a formula; a body named from an EXIF Make ``=cmd|…`` would run
when someone opens ``frames --csv`` in one. Text cells starting so get a leading apostrophe,
the spreadsheets' own mark for "this is text" (OWASP's advice on CSV injection). Numbers
stay numbers, whether given as numbers or as number text (``-0.5``). Catalogue bundles do
not use this: they round-trip names exactly.
"""

from __future__ import annotations

import re
from typing import Any

FORMULA_STARTS = ("=", "+", "-", "@", "\t", "\r")
_NUMBER = re.compile(r"^[+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?$")


def safe_cell(value: Any) -> Any:
    """``value`` as a spreadsheet may show it: text that would start a formula is marked
    as text; everything else (numbers, number text, other text) unchanged."""
    if isinstance(value, str) and value.startswith(FORMULA_STARTS) and not _NUMBER.match(value):
        return "'" + value
    return value
