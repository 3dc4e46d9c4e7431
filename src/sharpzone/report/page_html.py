"""The report page: one self-contained HTML file to cull a shoot from, offline.

Pictures are inline (``data:`` URIs), the style and a few lines of plain JavaScript are in the
file, and a Content-Security-Policy lets the page load nothing else and run no other script.
Without JavaScript every frame is listed; with it the filters, the keyboard and the rejected
list work. Every text that comes from a file or the catalogue (names, paths, EXIF text) is
escaped: it is data, never markup.
"""

from __future__ import annotations

import base64
import hashlib
import math
import os
import re
import tempfile
from html import escape
from pathlib import Path
from typing import TYPE_CHECKING, Any

from sharpzone.analysis.report_page import PASSED, primary_verdict, verdict_kind, verdict_rank
from sharpzone.errors import InvalidValue, SharpzoneError
from sharpzone.report.frames_render import _plans_line, _zone_text
from sharpzone.report.verdicts import describe_flag, flag_word, format_exposure
from sharpzone.units import format_distance, format_f_number, format_focal_length, format_length_mm, format_round_distance

if TYPE_CHECKING:
    from sharpzone.analysis.report_page import DistanceScale, ReportData

PAGE_EXTENSIONS = (".html", ".htm")
BAR_HEIGHT = 30
# Measured-blur columns a row may carry (from the blur measurement), with their labels.
BLUR_COLUMNS = (("focus_blur_mm", "at the focus point"), ("best_blur_mm", "sharpest region"),
                ("median_blur_mm", "across the frame"), ("blur_mm", ""))
# Where a focus distance came from (``vocabulary.FOCUS_SOURCES``), in words.
FOCUS_SOURCE_WORDS = {"user": "your distances file", "exif": "EXIF", "makernote": "the maker note",
                      "xmp": "the XMP sidecar"}


def _number(value: Any) -> float | None:
    try:
        number = float(value)
    except (TypeError, ValueError):
        return None
    return None if math.isnan(number) else number


def _text(value: Any, missing: str = "—") -> str:
    """Catalogue text (a name, a path) as HTML text; control characters shown inert."""
    if value is None or (isinstance(value, float) and math.isnan(value)):
        return missing
    return escape(re.sub(r"[\x00-\x08\x0b-\x1f\x7f]", "\N{REPLACEMENT CHARACTER}", str(value)), quote=True)


def _remedy(flag: str, row: dict, imperial: bool) -> str:
    try:
        return describe_flag(flag, row, imperial=imperial)
    except (ValueError, KeyError, TypeError):  # a code this version has no sentence for
        return flag_word(flag).lower()


def page_path(out: str | os.PathLike) -> Path:
    """The page's file name, checked: it must end in .html or .htm."""
    path = Path(out)
    if path.suffix.lower() not in PAGE_EXTENSIONS:
        raise InvalidValue(f"--out {str(path)!r} is not an HTML file name: expected a name ending in .html")
    return path


def write_page(data: ReportData, out: str | os.PathLike, *, imperial: bool = False) -> Path:
    """Write the page to ``out`` (replaced whole, never left half-written); returns the path."""
    path = page_path(out).expanduser().absolute()
    if path.is_dir():
        raise InvalidValue(f"--out {str(path)!r} is a folder: give a file name ending in .html")
    text = render_page(data, imperial=imperial)
    try:
        path.parent.mkdir(parents=True, exist_ok=True)
        handle, temporary = tempfile.mkstemp(prefix=".sharpzone-page-", suffix=".tmp", dir=path.parent)
        with os.fdopen(handle, "w", encoding="utf-8") as file:
            file.write(text)
        os.chmod(temporary, 0o644)
        os.replace(temporary, path)
    except OSError as error:
        raise SharpzoneError(f"cannot write the page {str(path)!r}: {error.strerror or error}") from None
    return path


# ---- the page ----------------------------------------------------------------------------

