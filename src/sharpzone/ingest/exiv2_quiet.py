"""exiv2's own log lines never reach the user's terminal: one switch, set once per process."""

from __future__ import annotations

_silenced = False


def silence_exiv2() -> None:
    """Turn off libexiv2's messages (it prints warnings about odd files to stderr); what
    matters is reported by the program as a reason, not as library chatter."""
    global _silenced
    if _silenced:
        return
    import exiv2

    exiv2.LogMsg.setLevel(exiv2.LogMsg.Level.mute)
    _silenced = True
