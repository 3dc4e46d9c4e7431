"""The words for each verdict: what went wrong with a frame and what would have worked.

The verdicts and their remedy numbers come from ``analysis.checks``; this module only says
them, with units, in metric or imperial.
"""

from __future__ import annotations

import functools

import numpy as np

from sharpzone.analysis.blur_checks import PREVIEW_FLOOR_PX
from sharpzone.report.cells import float_values
from sharpzone.units import format_distance, format_f_number


def _value(row, name):
    value = row.get(name)
    try:
        value = float(value)
    except (TypeError, ValueError):
        return None
    return None if np.isnan(value) else value


def describe_bracket(row, *, imperial: bool = False) -> str | None:
    """"2.80–3.10 m, from Exif.Some.Key" for a frame whose focus distance is a bracket; else None."""
    nearest, farthest = _value(row, "focus_nearest_mm"), _value(row, "focus_farthest_mm")
    if nearest is None or farthest is None or not farthest > nearest * (1 + 1e-9):
        return None
    text = f"{format_distance(nearest, imperial=imperial)}–{format_distance(farthest, imperial=imperial)}"
    key = row.get("focus_key")
    return f"{text}, from {key}" if isinstance(key, str) and key else text


def _stopping_down(row, dist, over: str = "") -> str:
    """"f/11 would have held it" (and a refocus that saves a stop, as the alternative)."""
    text = f"{format_f_number(row['needed_f_number'])} would have held it{over}"
    better = _value(row, "better_focus_mm")
    if better is not None:
        text += f" (or focus at {dist(better)} with {format_f_number(row['better_f_number'])})"
    return text


def _stack(row, required: str) -> str:
    """The stack remedy, with the unreachable single-frame f-number as its reason."""
    single = _value(row, "single_frame_f_number")
    which = "this lens's" if row.get("lens_min_known", False) else "the usual"
    if single is None:
        reason = "one frame would need more than f/128"
    elif single > row["max_f_number"] * (1 + 1e-9):
        reason = f"one frame would need {format_f_number(single)}, past {which} narrowest {format_f_number(row['max_f_number'])}"
    else:
        reason = (f"one frame would need {format_f_number(single)}, into diffraction beyond about "
                  f"f/{row['diffraction_f_number']:.0f}")
    frames = _value(row, "stack_frames")
    if frames is None or frames < 0:
        return f"{reason}, and a focus stack would need too many frames; step back or widen the lens"
    return (f"{reason}; a focus stack of {int(frames)} frames at {format_f_number(row['stack_f_number'])} "
            f"would hold {required}")