def render_page(data: ReportData, *, imperial: bool = False) -> str:
    """The whole page as HTML text."""
    frames = data.frames
    records = frames.to_dict("records")
    scale = data.scale
    ticks = scale.ticks_mm(imperial)
    grid = _grid_lines(scale, ticks)
    sections = []
    for verdict, positions in data.groups:
        rows = "".join(_frame_html(records[p], p, data, grid, imperial) for p in positions)
        count = len(positions)
        sections.append(
            f'<section class="group k-{verdict_kind(verdict)}" id="g-{_text(verdict)}" data-verdict="{_text(verdict)}">'
            f'<h2>{_icon(verdict)} {_text(flag_word(verdict))} <span class="count">'
            f'{count:,} frame{"s" if count != 1 else ""}</span></h2>'
            f'<div class="scale-row" aria-hidden="true"><div></div><div></div>{_scale_svg(scale, ticks, imperial)}</div>'
            f'<div class="frames">{rows}</div></section>')
    body = (f'<header>{_heading(data, imperial)}{_summary(data)}{_legend(scale, ticks, imperial)}</header>'
            f'{_controls(data)}<main>{"".join(sections)}</main>'
            '<footer><p>Made by sharpzone. Sharp-zone figures are optical estimates from the recorded settings; '
            'you decide what to reject. This page changes no file; the rejected list is saved only when you ask.</p>'
            '</footer>')
    script = _SCRIPT
    style = _STYLE
    policy = ("default-src 'none'; img-src data:; "
              f"style-src 'sha256-{_digest(style)}'; script-src 'sha256-{_digest(script)}'; "
              "base-uri 'none'; form-action 'none'")
    page_id = hashlib.sha256("\n".join(frames["path"].astype(str)).encode("utf-8", "surrogateescape")).hexdigest()[:16]
    return ("<!DOCTYPE html>\n"
            '<html lang="en" class="no-js"><head><meta charset="utf-8">'
            f'<meta http-equiv="Content-Security-Policy" content="{policy}">'
            '<meta name="viewport" content="width=device-width, initial-scale=1">'
            '<meta name="generator" content="sharpzone">'
            f'<title>{_text(data.title)} — sharp-zone report</title>'
            f'<style>{style}</style></head>'
            f'<body data-page="{page_id}" data-title="{_text(_slug(data.title))}">'
            f'{_DEFINITIONS}{body}<script>{script}</script></body></html>\n')


def _digest(text: str) -> str:
    return base64.b64encode(hashlib.sha256(text.encode("utf-8")).digest()).decode("ascii")


def _slug(text: str) -> str:
    return re.sub(r"[^a-z0-9]+", "-", text.lower()).strip("-") or "shoot"


def _heading(data: ReportData, imperial: bool) -> str:
    check = data.check
    frames = data.frames
    summary = _verdict_counts(frames)
    if check.requirement is not None:
        against = check.requirement.describe(imperial)
    else:
        plans = _plans_line(frames, imperial)
        against = f"each shoot's plan ({plans})" if plans else "no requirement (no plan, none given)"
    policies = "; ".join(sorted({f"{p} (from the {o})" for p, o in
                                 frames[["coc_policy", "coc_from"]].itertuples(index=False)}))
    missing = len(data.thumbnail_problems())
    pictures = f" {missing:,} shown without a picture (reason given)." if missing else ""
    return (f'<h1>{_text(data.title)}</h1>'
            f'<p class="lede">{summary["frames"]:,} frames checked against {_text(against)}: '
            f'<strong>{summary["passed"]:,} passed</strong>, {summary["frames"] - summary["passed"]:,} with a verdict.'
            f'{pictures}</p>'
            f'<p class="small">Circle of confusion: {_text(policies)}. Distances from the sensor plane. '
            f'Made {data.made_at:%Y-%m-%d %H:%M %Z}.</p>')


def _verdict_counts(frames) -> dict[str, int]:
    """Frames carrying each verdict code (whatever codes the check gave), ``passed`` and ``frames``."""
    from collections import Counter

    counts = Counter(flag for flags in frames["flags"] for flag in flags)
    passed = int((frames["outcome"].to_numpy(dtype=object) == "passed").sum()) if "outcome" in frames else \
        sum(1 for flags in frames["flags"] if not flags)
    return {"frames": len(frames), "passed": passed, **counts}


