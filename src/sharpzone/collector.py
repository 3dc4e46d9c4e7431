"""Long runs that make many short-lived objects (an ingest's rows, a stream's chunks) keep
what was alive before them out of the garbage collector's passes; set-up that makes only
objects that live on (SQLAlchemy and the catalogue's models imported, a catalogue opened)
runs with the collector paused.

Each pass that the new objects set off would otherwise walk every imported module's objects
again: about a tenth of an ingest's writing process and of ``check --json`` at 300,000
frames. Loading the database layer sets off about twenty passes of its own, the last ones
walking nearly everything it made (about 0.1 s of the ingest's writing process on a 2-core
machine, measured 2026-12-03). Nothing made during a run is kept from being collected.
"""

from __future__ import annotations

import contextlib
import gc
from collections.abc import Iterator


@contextlib.contextmanager
def existing_objects_frozen() -> Iterator[None]:
    """``gc.freeze()`` for the block, undone after it; inside a freeze the caller made (or an
    outer block), what is alive is frozen too and undoing it all is left to the caller."""
    outermost = not gc.get_freeze_count()
    gc.freeze()
    try:
        yield
    finally:
        if outermost:
            gc.unfreeze()


@contextlib.contextmanager
def collections_paused() -> Iterator[None]:
    """The collector off for the block, for set-up whose objects live on; end the block with
    what it made frozen (``existing_objects_frozen`` entered inside it), else the first
    pass after it walks them all. Left off when the caller had it off."""
    if not gc.isenabled():
        yield
        return
    gc.disable()
    try:
        yield
    finally:
        gc.enable()