def describe_flag(flag: str, row, *, imperial: bool = False) -> str:
    """One sentence for people: what went wrong with this frame and what would have worked."""
    def dist(value):
        return format_distance(value, imperial=imperial)

    if flag == "distance-unknown":
        recorded = row.get("focus_mm")
        if recorded is not None and recorded == recorded:
            return (f"recorded focus distance {dist(recorded)} is nearer than a {row['focal_mm']:g} mm lens can "
                    "focus (4 × its focal length from the sensor) — cannot judge; check the lens's focal length")
        hint = row.get("subject_distance_range")
        recorded_hint = (f" (the camera noted only a '{hint}' subject)" if isinstance(hint, str) and hint else "")
        return (f"focus distance unknown{recorded_hint} — cannot judge; give it with --distances FILE.csv at "
                "ingest or a sidecar")
    if flag in BLUR_WORDS:
        return BLUR_WORDS[flag](row, dist)
    if flag == "settings-unknown":
        missing = row.get("settings_missing")
        body = row.get("body")
        if isinstance(missing, str) and "format" in missing and isinstance(body, str) and body:
            from shlex import quote

            return (f"{missing} — cannot judge; set it once and every frame of this body is judged: "
                    f"sharpzone body edit {quote(body)} --format FORMAT (see 'sharpzone format list')")
        what = missing if isinstance(missing, str) and missing else "focal length, f-number or sensor format unknown"
        return f"{what} — cannot judge; confirm the body and lens"
    if flag == "no-requirement":
        return "nothing says what had to be sharp — set the shoot's plan or give --near/--far or --front/--back"
    if flag == "past-diffraction":
        return (f"stopped down past the diffraction limit (about f/{row['diffraction_f_number']:.1f} here): "
                "the plane of focus is softer than the CoC allows")
    if flag == "outside-plan":
        return f"subject at {dist(row['focus_mm'])} lies outside the zone the plan's settings give"
    required = f"{dist(row['required_near_mm'])}–{dist(row['required_far_mm'])}"
    if flag == "too-wide-open":
        over = " for any distance in the camera's bracket" if _bracketed(row) else ""
        return f"shot too wide open for {required}: {_stopping_down(row, dist, over)}"
    if flag == "focus-misplaced":
        if row.get("remedy") == "focus-on-subject":
            planned = _value(row, "better_focus_mm")
            where = f" at about {dist(planned)}, where the plan puts it," if planned is not None else ""
            return (f"focused at infinity: the camera missed the subject — focus on the subject{where} and "
                    "check that the autofocus point sits on it")
        return (f"focus placed wrong for {required}: focusing at {dist(row['better_focus_mm'])} with "
                f"{format_f_number(row['better_f_number'])} would have held it")
    if flag == "out-of-reach":
        return f"out of reach at {row['focal_mm']:g} mm with one frame: {_stack(row, required)}"
    if flag == "distance-uncertain":
        bracket = describe_bracket(row, imperial=imperial)
        share = _value(row, "holds_share") or 0.0
        text = (f"focus distance known only as {bracket or 'a bracket'}: the zone holds {required} over "
                f"{share:.0%} of it")
        remedy = row.get("remedy")
        if remedy == "stop-down":
            return f"{text}; {_stopping_down(row, dist, ' for any distance in it')}"
        if remedy == "refocus":
            return (f"{text}; focusing at {dist(row['better_focus_mm'])} with "
                    f"{format_f_number(row['better_f_number'])} (a distance set, not measured) would have held it")
        return f"{text}; {_stack(row, required)}"
    raise ValueError(f"unknown flag {flag!r}")


def _bracketed(row) -> bool:
    """Whether the frame's focus distance is a bracket (``describe_bracket`` says one)."""
    nearest, farthest = _value(row, "focus_nearest_mm"), _value(row, "focus_farthest_mm")
    return nearest is not None and farthest is not None and farthest > nearest * (1 + 1e-9)


# The row values each verdict's words read (``describe_flag``), so that ``describe_flags``
# says each distinct sentence once: a frame's words are those of the first frame whose
# values read the same. Each value is compared as the words show it: ``"distance"`` as
# ``format_distance`` prints it, a format such as ``".0f"`` as that format prints it, else
# as it is. ``None``: words made for every frame (the blur verdicts, on few frames).
# ``focus_bracketed`` stands for whether ``focus_nearest_mm``/``focus_farthest_mm`` make a
# bracket (``_bracketed``). A test checks that each sentence reads nothing else.
_REQUIRED = (("required_near_mm", "distance"), ("required_far_mm", "distance"))
_STOP = (("needed_f_number", None), ("better_focus_mm", "distance"), ("better_f_number", None))
_STACK = (("single_frame_f_number", None), ("max_f_number", None), ("lens_min_known", None),
          ("diffraction_f_number", ".0f"), ("stack_frames", None), ("stack_f_number", None))
FLAG_INPUTS: dict[str, tuple[tuple[str, str | None], ...] | None] = {
    "distance-unknown": (("focus_mm", "distance"), ("focal_mm", None), ("subject_distance_range", None)),
    "settings-unknown": (("settings_missing", None), ("body", None)),
    "no-requirement": (),
    "too-wide-open": (*_REQUIRED, ("focus_bracketed", None), *_STOP),
    "focus-misplaced": (*_REQUIRED, ("remedy", None), ("better_focus_mm", "distance"), ("better_f_number", None)),
    "out-of-reach": (*_REQUIRED, ("focal_mm", None), *_STACK),
    "distance-uncertain": (*_REQUIRED, ("focus_nearest_mm", "distance"), ("focus_farthest_mm", "distance"),
                           ("focus_bracketed", None), ("focus_key", None), ("holds_share", ".0%"),
                           ("remedy", None), *_STOP, *_STACK),
    "past-diffraction": (("diffraction_f_number", ".1f"),),
    "outside-plan": (("focus_mm", "distance"),),
}
DERIVED_INPUTS = {"focus_bracketed": ("focus_nearest_mm", "focus_farthest_mm")}