def _summary(data: ReportData) -> str:
    check = data.check
    counts = _verdict_counts(check.frames)
    listed = {verdict: len(positions) for verdict, positions in data.groups}
    # Every verdict the frames carry, as check's summary counts them: a frame is listed once,
    # under its worst, so one carried only beside a worse one has no group to link to.
    carried_only = [flag for flag in counts if flag not in ("frames", PASSED) and flag not in listed]
    verdict_rows = []
    for verdict in sorted([*listed, *carried_only], key=lambda flag: (verdict_rank(flag), flag)):
        carried = counts.get("passed") if verdict == PASSED else counts.get(verdict, 0)
        name = _text(flag_word(verdict))
        label = f'<a href="#g-{_text(verdict)}">{name}</a>' if verdict in listed else name
        verdict_rows.append(
            f'<tr class="k-{verdict_kind(verdict)}"><td>{_icon(verdict)} {label}</td><td class="num">{carried:,}</td>'
            f'<td class="num">{listed.get(verdict, 0):,}</td></tr>')
    lens_rows = "".join(
        f'<tr><td>{_text(item["lens"])}</td><td class="num">{item["frames"]:,}</td>'
        f'<td class="num">{item["flagged"]:,}</td>'
        f'<td class="num">{"—" if item["share_flagged"] is None else format(item["share_flagged"], ".0%")}</td></tr>'
        for item in check.summary_by_lens())
    return ('<div class="summary">'
            '<table><caption>By verdict</caption><thead><tr><th>Verdict</th><th class="num">Frames with it</th>'
            f'<th class="num">Listed under it</th></tr></thead><tbody>{"".join(verdict_rows)}</tbody></table>'
            '<table><caption>By lens</caption><thead><tr><th>Lens</th><th class="num">Frames</th>'
            '<th class="num">Flagged</th><th class="num">Share flagged</th></tr></thead>'
            f'<tbody>{lens_rows}</tbody></table>'
            '<p class="note">Each frame is listed once, under its worst verdict; "Frames with it" also counts '
            'the frames listed under a worse one. Share flagged: of the frames that could be judged (passed, '
            'flagged or uncertain), as in <code>check</code> and <code>stats</code>.</p></div>')


def _legend(scale: DistanceScale, ticks: list[float], imperial: bool) -> str:
    sample = (f'<svg class="bar legend-bar" width="100%" height="{BAR_HEIGHT}" aria-hidden="true">'
              f'{_grid_lines(scale, ticks)}{_bar_shapes(0.30, 0.52, 0.22, 0.62, 0.40, 0.36, 0.46)}</svg>')
    return ('<div class="legend"><h2>How to read the zone bars</h2>'
            f'<div class="legend-grid"><div>{_scale_svg(scale, ticks, imperial)}{sample}</div>'
            '<ul>'
            '<li><svg class="key" width="28" height="14" aria-hidden="true"><rect class="sharp" x="1" y="4" width="26" '
            'height="6"/></svg> solid bar: the sharp zone (near to far limit)</li>'
            '<li><svg class="key" width="28" height="14" aria-hidden="true"><rect class="need" x="1" y="1" width="26" '
            'height="12"/></svg> dashed outline: what had to be sharp</li>'
            '<li><svg class="key" width="28" height="14" aria-hidden="true"><line class="focus" x1="14" x2="14" y1="0" '
            'y2="14"/><circle class="focus-pin" cx="14" cy="4" r="3.5"/></svg> pin: the focus distance</li>'
            '<li><svg class="key" width="28" height="14" aria-hidden="true"><rect class="bracket" x="1" y="1" '
            'width="26" height="12"/></svg> hatched: where the recorded distance could lie (its bracket)</li>'
            f'<li>Scale: logarithmic from {_text(format_round_distance(scale.near_mm, imperial=imperial))} to '
            f'{_text(format_round_distance(scale.far_mm, imperial=imperial))} (each equal step multiplies the '
            'distance), then a break and ∞ at the right end; shared by every bar on the page.</li>'
            '</ul></div></div>')


def _controls(data: ReportData) -> str:
    frames = data.frames
    verdicts = [verdict for verdict, _ in data.groups]
    present_flags = sorted({flag for flags in frames["flags"] for flag in flags} - set(verdicts))
    verdict_options = "".join(f'<option value="{_text(v)}">{_text(flag_word(v))}</option>'
                              for v in [*verdicts, *present_flags])
    lenses = sorted({str(v) for v in frames["lens"].fillna("(unknown lens)")})
    bodies = sorted({str(v) for v in frames["body"].fillna("(unknown body)")})
    f_numbers = sorted({float(v) for v in frames["f_number"].dropna()})

    def options(values):
        return "".join(f'<option value="{_text(v)}">{_text(v)}</option>' for v in values)

    stops = "".join(f'<option value="{value:g}">{_text(format_f_number(value))}</option>' for value in f_numbers)
    return ('<noscript><p class="note">Filters and culling keys need JavaScript; every frame is listed below.'
            '</p></noscript>'
            '<form id="filters" class="controls" hidden>'
            '<label>Verdict <select id="f-verdict"><option value="">all</option>'
            f'{verdict_options}<option value="rejected">marked rejected</option></select></label>'
            f'<label>Lens <select id="f-lens"><option value="">all</option>{options(lenses)}</select></label>'
            f'<label>Body <select id="f-body"><option value="">all</option>{options(bodies)}</select></label>'
            f'<label>From <select id="f-fmin"><option value="">widest</option>{stops}</select></label>'
            f'<label>to <select id="f-fmax"><option value="">narrowest</option>{stops}</select></label>'
            '<label>Search <input id="f-search" type="search" placeholder="file, lens, verdict…"></label>'
            '<output id="shown" aria-live="polite"></output>'
            '<button id="save" type="button">Save rejected list (S)</button>'
            '<p class="keys">Keys: ↓ or → next frame, ↑ or ← previous, X marks or unmarks the frame rejected, '
            'S saves the rejected frames\' paths as a text file. Marks stay in this browser until cleared.</p>'
            '</form>')


