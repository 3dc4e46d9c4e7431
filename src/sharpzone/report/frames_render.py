"""Rendering of frames, check verdicts and stats for people: rich tables (the machine
interface is ``frames_machine``)."""

from __future__ import annotations

import os
from dataclasses import dataclass
from typing import TYPE_CHECKING

from rich.console import Console
from rich.text import Text

from sharpzone.report.console import Column, fit_table, line, print_fitted, stdout_console, styled, wrap_text
from sharpzone.report.inert import inert
from sharpzone.report.frames_machine import bracket_end, known_number
from sharpzone.units import format_distance, format_f_number, format_focal_length, format_length_mm, format_zone

# The verdicts' words, the checks and numpy are imported by the functions that use them, so
# a command whose selection holds no frame does without them.
if TYPE_CHECKING:
    from collections.abc import Iterable

    import pandas as pd

    from sharpzone.analysis.frames import CheckResult
    from sharpzone.analysis.stats import StatsResult

# Our own colours for the verdicts, chosen to read on dark and light terminals.
FLAG_STYLES = {
    "too-wide-open": "bold yellow",
    "focus-misplaced": "bold magenta",
    "out-of-reach": "bold red",
    "past-diffraction": "cyan",
    "outside-plan": "blue",
    "distance-unknown": "dim",
    "settings-unknown": "dim",
    "no-requirement": "dim",
    "distance-uncertain": "yellow",
    "focus-missed": "bold bright_red",
    "soft-all-over": "bold dark_orange",
    "sharp-at-focus": "green",
    "not-measurable": "dim italic",
}
PASSED_STYLE = "green"


def _short_path(path: str) -> str:
    return inert(os.path.basename(path) or path, newlines=False)


def _flag_style(flag: str) -> str:
    return FLAG_STYLES.get(flag, "bold")


# A verdict code this long or shorter ("out-of-reach") stays on one line when the codes break.
_UNBROKEN_AT_MOST = 12


def _flags_text(flags: list[str], separator: str = " ", *, break_at_hyphen: bool = False) -> Text:
    """The verdicts, each in its colour (``passed`` where none is a problem); with
    ``break_at_hyphen`` each code longer than a short word goes on two lines, after its last
    hyphen ("distance-" / "uncertain"), for a table that would not fit otherwise."""
    def shown(flag: str) -> str:
        head, hyphen, tail = flag.rpartition("-")
        return f"{head}-\n{tail}" if break_at_hyphen and hyphen and len(flag) > _UNBROKEN_AT_MOST else flag

    parts = [styled(shown(flag), _flag_style(flag)) for flag in flags]
    from sharpzone.analysis.checks import count_problems

    if not count_problems(flags):  # no verdict, or only notes and good news
        parts.insert(0, styled("passed", PASSED_STYLE))
    return Text(separator).join(parts)


def _measured(rows) -> bool:
    return any(known_number(row.get("blur_analysed_long_px")) is not None for row in rows)


def _blur_at_focus(row) -> str:
    from sharpzone.report.verdicts import measured_blur

    return measured_blur({key: known_number(row.get(key)) for key in _BLUR_AT_FOCUS}, "focus", short=True)


_BLUR_AT_FOCUS = ("blur_focus_px", "blur_floor_mm", "blur_focus_mm", "blur_focus_coc")


_focal_text = format_focal_length  # as lenses are marked: 35 mm, 4.5 mm


def _closeup(row) -> bool:
    from sharpzone.optics.dof import CLOSEUP_MAGNIFICATION

    return (known_number(row["magnification"]) or 0) >= CLOSEUP_MAGNIFICATION


def _working_f(row) -> str:
    return format_f_number(known_number(row["effective_f_number"])) if _closeup(row) else ""


