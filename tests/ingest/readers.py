"""Readers for the containment tests: module-level functions (so any start method can hand
them to a worker) that misbehave on marker file names and read normally otherwise."""

from __future__ import annotations

import os
import signal
import time

from sharpzone.ingest.capture import read_capture, recorded, sniffed, tagged


def _misbehave(path) -> None:
    """Kills its own process on ``*segv*`` (SIGSEGV) and ``*abort*`` (abort), hangs on
    ``*hang*``, raises on ``*bug*``; returns for every other file."""
    name = os.path.basename(path)
    if "segv" in name:
        os.kill(os.getpid(), signal.SIGSEGV)
    if "abort" in name:
        os.abort()
    if "hang" in name:
        time.sleep(3600)
    if "bug" in name:
        raise RuntimeError("a reader bug")


def misbehaving_reader(path, user_focus_mm=None):
    """``read_capture``, misbehaving on marker names first (``_misbehave``)."""
    _misbehave(path)
    return read_capture(path, user_focus_mm)


def _misbehaving_tagged(state):
    _misbehave(state[0])  # in the middle stage: the batch's other files are half-way through
    return tagged(state)


# ``capture.STAGES`` misbehaving in the middle stage, where libexiv2 runs.
MISBEHAVING_STAGES = (sniffed, _misbehaving_tagged, recorded)


def slow_reader(path, user_focus_mm=None):
    """``read_capture`` taking at least 20 ms a file, for interrupting a run part-way."""
    time.sleep(0.02)
    return read_capture(path, user_focus_mm)


def _slow_sniffed(path, user_focus_mm=None):
    time.sleep(0.15)
    return sniffed(path, user_focus_mm)


# ``capture.STAGES`` with a first stage of 0.15 s a file: a batch takes longer through it
# than a time limit of 1 s, though no file does.
SLOW_STAGES = (_slow_sniffed, tagged, recorded)


def pid_noting_hang(path, user_focus_mm=None):
    """Notes its process id beside the file (``<path>.pid``), then hangs: for telling that a
    worker was stopped."""
    with open(f"{path}.pid-part", "w", encoding="ascii") as note:
        note.write(f"{os.getpid()}\n")
    os.replace(f"{path}.pid-part", f"{path}.pid")  # whole when it appears
    time.sleep(3600)
