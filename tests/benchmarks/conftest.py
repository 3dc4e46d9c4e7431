"""Benchmarks run on demand only: ``pytest tests/benchmarks -m benchmark -s``."""

from __future__ import annotations

import os
import subprocess
import sys

import pytest


@pytest.fixture(scope="session", autouse=True)
def installed_bytecode() -> None:
    """The commands run as installed: with sharpzone's bytecode compiled, as pip compiles it
    on install (the libraries' is, so without this a run with ``PYTHONDONTWRITEBYTECODE`` set
    would time sharpzone's compiler against the libraries' import)."""
    import sharpzone

    subprocess.run([sys.executable, "-m", "compileall", "-q", os.path.dirname(sharpzone.__file__)], check=True,
                   capture_output=True)
