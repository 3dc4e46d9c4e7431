"""The ingest summary a person reads: counts grouped in thousands, as the rest of the
output writes them (a card of a few thousand frames is the common case)."""

from __future__ import annotations

from sharpzone.ingest.pipeline import IngestSummary
from sharpzone.report.ingest_render import render_ingest


def test_counts_of_thousands_are_grouped(capsys):
    summary = IngestSummary(shoot="Dock test", added=4500, unchanged=12000, ignored=3)
    render_ingest(summary, "sqlite:///catalog.sqlite")
    shown = capsys.readouterr().out
    assert "4,500" in shown and "12,000" in shown
    assert "4500" not in shown


def test_the_progress_bar_groups_its_counts_too(monkeypatch):
    import io

    from rich.console import Console

    from sharpzone.report import console, ingest_render

    drawn = io.StringIO()
    monkeypatch.setattr(console, "stderr_console", lambda: Console(file=drawn, force_terminal=True, width=80))
    with ingest_render.ingest_progress(True) as update:
        update("read", 16992, 40000)
    assert "16,992/40,000" in drawn.getvalue()
    assert ingest_render.done_of_total(512, None) == "512/?"  # while the walk goes on