# Formats that print a whole number, as (the factor applied first, what follows the number):
# ``format(x, ".0%")`` is ``format(x * 100, ".0f") + "%"`` (CPython multiplies in double, as
# numpy does), and rounding to a whole number half to even, as ``np.round`` and ``format`` both
# do it, gives what the format prints, so equal prints are found without printing every value.
_WHOLE_FORMS = {".0f": (1.0, ""), ".0%": (100.0, "%")}


def _key_codes(frames, name: str, form: str | None, positions, imperial: bool, floats) -> tuple[np.ndarray, int]:
    """A column's values at ``positions`` as the words show them (see ``FLAG_INPUTS``) as
    numbers, and how many numbers there are: with a form, values printed the same are one
    number; without, equal values (==; unknown, NaN or None, one value). ``floats(name)``
    gives a column as floats."""
    import pandas as pd

    if name == "focus_bracketed":
        with np.errstate(invalid="ignore"):
            nearest = floats("focus_nearest_mm")[positions]
            farthest = floats("focus_farthest_mm")[positions]
            return (farthest > nearest * (1 + 1e-9)).astype(np.int64), 2  # NaN compares false: no bracket
    if name not in frames:
        return np.zeros(len(positions), dtype=np.int64), 1
    if form is not None:
        values = floats(name)[positions]
        suffix = ""
        if form in _WHOLE_FORMS:  # rounded as printed first: a format per number printed, not per value
            scale, suffix = _WHOLE_FORMS[form]
            with np.errstate(over="ignore"):  # (beyond 1e306 a share prints "inf%" either way)
                values, form = np.round(values * scale), ".0f"
        # Distinct by their bits, so that -0.0 and 0.0 (which print apart) stay apart; equal
        # prints are then one number by the prints themselves.
        distinct, inverse = np.unique(np.ascontiguousarray(values, dtype=np.float64).view(np.int64),
                                      return_inverse=True)
        distinct = distinct.view(np.float64)
        if form == "distance":
            shown = [format_distance(value, imperial=imperial) for value in distinct.tolist()]
        else:
            shown = [None if value != value else format(value, form) + suffix for value in distinct.tolist()]
        codes, said = pd.factorize(np.asarray(shown, dtype=object), use_na_sentinel=False)
        return codes[inverse.reshape(-1)], len(said)
    codes, said = pd.factorize(frames[name].to_numpy()[positions], use_na_sentinel=False)
    return codes, len(said)


def _float_column(frames, name: str) -> np.ndarray:
    if name not in frames:
        return np.full(len(frames), np.nan)
    return float_values(frames[name])


def _input_codes(frames, by_flag: dict[str, list[np.ndarray]], imperial: bool) -> dict[tuple, tuple[np.ndarray, int]]:
    """Each input that the flags present read (``FLAG_INPUTS``), keyed once for the rows of
    all the flags that read it: ``(name, form)`` → (a number per row of ``frames``, -1 where
    no such flag is, and how many numbers there are). Each column is read as floats once."""
    rows_of: dict[tuple, list[np.ndarray]] = {}
    for flag, blocks in by_flag.items():
        for name_form in FLAG_INPUTS.get(flag) or ():
            rows_of.setdefault(name_form, []).extend(blocks)
    floats = functools.cache(functools.partial(_float_column, frames))
    codes = {}
    for (name, form), blocks in rows_of.items():
        read = np.zeros(len(frames), dtype=bool)
        for block in blocks:
            read[block] = True
        positions = np.flatnonzero(read)
        numbers, size = _key_codes(frames, name, form, positions, imperial, floats)
        column = np.full(len(frames), -1, dtype=np.int64)
        column[positions] = numbers
        codes[name, form] = column, size
    return codes


def _read_by(flag: str, frames) -> list[str]:
    """The columns the words of ``flag`` read (every column for a verdict without a key)."""
    inputs = FLAG_INPUTS.get(flag)
    if inputs is None:
        return list(frames.columns)
    names = dict.fromkeys(source for name, _ in inputs for source in DERIVED_INPUTS.get(name, (name,)))
    return [name for name in names if name in frames]


def _rows(frames, positions: list[int], names: list[str]) -> list[dict]:
    """The rows at ``positions`` as dicts of the ``names`` columns, a column at a time."""
    if not names:
        return [{} for _ in positions]
    values = [_column_values(frames[name], positions) for name in names]
    return [dict(zip(names, row)) for row in zip(*values)]