def _frame_html(row: dict, position: int, data: ReportData, grid: str, imperial: bool) -> str:
    flags = list(row["flags"])
    verdict = primary_verdict(flags)
    path = str(row["path"])
    lens = row.get("lens") if isinstance(row.get("lens"), str) else "(unknown lens)"
    body = row.get("body") if isinstance(row.get("body"), str) else "(unknown body)"
    f_number = _number(row.get("f_number"))
    picture = _picture(data.thumbnails.get(path), path)
    name = os.path.basename(path) or path
    words = [f'<li class="k-{verdict_kind(flag)}">{_icon(flag)} <strong>{_text(flag_word(flag))}</strong>: '
             f'{_text(_remedy(flag, row, imperial))}</li>' for flag in flags]
    if not flags:
        words = [f'<li class="k-passed">{_icon(PASSED)} <strong>Passed</strong>: the zone held what had to be '
                 'sharp</li>']
    blur = _blur_line(row)
    return (f'<article class="frame k-{verdict_kind(verdict)}" id="f{position}" tabindex="-1" '
            f'data-verdict="{_text(verdict)}" data-flags="{_text(" ".join(flags) or PASSED)}" '
            f'data-lens="{_text(lens)}" data-body="{_text(body)}" data-f="{"" if f_number is None else f"{f_number:g}"}" '
            f'data-path="{_text(path)}">'
            f'<div class="pic">{picture}</div>'
            f'<div class="about"><h3 title="{_text(path)}">{_text(name)}</h3>'
            f'<p class="setting">{_setting(row, imperial)}</p>'
            f'<p class="small">{_text(lens)} · {_text(body)}{_when(row)}</p>'
            f'<ul class="verdicts">{"".join(words)}</ul>{blur}'
            '<p class="marked">✕ marked rejected</p>'
            '<button class="reject" type="button"><span class="to-reject">Reject (X)</span>'
            '<span class="to-keep">Keep after all (X)</span></button></div>'
            f'<div class="zone">{_bar(row, data.scale, grid)}<p class="small">{_zone_words(row, imperial)}</p></div>'
            '</article>')


def _picture(thumbnail, path: str) -> str:
    if thumbnail is None or thumbnail.jpeg is None:
        reason = thumbnail.problem if thumbnail is not None else "no picture made"
        return f'<div class="nopic"><span>no picture:<br>{_text(reason)}</span></div>'
    encoded = base64.b64encode(thumbnail.jpeg).decode("ascii")
    return (f'<img src="data:image/jpeg;base64,{encoded}" width="{thumbnail.width}" height="{thumbnail.height}" '
            f'alt="{_text(os.path.basename(path))}" decoding="async">')


def _setting(row: dict, imperial: bool) -> str:
    parts = [format_focal_length(_number(row.get("focal_mm"))), format_f_number(_number(row.get("f_number")))]
    exposure = _number(row.get("exposure_s"))
    if exposure:
        parts.append(format_exposure(exposure))
    iso = _number(row.get("iso"))
    if iso:
        parts.append(f"ISO {iso:.0f}")
    focus = _number(row.get("focus_mm"))
    if focus is None:
        parts.append("focus distance not recorded")
    else:
        text = f"focus {format_distance(focus, imperial=imperial)}"
        low, high = _number(row.get("focus_near_mm")), _number(row.get("focus_far_mm"))
        if low is not None and high is not None and (low < focus * (1 - 1e-6) or high > focus * (1 + 1e-6)):
            text += (f" (could be {format_distance(low, imperial=imperial)} – "
                     f"{format_distance(high, imperial=imperial)})")
        source = row.get("focus_source")
        if isinstance(source, str) and source not in ("", "none"):
            text += f", from {FOCUS_SOURCE_WORDS.get(source, source)}"
        parts.append(text)
    return " · ".join(_text(part) for part in parts)


