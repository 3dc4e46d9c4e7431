"""JSON in the machine interface's conventions: metres or millimetres as each key says, an
infinite value as the string "inf", an unknown value as null."""

from __future__ import annotations

import json
import math
from datetime import date, datetime
from pathlib import Path
from typing import Any


def plain(value: Any) -> Any:
    """``value`` with numpy scalars, paths, dates, inf and NaN made JSON-safe."""
    if isinstance(value, dict):
        return {str(k): plain(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [plain(v) for v in value]
    if hasattr(value, "item") and not isinstance(value, (str, bytes)):
        try:
            value = value.item()
        except (ValueError, AttributeError):
            pass
    if isinstance(value, float):
        if math.isnan(value):
            return None
        if math.isinf(value):
            return "inf" if value > 0 else "-inf"
        return value
    if isinstance(value, (datetime, date)):
        return value.isoformat()
    if isinstance(value, Path):
        return str(value)
    return value


def dumps(value: Any) -> str:
    """Serialise for ``--json`` output: indented, UTF-8, keys in the order given."""
    return json.dumps(plain(value), indent=2, ensure_ascii=False, allow_nan=False)


def metres(value_mm: Any) -> Any:
    """A distance in mm as the interface's metres ("inf" stays, None stays)."""
    from sharpzone.units import metres_or_inf

    return metres_or_inf(value_mm)
