"""What the global options decided, handed to every command through ``ctx.obj``."""

from __future__ import annotations

from dataclasses import dataclass


@dataclass
class CliState:
    """Global options: which catalogue (``None`` means the default) and whether to debug."""

    catalog: str | None = None
    debug: bool = False
