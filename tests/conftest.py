"""Shared fixtures. No test may touch the user's real catalogue or data folders."""

from __future__ import annotations

import pytest


@pytest.fixture(autouse=True)
def _isolated_user_folders(tmp_path_factory, monkeypatch):
    """Point HOME, the XDG folders and SHARPZONE_CATALOG at a throwaway folder."""
    home = tmp_path_factory.mktemp("home")
    monkeypatch.setenv("HOME", str(home))
    monkeypatch.setenv("XDG_DATA_HOME", str(home / ".local" / "share"))
    monkeypatch.setenv("XDG_CONFIG_HOME", str(home / ".config"))
    monkeypatch.setenv("XDG_CACHE_HOME", str(home / ".cache"))
    monkeypatch.delenv("SHARPZONE_CATALOG", raising=False)
    yield home