def _when(row: dict) -> str:
    captured = row.get("captured_at")
    if captured is None or captured != captured:
        return ""
    try:
        return f" · {captured:%Y-%m-%d %H:%M:%S}"
    except (TypeError, ValueError):
        return ""


def _blur_line(row: dict) -> str:
    parts = []
    for column, label in BLUR_COLUMNS:
        value = _number(row.get(column))
        if value is not None:
            parts.append(f"{format_length_mm(value)} {label}".strip())
    coc = _number(row.get("coc_mm"))
    if not parts:
        return ""
    against = f" (circle of confusion {format_length_mm(coc)})" if coc else ""
    return f'<p class="small">Measured blur: {_text(", ".join(parts))}{_text(against)}</p>'


def _zone_words(row: dict, imperial: bool) -> str:
    near, far = _number(row.get("near_mm")), _number(row.get("far_mm"))
    parts = [f"sharp {_zone_text(near, far, imperial)}" if near is not None else "sharp zone unknown"]
    need_near, need_far = _number(row.get("required_near_mm")), _number(row.get("required_far_mm"))
    if need_near is not None and need_far is not None:
        if math.isinf(need_near):
            # A depth around the subject, from a focus at infinity: no distance to show.
            parts.append("needed a subject in focus, not ∞")
        else:
            parts.append(f"needed {_zone_text(need_near, need_far, imperial)}")
    return _text(" · ".join(parts))


# ---- drawings ----------------------------------------------------------------------------

def _pct(fraction: float) -> str:
    return f"{fraction * 100:.2f}%"


def _grid_lines(scale: DistanceScale, ticks: list[float]) -> str:
    lines = "".join(f'<line x1="{_pct(scale.position(t))}" x2="{_pct(scale.position(t))}" y1="0" y2="{BAR_HEIGHT}"/>'
                    for t in ticks)
    return (f'<g class="grid">{lines}</g><rect class="gap" x="{_pct(scale.FINITE_SHARE)}" y="0" '
            f'width="{_pct(scale.INFINITY_FROM - scale.FINITE_SHARE)}" height="{BAR_HEIGHT}"/>')


def _bar_shapes(near, far, need_near, need_far, focus, bracket_low, bracket_high) -> str:
    """The shapes of one zone bar from positions 0..1 (``None`` leaves a shape out)."""
    shapes = []
    if bracket_low is not None and bracket_high is not None and bracket_high - bracket_low > 0.001:
        shapes.append(f'<rect class="bracket" x="{_pct(bracket_low)}" y="2" width="{_pct(bracket_high - bracket_low)}" '
                      f'height="{BAR_HEIGHT - 4}"/>')
    if need_near is not None and need_far is not None:
        shapes.append(f'<rect class="need" x="{_pct(need_near)}" y="5" width="{_pct(max(need_far - need_near, 0.002))}" '
                      f'height="{BAR_HEIGHT - 10}"/>')
    if near is not None and far is not None:
        shapes.append(f'<rect class="sharp" x="{_pct(near)}" y="11" width="{_pct(max(far - near, 0.002))}" '
                      f'height="{BAR_HEIGHT - 22}"/>')
    if focus is not None:
        shapes.append(f'<line class="focus" x1="{_pct(focus)}" x2="{_pct(focus)}" y1="3" y2="{BAR_HEIGHT}"/>'
                      f'<circle class="focus-pin" cx="{_pct(focus)}" cy="5" r="3.5"/>')
    return "".join(shapes)


def _bar(row: dict, scale: DistanceScale, grid: str) -> str:
    def at(column):
        return scale.position(_number(row.get(column)))

    shapes = _bar_shapes(at("near_mm"), at("far_mm"), at("required_near_mm"), at("required_far_mm"), at("focus_mm"),
                         at("focus_near_mm"), at("focus_far_mm"))
    return f'<svg class="bar" width="100%" height="{BAR_HEIGHT}" aria-hidden="true">{grid}{shapes}</svg>'


def _scale_svg(scale: DistanceScale, ticks: list[float], imperial: bool) -> str:
    labels = []
    for tick in ticks:
        x = scale.position(tick)
        anchor = "start" if x < 0.02 else "middle"
        labels.append(f'<text x="{_pct(x)}" y="13" text-anchor="{anchor}">'
                      f'{_text(format_round_distance(tick, imperial=imperial))}</text>'
                      f'<line x1="{_pct(x)}" x2="{_pct(x)}" y1="16" y2="22"/>')
    labels.append('<text x="100%" y="13" text-anchor="end">∞</text>'
                  f'<line x1="{_pct(0.999)}" x2="{_pct(0.999)}" y1="16" y2="22"/>')
    return f'<svg class="scale" width="100%" height="22" aria-hidden="true">{"".join(labels)}</svg>'