def frame_columns(imperial: bool) -> list[Column]:
    """The columns of ``sharpzone frames``, most important first. Priority 0 is always
    shown; at a narrow terminal the highest numbers are dropped first (``--wide`` keeps
    all). Adding a column is one line here."""
    def dist(key):
        return lambda row: format_distance(known_number(row[key]), imperial=imperial)

    def zone(end):
        return lambda row: _zone_text(known_number(row["near_mm"]), known_number(row["far_mm"]), imperial).split(" – ")[end]

    def zone_on_two_lines(end):
        # Feet over inches ("5 ft" / "10.7 in"), for a table that would not fit otherwise.
        return lambda row: zone(end)(row).replace(" ft ", " ft\n", 1)

    return [
        Column("File", lambda row: _short_path(row["path"])),
        Column("Lens", lambda row: row.get("lens") or "—", wrap=True, priority=3),
        Column("Focal", lambda row: _focal_text(known_number(row["focal_mm"])), "right"),
        Column("Aperture", lambda row: format_f_number(known_number(row["f_number"])), "right"),
        Column("Focus", lambda row: _focus_with_bracket(row, imperial, "\n"), "right",
               narrow=lambda row: _focus_with_bracket(row, imperial, "\n", split_wide=True)),
        Column("Near", zone(0), "right", narrow=zone_on_two_lines(0)),
        Column("Far", zone(1), "right", narrow=zone_on_two_lines(1)),
        Column("Depth", dist("total_mm"), "right", priority=4),
        Column("Working f", _working_f, "right", priority=5, shown=lambda rows: any(map(_closeup, rows))),
        Column("Hyperfocal", dist("hyperfocal_mm"), "right", priority=6),
        Column("CoC", lambda row: format_length_mm(known_number(row["coc_mm"])), "right", priority=7),
        Column("Airy disk", lambda row: format_length_mm(known_number(row["airy_disk_mm"])), "right", priority=8),
        Column("Blur at focus", _blur_at_focus, "right", priority=2, shown=_measured),
        Column("Verdict", lambda row: _flags_text(row["flags"], "\n"),
               narrow=lambda row: _flags_text(row["flags"], "\n", break_at_hyphen=True)),
    ]


def render_frames(frames: pd.DataFrame, *, imperial: bool = False, wide: bool = False,
                  console: Console | None = None) -> None:
    """A table of frames with their sharp zones, fitted to the terminal (see ``frame_columns``)."""
    console = console or stdout_console()
    if frames.empty:
        console.print("No frames match.")
        return
    records = frames.to_dict("records")
    fitted = fit_table(frame_columns(imperial), records, console=console, wide=wide,
                       title=f"{len(frames):,} frames", title_justify="left")
    print_fitted(console, fitted)
    console.print(_policy_line(frames) + " Distances from the sensor plane.")
    if _measured(records):
        console.print(styled(BLUR_CAUTION, "dim"))


# Shown wherever measured blur is: what it is and what it is not.
BLUR_CAUTION = ("Blur is an estimate from a small preview (the edge methods of Zhuo & Sim, 2011, and Elder & "
                "Zucker, 1998); "
                "you decide what to reject — nothing is deleted or written to an image file.")


# In a table that would not fit otherwise, a bracket wider than this (and than the focus
# distance above it) takes two lines, one end each: "(84.0 cm–" / "1.02 m)", so the focus
# column is as narrow as "(14.5–15.3)".
_BRACKET_LINE_AT_MOST = 11


def _focus_with_bracket(row, imperial: bool, separator: str = " ", *, split_wide: bool = False) -> str:
    """The recorded focus distance, with the camera's bracket when it is one: "2.9 m (2.8–3.1)"
    (``separator`` "\n" puts the bracket on a line of its own, for a narrow table; with
    ``split_wide`` also a wide bracket on two: ``_BRACKET_LINE_AT_MOST``). A bracket narrower
    than the printed precision is not shown."""
    focus = known_number(row["focus_mm"])
    text = format_distance(focus, imperial=imperial)
    nearest, farthest = bracket_end(row, "focus_near_mm"), bracket_end(row, "focus_far_mm")
    if focus is None or nearest is None or farthest is None or not farthest > nearest * (1 + 1e-9):
        return text
    low, high = format_distance(nearest, imperial=imperial), format_distance(farthest, imperial=imperial)
    if low == high:
        return text
    unit = text.rsplit(" ", 1)[-1] if " " in text else ""
    # "2.90 m (2.80–3.10)", "48.9 ft (47.4–50.3)": a unit once; feet and inches stay whole.
    if unit in ("mm", "cm", "m", "km", "ft") and low.endswith(" " + unit) and high.endswith(" " + unit):
        low, high = low[: -len(unit) - 1], high[: -len(unit) - 1]
    bracket = f"({low}–{high})"
    if split_wide and len(bracket) > max(len(text), _BRACKET_LINE_AT_MOST):
        bracket = f"({low}–\n{high})"
    return f"{text}{separator}{bracket}"


