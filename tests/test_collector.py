"""The one freeze of the garbage collector's old objects that ingest, streamed output and an
open catalogue use, and the pause while a catalogue opens (CPython's gc.freeze/unfreeze,
Python 3.7+, and gc.disable/isenabled, as the gc module's documentation gives them): frozen
or paused in the block, undone after it, and a freeze or pause the caller made is left to
the caller."""

from __future__ import annotations

import gc

import pytest

from sharpzone.collector import collections_paused, existing_objects_frozen


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


def test_a_freeze_inside_another_freezes_what_is_new_and_leaves_the_undoing_outside():
    with existing_objects_frozen():
        before = gc.get_freeze_count()
        made_inside = [[] for _ in range(1000)]
        with existing_objects_frozen():
            assert gc.get_freeze_count() >= before + len(made_inside)
        assert gc.get_freeze_count() >= before + len(made_inside)
    assert gc.get_freeze_count() == 0


def test_collections_are_paused_in_the_block_only():
    assert gc.isenabled()
    with collections_paused():
        assert not gc.isenabled()
    assert gc.isenabled()
    with pytest.raises(KeyboardInterrupt), collections_paused():
        raise KeyboardInterrupt
    assert gc.isenabled()


def test_a_callers_pause_is_kept():
    gc.disable()
    try:
        with collections_paused():
            pass
        assert not gc.isenabled()
    finally:
        gc.enable()


def test_an_open_catalogue_has_the_collector_on_and_what_opening_made_frozen(tmp_path):
    from sharpzone.catalog.engine import open_catalog

    with open_catalog(tmp_path / "c.sqlite") as catalog:
        assert gc.isenabled()
        # The database layer's objects (its modules, the models' tables) are out of the passes.
        assert gc.get_freeze_count() > 10_000
        with catalog.session_scope():
            pass
    assert gc.isenabled() and gc.get_freeze_count() == 0


def test_a_catalogue_that_cannot_open_leaves_the_collector_as_it_was(tmp_path):
    from sharpzone.catalog.engine import open_catalog
    from sharpzone.errors import SharpzoneError

    with pytest.raises(SharpzoneError), open_catalog(tmp_path / "missing.sqlite", write=False):
        pass
    assert gc.isenabled() and gc.get_freeze_count() == 0