def _icon(verdict: str) -> str:
    kind = verdict_kind(verdict)
    return f'<svg class="icon" width="14" height="14" aria-hidden="true"><use href="#i-{kind}"/></svg>'


# Shapes shared by the whole page: the hatching of a distance bracket and one icon per kind
# of verdict (a triangle for a miss, a diamond for "cannot judge", a circle for good news, a
# tick for a pass), so no meaning rests on colour alone.
_DEFINITIONS = (
    '<svg class="defs" width="0" height="0" aria-hidden="true"><defs>'
    '<pattern id="hatch" width="6" height="6" patternUnits="userSpaceOnUse" patternTransform="rotate(45)">'
    '<line x1="0" y1="0" x2="0" y2="6" class="hatch-line"/></pattern>'
    '<symbol id="i-miss" viewBox="0 0 14 14"><path d="M7 1 13 13H1z" class="ico"/>'
    '<path d="M7 5v4M7 10.5v1.2" class="ico-mark"/></symbol>'
    '<symbol id="i-unjudged" viewBox="0 0 14 14"><path d="M7 1 13 7 7 13 1 7z" class="ico"/>'
    '<path d="M5.4 5.6a1.7 1.7 0 1 1 2.2 1.6c-.5.2-.6.5-.6 1.1M7 9.9v1.1" class="ico-mark"/></symbol>'
    '<symbol id="i-good" viewBox="0 0 14 14"><circle cx="7" cy="7" r="6" class="ico"/>'
    '<circle cx="7" cy="7" r="2" class="ico-dot"/></symbol>'
    '<symbol id="i-passed" viewBox="0 0 14 14"><circle cx="7" cy="7" r="6" class="ico"/>'
    '<path d="M4 7.2 6.2 9.4 10.2 4.8" class="ico-mark"/></symbol>'
    '</defs></svg>'
)

