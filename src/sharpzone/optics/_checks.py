"""Input validation shared by the optics functions: numpy in, a named ``InvalidValue`` out."""

from __future__ import annotations

import numpy as np

from sharpzone.errors import InvalidValue


def as_array(value, name: str) -> np.ndarray:
    """``value`` as a float64 array; a non-number raises ``InvalidValue`` naming ``name``."""
    try:
        array = np.asarray(value, dtype=np.float64)
    except (TypeError, ValueError):
        raise InvalidValue(f"{name} {value!r} is not a number") from None
    if np.isnan(array).any():
        raise InvalidValue(f"{name} is not a number (NaN)")
    return array


def _first_bad(array: np.ndarray, bad: np.ndarray) -> float:
    return float(np.broadcast_to(array, bad.shape)[bad].flat[0])


def require(array: np.ndarray, ok: np.ndarray, message: str) -> None:
    """Raise ``InvalidValue`` with ``message`` (``{value}`` is the first offending value)."""
    ok = np.asarray(ok)
    if not ok.all():
        raise InvalidValue(message.format(value=_first_bad(array, ~ok)))


def scalar_or_array(result: np.ndarray, scalar: bool):
    """Give back a Python float when every input was a scalar, else the array."""
    return float(result) if scalar else result


def all_scalar(*values) -> bool:
    return all(np.ndim(v) == 0 for v in values)
