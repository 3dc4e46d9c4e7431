"""Rendering of an ingest: a progress bar while it runs, then a summary table or JSON."""

from __future__ import annotations

from collections.abc import Iterator
from contextlib import contextmanager
from typing import TYPE_CHECKING, Any

from rich.table import Table

from sharpzone.report.console import line, stderr_console, stdout_console, styled

if TYPE_CHECKING:
    from sharpzone.ingest.pipeline import IngestSummary


@contextmanager
def ingest_progress(enabled: bool) -> Iterator:
    """A ``progress(stage, done, total)`` callback drawing a bar on stderr (files/s, time
    left) when ``enabled``; a no-op otherwise (piped output stays clean)."""
    if not enabled:
        yield None
        return
    from rich.progress import (BarColumn, MofNCompleteColumn, Progress, SpinnerColumn, TaskProgressColumn,
                               TextColumn, TimeRemainingColumn)

    columns = (SpinnerColumn(), TextColumn("{task.description}"), BarColumn(), MofNCompleteColumn(),
               TaskProgressColumn(), TextColumn("{task.fields[rate]}"), TimeRemainingColumn())
    with Progress(*columns, console=stderr_console(), transient=True) as bar:
        tasks: dict[str, Any] = {}

        def update(stage: str, done: int, total: int | None) -> None:
            label = {"scan": "Finding images", "read": "Reading EXIF"}.get(stage, stage)
            if stage not in tasks:
                tasks[stage] = bar.add_task(label, total=total, rate="")
            task = bar.tasks[tasks[stage]]
            speed = task.speed
            bar.update(tasks[stage], completed=done, total=total, rate=f"{speed:.0f} files/s" if speed else "")

        yield update


def ingest_json(summary: IngestSummary, catalog: str) -> dict[str, Any]:
    """``sharpzone ingest --json``."""
    return {
        "shoot": summary.shoot,
        "added": summary.added,
        "updated": summary.updated,
        "unchanged": summary.unchanged,
        "ignored": summary.ignored,
        "failed": [{"path": path, "reason": reason} for path, reason in summary.failed],
        "vanished": summary.vanished,
        "pruned": summary.pruned,
        "warnings": summary.warnings,
        "registered": summary.registered,
        "seconds": round(summary.seconds, 3),
        "catalog": catalog,
    }


def render_ingest(summary: IngestSummary, catalog: str) -> None:
    console = stdout_console()
    table = Table(title=f"Ingest into shoot '{summary.shoot}'", title_justify="left", show_header=False)
    table.add_column(style="bold")
    table.add_column(justify="right")
    for label, value in (("Added", summary.added), ("Updated", summary.updated), ("Unchanged", summary.unchanged),
                         ("Not images (ignored)", summary.ignored), ("Could not be read", len(summary.failed)),
                         ("Vanished since last time", len(summary.vanished)), ("Pruned", summary.pruned),
                         ("Warnings", summary.warnings)):
        table.add_row(label, str(value))
    console.print(table)
    for path, reason in summary.failed:
        console.print(line(styled("skipped", "red"), " ", path, ": ", reason))
    if summary.vanished and not summary.pruned:
        console.print(f"{len(summary.vanished)} catalogued frames were not found again; kept (use --prune to remove).")
    for item in summary.registered:
        console.print(f"registered {item} — check it with 'sharpzone body list' / 'sharpzone lens list'")
    console.print(f"{summary.seconds:.1f} s; catalogue {catalog}")