_STYLE = """
:root{--ink:#1f2328;--soft:#59636e;--line:#d5d9dd;--paper:#fbfaf7;--miss:#9a3b16;--unjudged:#4f5b66;
--good:#2e6b57;--passed:#2e6b57;--zone:#2d5f8b;--need:#1f2328;--focus:#111;--bracket:#8a8f95}
*{box-sizing:border-box}
[hidden]{display:none!important}
html{background:var(--paper);color:var(--ink);font:15px/1.45 system-ui,-apple-system,"Segoe UI",Roboto,sans-serif}
body{margin:0 auto;max-width:1280px;padding:1.2rem 1.5rem 3rem}
h1{font-size:1.6rem;margin:0 0 .3rem;font-weight:600}
h2{font-size:1.1rem;margin:1.6rem 0 .4rem;font-weight:600}
h3{font-size:1rem;margin:0 0 .15rem;word-break:break-all}
.lede{margin:.2rem 0}.small{font-size:.85rem;color:var(--soft);margin:.15rem 0}
.summary{display:flex;flex-wrap:wrap;align-items:flex-start;gap:2rem;margin:1rem 0}
table{border-collapse:collapse;font-size:.9rem}caption{text-align:left;font-weight:600;padding-bottom:.2rem}
th,td{padding:.2rem .7rem .2rem 0;border-bottom:1px solid var(--line);text-align:left;vertical-align:middle}
.num{text-align:right}a{color:inherit}
.legend{border:1px solid var(--line);padding:.4rem 1rem .6rem;background:#fff}
.legend h2{margin:.3rem 0}.legend ul{margin:0;padding-left:0;list-style:none;font-size:.88rem}
.legend li{margin:.15rem 0}.legend-grid{display:grid;grid-template-columns:minmax(16rem,1fr) minmax(16rem,1fr);gap:1.5rem}
.controls{position:sticky;top:0;z-index:2;background:var(--paper);border-bottom:1px solid var(--line);
padding:.6rem 0;margin-top:1rem;display:flex;flex-wrap:wrap;gap:.5rem 1rem;align-items:center}
.controls label{font-size:.9rem}.controls select,.controls input,.controls button{font:inherit;font-size:.9rem}
.keys{flex-basis:100%;margin:0;font-size:.8rem;color:var(--soft)}
.note{border-left:3px solid var(--soft);padding-left:.6rem}
.group h2{display:flex;align-items:center;gap:.45rem;border-bottom:2px solid var(--ink);padding-bottom:.2rem}
.count{font-weight:400;color:var(--soft);font-size:.9rem}
.frame,.scale-row{display:grid;grid-template-columns:248px minmax(15rem,1fr) minmax(18rem,1.35fr);gap:0 1.2rem}
.frame{padding:.7rem .4rem;border-bottom:1px solid var(--line);align-items:start;outline:none}
@media screen{.frame{content-visibility:auto;contain-intrinsic-size:auto 190px}}
.scale-row{padding:0 .4rem}
.pic img{display:block;width:auto;height:auto;max-width:240px;max-height:170px;border:1px solid var(--line);background:#fff}
.nopic{width:240px;height:160px;border:1px dashed var(--soft);display:flex;align-items:center;justify-content:center;
text-align:center;font-size:.8rem;color:var(--soft);padding:.5rem;word-break:break-word}
.verdicts{list-style:none;margin:.3rem 0;padding:0;font-size:.9rem}.verdicts li{margin:.1rem 0}
.icon{vertical-align:-2px;flex:none}.ico{fill:none;stroke:currentColor;stroke-width:1.4}
.ico-mark{fill:none;stroke:currentColor;stroke-width:1.6;stroke-linecap:round}.ico-dot{fill:currentColor}
.k-miss>.icon,.k-miss .icon{color:var(--miss)}.k-unjudged .icon{color:var(--unjudged)}
.k-good .icon,.k-passed .icon{color:var(--passed)}
.bar{display:block;overflow:visible;background:#fff;border:1px solid var(--line)}
.scale{display:block;overflow:visible;font-size:11px;fill:var(--soft);stroke:var(--soft)}.scale text{stroke:none}
.grid line{stroke:#e3e6e9;stroke-width:1}.gap{fill:#f0efe9}
.bracket{fill:url(#hatch);stroke:var(--bracket);stroke-width:.8}.hatch-line{stroke:var(--bracket);stroke-width:1.6}
.need{fill:none;stroke:var(--need);stroke-width:1.5;stroke-dasharray:5 3}
.sharp{fill:var(--zone);stroke:var(--zone);stroke-width:1.5}
.focus{stroke:var(--focus);stroke-width:1.5}.focus-pin{fill:#fff;stroke:var(--focus);stroke-width:1.5}
.key{vertical-align:middle;margin-right:.3rem}.legend-bar{margin-top:.2rem}
.reject{margin-top:.3rem;font-size:.8rem}
.marked{display:none;font-weight:600;color:var(--miss);margin:.2rem 0}
.frame.rejected .marked{display:block}.frame.rejected .pic{opacity:.35}
.to-keep,.frame.rejected .to-reject{display:none}.frame.rejected .to-keep{display:inline}
.frame.current{box-shadow:inset 4px 0 0 var(--ink);background:#fff}
.no-js .reject,.no-js .controls{display:none}
footer{margin-top:2rem;font-size:.8rem;color:var(--soft)}
@media (max-width:900px){.frame,.scale-row{grid-template-columns:248px 1fr}.zone,.scale-row .scale{grid-column:1/-1}
.scale-row>div{display:none}.legend-grid{grid-template-columns:1fr}}
@media print{
@page{size:A4;margin:10mm}
html{background:#fff;font-size:8pt}body{max-width:none;padding:0}
.controls,noscript,.reject,.keys,footer{display:none}
*{-webkit-print-color-adjust:exact;print-color-adjust:exact}
.summary{gap:1rem;margin:.4rem 0}.legend{border:none;padding:0}
.group{break-before:auto}.group h2{break-after:avoid;margin-top:.8rem}
.scale-row{display:block;width:calc((100% - 9mm)/4);padding:0}.scale-row>div{display:none}
.frames{display:grid;grid-template-columns:repeat(4,1fr);gap:3mm}
.frame{display:block;padding:1.5mm;border:.3pt solid #999;break-inside:avoid;box-shadow:none}
.pic img{max-width:100%;max-height:32mm;margin:0 auto 1mm}.nopic{width:100%;height:30mm}
h3{font-size:8.5pt}.verdicts{font-size:7.5pt}.small{font-size:7pt}
.frame.rejected .pic{opacity:.35}.frame.current{background:none}
}
"""