def _column_values(column, positions: list[int]) -> list:
    """The column's values at ``positions`` as ``Series.tolist`` gives them: through numpy
    for numbers, flags and text (the same values, without pandas' indexing per call),
    through pandas for the rest (times come as timestamps)."""
    if isinstance(column.dtype, np.dtype) and column.dtype.kind in "fiubO":
        return column.to_numpy()[positions].tolist()
    return column.iloc[positions].tolist()


def describe_flags(frames, *, imperial: bool = False) -> list[list[dict[str, str]]]:
    """Per row of ``frames`` (checked frames): ``{"flag", "text"}`` for each of its ``flags``,
    the text from ``describe_flag``, said once per distinct combination of the values it
    reads (``FLAG_INPUTS``), so a hundred thousand frames cost a few hundred sentences.
    Rows with the same words share one list (read-only, like the ``flags`` lists)."""
    combinations = _combinations(frames["flags"].tolist())
    count = len(frames)
    by_flag: dict[str, list] = {}
    for combination, positions in combinations.items():
        for flag in combination:
            by_flag.setdefault(flag, []).append(positions)
    # Each row's sentence number for each flag, the first row saying each sentence, then those
    # rows (a column at a time) and the sentences.
    codes = _input_codes(frames, by_flag, imperial)
    sentence_of: dict[str, np.ndarray] = {}
    first_rows: dict[str, list[int]] = {}
    for flag, blocks in by_flag.items():
        index = np.concatenate(blocks)
        inputs = FLAG_INPUTS.get(flag)
        if inputs is None:
            which = np.arange(len(index))
        elif not inputs:
            which = np.zeros(len(index), dtype=np.int64)
        else:
            which = _numbered((codes[name_form][0][index], codes[name_form][1]) for name_form in inputs)
        _, first = np.unique(which, return_index=True)  # sentence numbers count up from 0
        first_rows[flag] = index[first].tolist()
        sentence_of[flag] = np.full(count, -1, dtype=np.int64)
        sentence_of[flag][index] = which
    said = {flag: [{"flag": flag, "text": describe_flag(flag, row, imperial=imperial)}
                   for row in _rows(frames, positions, _read_by(flag, frames))]
            for flag, positions in first_rows.items()}
    # Each row's list: the shared empty one, or that of the first row with the same sentences.
    choices: list = [[]]
    pick = np.zeros(count, dtype=np.int64)
    for combination, index in combinations.items():
        _, first, inverse = np.unique(_numbered((sentence_of[flag][index], len(said[flag])) for flag in combination),
                                      return_index=True, return_inverse=True)
        numbers = np.column_stack([sentence_of[flag][index[first]] for flag in combination]).tolist()
        pick[index] = len(choices) + inverse.reshape(-1)
        choices.extend([said[flag][number] for flag, number in zip(combination, row)] for row in numbers)
    lists = np.empty(len(choices), dtype=object)
    for number, choice in enumerate(choices):
        lists[number] = choice
    return lists[pick].tolist()


def _combinations(flag_lists: list) -> dict[tuple[str, ...], np.ndarray]:
    """The rows (ascending) of each combination of flags but none, in the order they first
    come; rows sharing one list (as ``check_frames`` makes them) are told apart by the
    list, not by reading each."""
    import pandas as pd

    lists, _ = pd.factorize(np.fromiter(map(id, flag_lists), dtype=np.uint64, count=len(flag_lists)))
    _, first = np.unique(lists, return_index=True)
    numbers: dict[tuple[str, ...], int] = {}
    combination_of_list = np.array([numbers.setdefault(tuple(flag_lists[row]), len(numbers))
                                    for row in first.tolist()], dtype=np.int64)
    of_row = combination_of_list[lists]
    return {combination: np.flatnonzero(of_row == number) for combination, number in numbers.items() if combination}


def _numbered(columns) -> np.ndarray:
    """A number per row for the rows' combined values in ``columns`` (pairs of the rows'
    numbers for one value and how many there are): rows whose values are all equal get the
    same number, 0 upwards."""
    numbers, bound = None, 1
    for codes, size in columns:
        if numbers is None:
            numbers = codes.astype(np.int64)
        else:
            if bound * size >= 2**62:  # renumber before the combined numbers could overflow
                numbers = np.unique(numbers, return_inverse=True)[1].reshape(-1)
                bound = int(numbers.max()) + 1
            numbers = numbers * size + codes
        bound *= size
    return np.unique(numbers, return_inverse=True)[1].reshape(-1)


