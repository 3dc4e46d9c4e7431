"""Rendering of an ingest: a progress bar while it runs, then a summary table or JSON.

rich is imported only where it draws (the bar, the table): an ingest with ``--json`` or
with its progress piped starts its readers without it."""

from __future__ import annotations

from collections.abc import Iterator
from contextlib import contextmanager
from typing import TYPE_CHECKING, Any

from shlex import quote as shlex_quote

if TYPE_CHECKING:
    from sharpzone.ingest.pipeline import IngestSummary


@contextmanager
def ingest_progress(enabled: bool) -> Iterator:
    """A ``progress(stage, done, total)`` callback drawing a bar on stderr (files/s, time
    left) when ``enabled``; a no-op otherwise (piped output stays clean)."""
    if not enabled:
        yield None
        return
    from rich.progress import (BarColumn, Progress, ProgressColumn, SpinnerColumn, TaskProgressColumn, TextColumn,
                               TimeRemainingColumn)
    from rich.text import Text

    from sharpzone.report.console import stderr_console

    class DoneOfTotal(ProgressColumn):
        """Files done of the total, grouped by thousands as every count a person reads."""

        def render(self, task) -> Text:
            return Text(done_of_total(task.completed, task.total), style="progress.download")

    columns = (SpinnerColumn(), TextColumn("{task.description}"), BarColumn(), DoneOfTotal(),
               TaskProgressColumn(), TextColumn("{task.fields[rate]}"), TimeRemainingColumn())
    with Progress(*columns, console=stderr_console(), transient=True) as bar:
        tasks: dict[str, Any] = {}

        def update(stage: str, done: int, total: int | None) -> None:
            label = {"scan": "Finding images", "read": "Reading EXIF", "measure": "Measuring blur"}.get(stage, stage)
            if stage not in tasks:
                tasks[stage] = bar.add_task(label, total=total, rate="")
            task = bar.tasks[tasks[stage]]
            speed = task.speed
            bar.update(tasks[stage], completed=done, total=total, rate=f"{speed:,.0f} files/s" if speed else "")

        yield update


def done_of_total(done: float, total: float | None) -> str:
    """The progress bar's count: ``12,345/40,000``, or ``12,345/?`` while the total is unknown."""
    return f"{int(done):,}/{'?' if total is None else f'{int(total):,}'}"


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
        "elsewhere": [{"shoot": name, "frames": count} for name, count in sorted(summary.elsewhere.items())],
        "moved": [{"from_shoot": name, "frames": count} for name, count in sorted(summary.moved.items())],
        "needs_format": [{"body": name, "command": format_command(name)} for name in summary.needs_format],
        "shoot_created": summary.shoot_created,
        "seconds": round(summary.seconds, 3),
        "catalog": catalog,
    }


def format_command(body: str) -> str:
    """The command that sets the sensor format of ``body`` (quoted for a POSIX shell)."""
    return f"sharpzone body edit {shlex_quote(body)} --format FORMAT"


def _frames(count: int) -> str:
    return "1 file" if count == 1 else f"{count:,} files"


def render_ingest(summary: IngestSummary, catalog: str) -> None:
    """``sharpzone ingest``'s summary on stdout: the counts, then each file skipped and why,
    frames left in or moved from other shoots, bodies still without a format, and what was
    registered."""
    from rich.table import Table
    from rich.text import Text

    from sharpzone.report.console import line, stdout_console, styled

    console = stdout_console()
    table = Table(title=Text(f"Ingest into shoot {summary.shoot!r}"), title_justify="left", show_header=False)
    table.add_column(style="bold")
    table.add_column(justify="right")
    for label, value in (("Added", summary.added), ("Updated", summary.updated), ("Unchanged", summary.unchanged),
                         ("Not images (ignored)", summary.ignored), ("Could not be read", len(summary.failed)),
                         ("Vanished since last time", len(summary.vanished)), ("Pruned", summary.pruned),
                         ("Warnings", summary.warnings)):
        table.add_row(label, f"{value:,}")
    console.print(table)
    for path, reason in summary.failed:
        console.print(line(styled("skipped", "red"), " ", path, ": ", reason))
    for name, count in sorted(summary.elsewhere.items()):
        console.print(line(f"{_frames(count)} already belong to shoot {name!r}: left there "
                           f"(give --shoot {shlex_quote(summary.shoot)} to move them into this one)"))
    for name, count in sorted(summary.moved.items()):
        console.print(line(f"moved {_frames(count)} from shoot {name!r} to {summary.shoot!r}"))
    for name in summary.needs_format:
        console.print(line(f"body {name!r} needs its sensor format before its frames can be judged: "
                           f"{format_command(name)}"))
    if summary.vanished and not summary.pruned:
        console.print(f"{len(summary.vanished):,} catalogued frames were not found again; kept (use --prune to remove).")
    for item in summary.registered:
        console.print(Text(f"registered {item} — check it with 'sharpzone body list' / 'sharpzone lens list'"),
                      highlight=False)
    console.print(Text(f"{summary.seconds:.1f} s; catalogue {catalog}"), highlight=False)