_SCRIPT = """
(function(){
var root=document.documentElement;root.classList.remove('no-js');root.classList.add('js');
var rows=[].slice.call(document.querySelectorAll('article.frame'));
var groups=[].slice.call(document.querySelectorAll('section.group'));
var words=rows.map(function(r){return [].map.call(r.querySelectorAll('h3,.setting,.small,.verdicts'),
 function(e){return e.textContent;}).join(' ').toLowerCase();});
var form=document.getElementById('filters');form.hidden=false;
var store='sharpzone-rejected:'+document.body.dataset.page, rejected={}, current=-1;
function $(id){return document.getElementById(id);}
try{JSON.parse(localStorage.getItem(store)||'[]').forEach(function(p){rejected[p]=true;});}catch(e){}
function keep(){try{localStorage.setItem(store,JSON.stringify(Object.keys(rejected)));}catch(e){}}
function paint(r){r.classList.toggle('rejected',!!rejected[r.dataset.path]);}
function count(){return Object.keys(rejected).length;}
function apply(){
 var v=$('f-verdict').value,l=$('f-lens').value,b=$('f-body').value,q=$('f-search').value.trim().toLowerCase();
 var lo=parseFloat($('f-fmin').value),hi=parseFloat($('f-fmax').value),shown=0;
 rows.forEach(function(r,i){
  var f=parseFloat(r.dataset.f),ok=true;
  if(v==='rejected')ok=!!rejected[r.dataset.path];
  else if(v)ok=(' '+r.dataset.flags+' ').indexOf(' '+v+' ')>=0;
  if(ok&&l)ok=r.dataset.lens===l;
  if(ok&&b)ok=r.dataset.body===b;
  if(ok&&!isNaN(lo))ok=f>=lo-1e-9;
  if(ok&&!isNaN(hi))ok=f<=hi+1e-9;
  if(ok&&q)ok=words[i].indexOf(q)>=0;
  r.hidden=!ok;if(ok)shown++;});
 groups.forEach(function(g){g.hidden=!g.querySelector('article.frame:not([hidden])');});
 $('shown').textContent=shown+' of '+rows.length+' frames shown · '+count()+' marked rejected';
 if(current>=0&&rows[current].hidden)move(1);}
function visible(){return rows.filter(function(r){return !r.hidden;});}
function select(r){
 if(current>=0){rows[current].classList.remove('current');rows[current].removeAttribute('aria-current');}
 current=rows.indexOf(r);if(current<0)return;
 r.classList.add('current');r.setAttribute('aria-current','true');r.focus({preventScroll:true});
 r.scrollIntoView({block:'nearest'});}
function move(step){
 var list=visible();if(!list.length)return;
 var at=current>=0?list.indexOf(rows[current]):-1;
 if(at<0){select(list[step>0?0:list.length-1]);return;}
 select(list[Math.max(0,Math.min(list.length-1,at+step))]);}
function toggle(r){
 var p=r.dataset.path;if(rejected[p])delete rejected[p];else rejected[p]=true;paint(r);keep();apply();}
function save(){
 var lines=rows.filter(function(r){return rejected[r.dataset.path];}).map(function(r){return r.dataset.path;});
 var blob=new Blob([lines.join('\\n')+(lines.length?'\\n':'')],{type:'text/plain;charset=utf-8'});
 var a=document.createElement('a');a.href=URL.createObjectURL(blob);
 a.download='rejected-'+document.body.dataset.title+'.txt';document.body.appendChild(a);a.click();
 setTimeout(function(){URL.revokeObjectURL(a.href);a.remove();},1000);}
rows.forEach(function(r){paint(r);
 r.querySelector('.reject').addEventListener('click',function(e){e.stopPropagation();select(r);toggle(r);});
 r.addEventListener('click',function(){select(r);});});
['f-verdict','f-lens','f-body','f-fmin','f-fmax','f-search'].forEach(function(id){
 $(id).addEventListener('input',apply);$(id).addEventListener('change',apply);});
form.addEventListener('submit',function(e){e.preventDefault();});
$('save').addEventListener('click',save);
document.addEventListener('keydown',function(e){
 if(e.altKey||e.ctrlKey||e.metaKey)return;
 var t=e.target.tagName;if(t==='INPUT'||t==='SELECT'||t==='TEXTAREA'){if(e.key==='Escape')e.target.blur();return;}
 var k=e.key;
 if(k==='ArrowDown'||k==='ArrowRight'){move(1);e.preventDefault();}
 else if(k==='ArrowUp'||k==='ArrowLeft'){move(-1);e.preventDefault();}
 else if((k==='x'||k==='X')&&current>=0){toggle(rows[current]);e.preventDefault();}
 else if(k==='s'||k==='S'){save();e.preventDefault();}});
apply();
})();
"""
