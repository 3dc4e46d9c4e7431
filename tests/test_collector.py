"""The one freeze of the garbage collector's old objects that ingest and streamed output use
(CPython's gc.freeze/unfreeze, Python 3.7+): frozen in the block, undone after it, and a
freeze the caller made is left to the caller."""

from __future__ import annotations

import gc

import pytest

from sharpzone.collector import existing_objects_frozen


def test_objects_alive_before_are_frozen_in_the_block_only():
    assert gc.get_freeze_count() == 0
    with existing_objects_frozen():
        assert gc.get_freeze_count() > 0
    assert gc.get_freeze_count() == 0


def test_undone_when_the_block_raises():
    with pytest.raises(KeyboardInterrupt), existing_objects_frozen():
        raise KeyboardInterrupt
    assert gc.get_freeze_count() == 0


def test_a_callers_own_freeze_is_kept():
    gc.freeze()
    try:
        with existing_objects_frozen():
            pass
        assert gc.get_freeze_count() > 0
    finally:
        gc.unfreeze()
