"""Text from files and users made inert for a terminal: shown as written, never obeyed.

Control characters (C0, DEL, C1 — among them ESC, which starts every ANSI escape sequence)
and the invisible Unicode controls that reorder or hide text (bidirectional overrides and
isolates, zero-width marks) are shown as their escapes (``\\x1b``, ``\\u202e``); rich
markup is never parsed from data (see ``report.console``). Pure, no imports beyond ``re``.
"""

from __future__ import annotations

import re

_CONTROLS = re.compile("[\x00-\x09\x0b-\x1f\x7f-\x9f\u061c\u200b-\u200f\u2028-\u202e\u2060-\u2069\ufeff]")
_CONTROLS_AND_NEWLINE = re.compile(_CONTROLS.pattern[:-1] + "\n]")


def _escape(match: re.Match) -> str:
    code = ord(match.group())
    return f"\\x{code:02x}" if code < 0x100 else f"\\u{code:04x}"


def inert(text: object, *, newlines: bool = True) -> str:
    """``text`` with every control character shown as its escape; line breaks kept when
    ``newlines`` (our own multi-line cells), escaped too otherwise (a name is one line)."""
    pattern = _CONTROLS if newlines else _CONTROLS_AND_NEWLINE
    return pattern.sub(_escape, str(text))