# The blur verdicts (``analysis.blur_checks``): figures on the sensor and as multiples of the
# CoC, measured from a small preview, so always said as an estimate.

def blur_size(value_mm, coc_multiple) -> str:
    """A blur on the sensor in µm with its multiple of the CoC: "41 µm (1.4× CoC)"."""
    if value_mm is None or value_mm != value_mm:
        return "—"
    text = f"{value_mm * 1000:.0f} µm"
    if coc_multiple is not None and coc_multiple == coc_multiple:
        text += f" ({coc_multiple:.1f}× CoC)"
    return text


def measured_blur(row, which: str, *, short: bool = False) -> str:
    """The blur at the focus point or the sharpest region (which = "focus" or "best"), or
    "under X µm" when the preview cannot resolve finer: a figure below that would be a
    precision the preview does not have (``short``: without the reason, for a table)."""
    px, floor_mm = row.get(f"blur_{which}_px"), row.get("blur_floor_mm")
    if px is not None and px == px and floor_mm is not None and floor_mm == floor_mm and px <= PREVIEW_FLOOR_PX:
        under = f"under {floor_mm * 1000:.0f} µm"
        return under if short else f"{under}, the finest this preview shows"
    return blur_size(row.get(f"blur_{which}_mm"), row.get(f"blur_{which}_coc"))


def format_exposure(seconds) -> str:
    """``1/250 s``, ``1/8 s``, ``2 s``."""
    if seconds is None or seconds != seconds or seconds <= 0:
        return "—"
    if seconds < 0.4:
        return f"1/{1 / seconds:.0f} s"
    return f"{seconds:g} s"


def _focus_point(row) -> str:
    if row.get("blur_focus_assumed"):
        return "the centre (no focus point recorded)"
    return "the focus point"


def _disagreement(row, dist) -> str:
    focus = row.get("focus_mm")
    if not row.get("blur_disagrees") or focus is None or focus != focus:
        return ""
    return (f"; the recorded focus distance {dist(focus)} says the lens was focused on the subject, the pixels "
            "disagree: the camera focused at that distance on something else, or the subject was not there")


def _focus_missed(row, dist) -> str:
    return (f"{blur_size(row.get('blur_focus_mm'), row.get('blur_focus_coc'))} of blur at "
            f"{_focus_point(row)} while the {row.get('blur_where')} is sharp "
            f"({measured_blur(row, 'best')}) — the focus landed there"
            f"{_disagreement(row, dist)}; an estimate from a small preview, you decide what to reject")


def _soft_all_over(row, dist) -> str:
    text = (f"even the sharpest region ({row.get('blur_where')}) has "
            f"{blur_size(row.get('blur_best_mm'), row.get('blur_best_coc'))} of blur — shake, subject motion or a miss")
    exposure, limit = row.get("exposure_s"), row.get("handhold_limit_s")
    if exposure is not None and exposure == exposure and limit is not None and limit == limit:
        rule = f"the hand-holding rule's {format_exposure(limit)} (1/focal length in 35 mm terms; common practice)"
        if exposure > limit * 1.05:
            text += f"; {format_exposure(exposure)} is slower than {rule}: shake is likely, use a faster shutter or support"
        else:
            text += f"; {format_exposure(exposure)} is within {rule}: more likely motion or a missed focus"
    return text + _disagreement(row, dist) + "; an estimate from a small preview, you decide what to reject"


def _sharp_at_focus(row, dist) -> str:
    return f"sharp at {_focus_point(row)}: blur {measured_blur(row, 'focus')}"


def _not_measurable(row, dist) -> str:
    return (f"blur not measurable at {_focus_point(row)}: too few edges (a clear sky, a plain wall, deep shadow) "
            "— look at the frame yourself")


BLUR_WORDS = {
    "focus-missed": _focus_missed,
    "soft-all-over": _soft_all_over,
    "sharp-at-focus": _sharp_at_focus,
    "not-measurable": _not_measurable,
}


def flag_word(flag: str) -> str:
    """A verdict code as words for a heading or a label: ``too-wide-open`` → ``Too wide open``.
    Any code reads this way, so a verdict added later shows without an edit here."""
    words = flag.replace("-", " ").strip()
    return words[:1].upper() + words[1:]