_zone_text = format_zone  # one rounding rule for near – far, in units

def _policy_line(frames: pd.DataFrame) -> str:
    """Which CoC policies the figures rest on, and where each came from."""
    pairs = frames[["coc_policy", "coc_from"]].drop_duplicates().itertuples(index=False)
    return "CoC policy: " + "; ".join(sorted(f"{policy} (from the {origin})" for policy, origin in pairs)) + "."


def _plans_line(frames: pd.DataFrame, imperial: bool) -> str:
    """The shoots' plans that the frames were judged against."""
    from sharpzone.analysis.checks import Requirement

    plans = []
    columns = ["shoot", "plan_kind", "plan_near_mm", "plan_far_mm", "plan_front_mm", "plan_back_mm"]
    for shoot, kind, near, far, front, back in frames[columns].drop_duplicates().itertuples(index=False):
        requirement = Requirement.from_plan(kind, near, far, front, back)
        if requirement is not None:
            plans.append(f"{shoot}: {requirement.describe(imperial)}")
    return "; ".join(plans)


# How many flagged frames ``check`` details unless ``--all`` is given: the worst first.
CHECK_DETAIL_ROWS = 20


def worst_first(flag_lists: list) -> list[int]:
    """Positions of the frames with these flags, worst first (``_severity``), frames of equal
    severity in their order; each distinct combination of flags is ranked once."""
    ranks: dict[tuple[str, ...], tuple[int, int]] = {}
    keys = [ranks[key] if (key := tuple(flags)) in ranks else ranks.setdefault(key, _severity(list(key)))
            for flags in flag_lists]
    return sorted(range(len(keys)), key=keys.__getitem__)


def _severity(flags: list[str]) -> tuple[int, int]:
    """Sort key, worst first: the most serious verdict (the order of ``FLAG_STYLES``; codes
    it does not list come after), then more verdicts before fewer."""
    order = list(FLAG_STYLES)
    ranks = [order.index(flag) if flag in order else len(order) for flag in flags]
    return (min(ranks, default=len(order)), -len(flags))


def _setting_text(row, imperial: bool) -> str:
    return (f"{_focal_text(known_number(row['focal_mm']))} {format_f_number(known_number(row['f_number']))}\n"
            f"focus {_focus_with_bracket(row, imperial)}")


def _zone_lines(row, imperial: bool) -> str:
    near_mm, far_mm = known_number(row["near_mm"]), known_number(row["far_mm"])
    if near_mm is None and far_mm is None:
        return "—"
    near, far = _zone_text(near_mm, far_mm, imperial).split(" – ")
    return f"{near} –\n{far}"


def _remedies_text(row, imperial: bool) -> Text:
    from sharpzone.report.verdicts import describe_flag

    return Text("\n").join(line(styled(flag, _flag_style(flag)), ": ", describe_flag(flag, row, imperial=imperial))
                           for flag in row["flags"])


def check_columns(imperial: bool) -> list[Column]:
    """The columns of ``check``'s flagged frames (one line each to add a column)."""
    return [
        Column("File", lambda row: _short_path(row["path"])),
        Column("Setting", lambda row: _setting_text(row, imperial)),
        Column("Sharp zone", lambda row: _zone_lines(row, imperial), priority=2),
        Column("Verdict and remedy", lambda row: _remedies_text(row, imperial), wrap=True),
    ]


