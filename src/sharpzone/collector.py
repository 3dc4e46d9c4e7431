"""Long runs that make many short-lived objects (an ingest's rows, a stream's chunks) keep
what was alive before them out of the garbage collector's passes.

Each pass that the new objects set off would otherwise walk every imported module's objects
again: about a tenth of an ingest's writing process and of ``check --json`` at 300,000
frames. Nothing made during the run is kept from being collected.
"""

from __future__ import annotations

import contextlib
import gc
from collections.abc import Iterator


@contextlib.contextmanager
def existing_objects_frozen() -> Iterator[None]:
    """``gc.freeze()`` for the block, undone after it; not when the caller froze objects
    itself (undoing that is the caller's)."""
    if gc.get_freeze_count():
        yield
        return
    gc.freeze()
    try:
        yield
    finally:
        gc.unfreeze()
