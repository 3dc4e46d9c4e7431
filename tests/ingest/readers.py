"""Readers for the containment tests: module-level functions (so any start method can hand
them to a worker) that misbehave on marker file names and read normally otherwise."""

from __future__ import annotations

import os
import signal
import time

from sharpzone.ingest.capture import read_capture


def misbehaving_reader(path, user_focus_mm=None):
    """Kills its own process on ``*segv*`` (SIGSEGV) and ``*abort*`` (abort), hangs on
    ``*hang*``, raises on ``*bug*``; reads every other file."""
    name = os.path.basename(path)
    if "segv" in name:
        os.kill(os.getpid(), signal.SIGSEGV)
    if "abort" in name:
        os.abort()
    if "hang" in name:
        time.sleep(3600)
    if "bug" in name:
        raise RuntimeError("a reader bug")
    return read_capture(path, user_focus_mm)


def slow_reader(path, user_focus_mm=None):
    """``read_capture`` taking at least 20 ms a file, for interrupting a run part-way."""
    time.sleep(0.02)
    return read_capture(path, user_focus_mm)