# What the summary of ``check`` reads of every frame; the frames listed are kept whole.
_SUMMARY_COLUMNS = ("lens", "outcome", "flags", "shoot", "plan_kind", "plan_near_mm", "plan_far_mm",
                    "plan_front_mm", "plan_back_mm", "coc_policy", "coc_from")


@dataclass(frozen=True)
class CheckReport:
    """What ``render_check`` shows of checked frames: ``result``, whose frames hold only the
    columns the summary reads (``None`` when no frame matched), the frames that did not
    pass, worst first (all, or the worst ``keep`` of ``check_report``), and how many did
    not pass."""

    result: CheckResult | None
    listed: pd.DataFrame | None
    not_passed: int


def check_report(chunks: Iterable[pd.DataFrame], requirement=None, coc_policy: str | None = None, *,
                 keep: int | None = CHECK_DETAIL_ROWS) -> CheckReport:
    """The ``CheckReport`` of checked frames that come a chunk at a time (``analysis.frames.
    iter_check_shoot``): memory follows a chunk and the summary's few columns, not every
    column of every frame. ``keep=None`` lists every frame that did not pass."""
    from sharpzone.analysis.frames import CheckResult, joined

    summary, every, listed, not_passed = [], [], None, 0
    for frames in chunks:
        summary.append(frames[[name for name in _SUMMARY_COLUMNS if name in frames]])
        others = frames[frames["outcome"].to_numpy(dtype=object) != "passed"]
        not_passed += len(others)
        if keep is None:
            every.append(others)
            continue
        # The worst so far (worst first) then this chunk's, in frame order: a stable sort
        # of the two keeps frames of equal severity in frame order, as one sort of all would.
        pool = others if listed is None else joined([listed, others], keep_index=True)
        listed = pool.iloc[worst_first(pool["flags"].tolist())[:keep]]
    if not summary:
        return CheckReport(None, None, 0)
    if keep is None:
        pool = joined(every, keep_index=True)
        listed = pool.iloc[worst_first(pool["flags"].tolist())]
    return CheckReport(CheckResult(joined(summary), requirement, coc_policy), listed, not_passed)


def render_check(result: CheckResult | CheckReport, *, imperial: bool = False, show_all: bool = False,
                 wide: bool = False, console: Console | None = None) -> None:
    """Summary per verdict and per lens, then the frames that did not pass, worst first, with
    their remedies (the ``CHECK_DETAIL_ROWS`` worst unless ``show_all``). ``result`` is a
    ``CheckReport`` (``check_report``, what ``sharpzone check`` streams) or a whole
    ``CheckResult``."""
    console = console or stdout_console()
    report = result if isinstance(result, CheckReport) else check_report(
        [result.frames] if not result.frames.empty else [], result.requirement, result.coc_policy,
        keep=None if show_all else CHECK_DETAIL_ROWS)
    checked = report.result
    if checked is None:
        console.print("No frames match.")
        return
    frames = checked.frames
    summary = checked.summary_by_verdict()
    against = (checked.requirement.describe(imperial) if checked.requirement
               else f"the plan ({_plans_line(frames, imperial)})")
    counts = f", {summary['flagged']:,} flagged"
    if summary["uncertain"]:
        counts += f", {summary['uncertain']:,} uncertain (distance known only as a bracket)"
    if summary["unjudged"]:
        counts += f", {summary['unjudged']:,} not judged"
    console.print(wrap_text(line(f"Checked {summary['frames']:,} frames against ", against, ": ",
                                 styled(f"{summary['passed']:,} passed", PASSED_STYLE), counts),
                            console.width))
    console.print(styled(_policy_line(frames) + " Distances from the sensor plane.", "dim"))
    from sharpzone.analysis.checks import OUTCOMES

    verdict_rows = [(flag, count) for flag, count in summary.items() if flag != "frames" and flag not in OUTCOMES]
    if verdict_rows:
        console.print()
        print_fitted(console, fit_table([
            Column("Verdict", lambda item: styled(item[0], _flag_style(item[0]))),
            Column("Frames", lambda item: f"{item[1]:,}", "right"),
        ], verdict_rows, console=console, wide=wide, title="By verdict", title_justify="left"))
    console.print()
    print_fitted(console, fit_table([
        Column("Lens", lambda item: item["lens"], wrap=True),
        Column("Frames", lambda item: f"{item['frames']:,}", "right"),
        Column("Flagged", lambda item: f"{item['flagged']:,}", "right"),
        Column("Uncertain", lambda item: f"{item['uncertain']:,}", "right", priority=2),
        Column("Not judged", lambda item: f"{item['unjudged']:,}", "right", priority=1),
        Column("Share", lambda item: "—" if item["share_flagged"] is None else f"{item['share_flagged']:.0%}", "right"),
    ], checked.summary_by_lens(), console=console, wide=wide, title="By lens", title_justify="left"))
    console.print(styled("Share flagged: of the frames that could be judged (passed, flagged or uncertain).", "dim"))
    # Every frame that did not simply pass: flagged, uncertain or not judged, worst first.
    total = report.not_passed
    if not total:
        return
    shown = report.listed.iloc[:None if show_all else CHECK_DETAIL_ROWS].to_dict("records")
    # "Flagged" only where every one of them is: uncertain and unjudged frames are listed too.
    which = "flagged frames" if summary["flagged"] == total else "frames that did not pass"
    console.print()
    title = (f"{which[0].upper()}{which[1:]} and what would have worked" if len(shown) == total
             else f"The {len(shown)} worst of {total:,} {which} and what would have worked")
    print_fitted(console, fit_table(check_columns(imperial), shown, console=console, wide=wide, show_lines=True,
                                    title=title, title_justify="left"))
    if len(shown) < total:
        console.print(styled(f"{total - len(shown):,} more not shown: --all lists every one "
                             "(--json gives them all to scripts).", "dim"))
    from sharpzone.analysis.blur_checks import BLUR_FLAGS

    if any(flag in BLUR_FLAGS for row in shown for flag in row["flags"]):
        console.print(styled(BLUR_CAUTION, "dim"))


def _focus_text(group, imperial: bool) -> str:
    if group.median_focus_mm is None:
        focus = "unknown"
    else:
        low, high = group.focus_quartiles_mm
        focus = (f"{format_distance(group.median_focus_mm, imperial=imperial)}\nmiddle half\n"
                 f"{format_distance(low, imperial=imperial)}–{format_distance(high, imperial=imperial)}")
    if group.unknown_focus:
        focus += f"\n{group.unknown_focus:,} without\na distance"
    return focus


def _f_number_bars(group) -> str:
    most = max((count for _, count in group.f_number_counts), default=1)
    return "\n".join(f"{format_f_number(f_number):>6} {'█' * max(1, round(12 * count / most))} {count:,}"
                     for f_number, count in group.f_number_counts) or "—"


def render_stats(result: StatsResult, *, imperial: bool = False, wide: bool = False,
                 console: Console | None = None) -> None:
    """Per lens and body: frames, an f-number histogram, share flagged, typical focus."""
    console = console or stdout_console()
    if not result.lenses:
        console.print("No frames match.")
        return
    columns = [
        Column("Name", lambda group: group.name, wrap=True),
        Column("Frames", lambda group: f"{group.frames:,}", "right"),
        Column("f-numbers used", _f_number_bars),
        Column("Flagged", lambda group: "—" if group.share_flagged is None else f"{group.share_flagged:.0%}", "right"),
        Column("Typical focus", lambda group: _focus_text(group, imperial)),
        Column("Blur measured", lambda group: f"{group.blur_measured} frames\n{group.focus_missed} focus missed\n"
                                              f"{group.soft_all_over} soft all over", priority=1,
               shown=lambda groups: any(group.blur_measured for group in groups)),
    ]
    for title, groups in (("Lenses", result.lenses), ("Bodies", result.bodies)):
        print_fitted(console, fit_table(columns, groups, console=console, wide=wide, show_lines=True,
                                        title=title, title_justify="left"))
