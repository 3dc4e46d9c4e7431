"""The rules every catalogue row obeys, in one place.

The service functions (and so the commands) and ``catalog import`` check rows with these
same functions; migration 0004 makes the database refuse the enumerations and ranges too
(``CHECKS`` below, declared on the models), so no other writer can store what the program
refuses. Pure: plain values in, cleaned values out, ``InvalidValue`` with one line when a
value breaks a rule. No database, no numpy.
"""

from __future__ import annotations

import functools
import math

from sharpzone.errors import InvalidValue
from sharpzone.optics.limits import DIAGONAL_DIVISOR, MIN_F_NUMBER
from sharpzone.vocabulary import FOCUS_SOURCES, PLAN_KINDS, SUBJECT_DISTANCE_RANGES

NAME_LENGTH = 200

# Whole numbers the database columns hold (PostgreSQL INTEGER and BIGINT; SQLite holds
# 64 bits in both, so the narrower bound is the catalogue's on every database).
INTEGER_RANGE = (-(2**31), 2**31 - 1)
BIG_INTEGER_RANGE = (-(2**63), 2**63 - 1)

# A camera's UTC offset is within ±14 h (the zones in use, IANA tz database); ±24 h is the
# loosest bound that still refuses a damaged value.
MAX_UTC_OFFSET_MINUTES = 24 * 60


# ---- single values ----------------------------------------------------------------------


def clean_name(name: str | None, what: str) -> str:
    """``name`` stripped; refuses an empty or over-long name with ``InvalidValue``."""
    cleaned = (name or "").strip()
    if not cleaned:
        raise InvalidValue(f"{what} name must not be empty")
    if len(cleaned) > NAME_LENGTH:
        raise InvalidValue(f"{what} name {cleaned[:40]!r}… is longer than {NAME_LENGTH} characters")
    return cleaned


def optional_text(value: str | None) -> str | None:
    """Stripped text, or ``None`` for a missing or blank value (blank never reaches the
    database in a nullable column, so exports can write ``None`` as an empty field)."""
    if value is None:
        return None
    stripped = str(value).strip()
    return stripped or None


def _number(value, what: str, shown: str | None = None) -> float:
    if isinstance(value, bool):
        raise InvalidValue(f"{what} {repr(value) if shown is None else shown} is not a number")
    try:
        return float(value)
    except (TypeError, ValueError):
        raise InvalidValue(f"{what} {repr(value) if shown is None else shown} is not a number") from None


def positive(value: float | int | None, what: str, unit: str = "", *, allow_inf: bool = False) -> float | None:
    """``value`` as a float when it is a positive number; ``None`` passes through."""
    if value is None:
        return None
    if type(value) in (float, int) and value > 0 and (value != math.inf or allow_inf):
        return float(value)  # the common case, checked without building a message
    shown = f"{value!r}{(' ' + unit) if unit else ''}"
    number = _number(value, what, shown)
    if math.isnan(number) or number <= 0 or (math.isinf(number) and not allow_inf):
        expected = "a positive number or inf" if allow_inf else "a positive finite number"
        raise InvalidValue(f"{what} {shown} must be {expected}")
    return number


def at_least_zero(value: float | int | None, what: str, unit: str = "") -> float | None:
    """``value`` as a float when it is a finite number, 0 or more; ``None`` passes through."""
    if value is None:
        return None
    shown = f"{value!r}{(' ' + unit) if unit else ''}"
    number = _number(value, what, shown)
    if not (math.isfinite(number) and number >= 0):
        raise InvalidValue(f"{what} {shown} must be a finite number, 0 or more")
    return number


def fraction(value: float | None, what: str) -> float | None:
    """``value`` when it is a fraction of the image, 0 to 1; ``None`` passes through."""
    if value is None:
        return None
    number = _number(value, what)
    if not (0.0 <= number <= 1.0):
        raise InvalidValue(f"{what} {value!r} must be a fraction of the image from 0 to 1")
    return number


def f_number(value: float | None, what: str) -> float | None:
    """``value`` as an f-number: finite and at least ``MIN_F_NUMBER``; ``None`` passes through."""
    if value is None:
        return None
    number = _number(value, what)
    if not (math.isfinite(number) and number >= MIN_F_NUMBER):
        raise InvalidValue(f"{what} {value!r} is not a valid f-number: expected f/{MIN_F_NUMBER:g} or more")
    return number


def whole_number(value, what: str, *, low: int, high: int = INTEGER_RANGE[1]) -> int | None:
    """``value`` as an int from ``low`` to ``high``; ``None`` passes through; a boolean or a
    fraction is refused."""
    if value is None:
        return None
    if isinstance(value, bool) or not isinstance(value, (int, float)) or (isinstance(value, float) and not value.is_integer()):
        raise InvalidValue(f"{what} {value!r} must be a whole number")
    if not (low <= value <= high):
        raise InvalidValue(f"{what} {value!r} must be a whole number from {low} to {high}")
    return int(value)


def positive_int(value: int | None, what: str) -> int | None:
    """``value`` as an int when it is a positive whole number; ``None`` passes through."""
    if value is None:
        return None
    if isinstance(value, bool) or not isinstance(value, (int, float)) or not float(value).is_integer() or value <= 0:
        raise InvalidValue(f"{what} {value!r} must be a positive whole number")
    return whole_number(value, what, low=1)


def one_of(value: str | None, allowed: tuple[str, ...], what: str, *, optional: bool = True) -> str | None:
    """``value`` when it is one of ``allowed`` (or ``None`` when ``optional``)."""
    if value is None and optional:
        return None
    if value not in allowed:
        raise InvalidValue(f"{what} {value!r} is not known: expected one of {', '.join(allowed)}")
    return value


def coc_policy(text: str | None) -> str | None:
    """The canonical text of a circle-of-confusion policy (``InvalidValue`` if the optics
    core does not understand it), as stored in ``Shoot.coc_policy``; blank is no policy."""
    from sharpzone.optics.coc import parse_coc_policy

    text = optional_text(text)
    return parse_coc_policy(text).spec if text else None


# ---- whole rows -------------------------------------------------------------------------


def lens_values(
    *,
    name,
    focal_min_mm,
    focal_max_mm,
    max_aperture_wide,
    max_aperture_tele,
    min_aperture,
    close_focus_mm=None,
    pupil_magnification=1.0,
    max_magnification=None,
) -> dict:
    """The checked fields of a lens: focal lengths above 0 (longest not shorter than
    shortest), f-numbers of at least f/0.5 with the minimum aperture no wider than the
    maximum, close focus, pupil magnification and maximum magnification above 0."""
    name = clean_name(name, "lens")
    label = f"lens {name!r}"
    focal_min = positive(focal_min_mm, f"{label}: shortest focal length", "mm")
    focal_max = positive(focal_max_mm, f"{label}: longest focal length", "mm")
    if focal_max < focal_min:
        raise InvalidValue(f"{label}: longest focal length {focal_max:g} mm is shorter than the shortest {focal_min:g} mm")
    wide = f_number(max_aperture_wide, f"{label}: maximum aperture")
    tele = f_number(max_aperture_tele, f"{label}: maximum aperture at the long end")
    narrowest = f_number(min_aperture, f"{label}: minimum aperture")
    if None in (wide, tele, narrowest):
        raise InvalidValue(f"{label}: the maximum and minimum apertures must be given")
    if narrowest < max(wide, tele):
        raise InvalidValue(
            f"{label}: minimum aperture f/{narrowest:g} is wider than the maximum aperture "
            f"f/{max(wide, tele):g}: expected a larger f-number such as f/22"
        )
    return {
        "name": name,
        "focal_min_mm": focal_min,
        "focal_max_mm": focal_max,
        "max_aperture_wide": wide,
        "max_aperture_tele": tele,
        "min_aperture": narrowest,
        "close_focus_mm": positive(close_focus_mm, f"{label}: close-focus distance", "mm"),
        "pupil_magnification": positive(pupil_magnification, f"{label}: pupil magnification"),
        "max_magnification": positive(max_magnification, f"{label}: maximum magnification"),
    }


def plan_values(label: str, kind: str | None, near=None, far=None, front=None, back=None) -> dict:
    """The checked plan of a shoot: no plan (all four limits empty), a ``range`` (near
    above 0, far beyond it, may be inf) or a ``depth`` (front and back finite, 0 or more,
    not both 0). Returns the ``plan_*`` columns."""
    from sharpzone.units import format_distance

    kind = one_of(kind, PLAN_KINDS, f"{label}: plan kind")
    values = {"plan_kind": kind, "plan_near_mm": None, "plan_far_mm": None, "plan_front_mm": None, "plan_back_mm": None}
    if kind is None:
        if any(value is not None for value in (near, far, front, back)):
            raise InvalidValue(f"{label}: plan limits are given without a plan kind (range or depth)")
    elif kind == "range":
        if front is not None or back is not None:
            raise InvalidValue(f"{label}: give a range (near/far) or a subject depth (front/back), not both")
        if near is None or far is None:
            raise InvalidValue(f"{label}: a range plan needs both the near and the far limit")
        near = positive(near, f"{label}: near limit", "mm")
        far = positive(far, f"{label}: far limit", "mm", allow_inf=True)
        if far <= near:
            raise InvalidValue(f"{label}: far limit {format_distance(far)} must be beyond the near limit "
                               f"{format_distance(near)}")
        values["plan_near_mm"], values["plan_far_mm"] = near, far
    else:
        if near is not None or far is not None:
            raise InvalidValue(f"{label}: give a range (near/far) or a subject depth (front/back), not both")
        if front is None or back is None:
            raise InvalidValue(f"{label}: a subject-depth plan needs both the depth in front and behind")
        front = at_least_zero(front, f"{label}: depth in front", "mm")
        back = at_least_zero(back, f"{label}: depth behind", "mm")
        if front + back <= 0:
            raise InvalidValue(f"{label}: the subject depth must not be zero in front and behind")
        values["plan_front_mm"], values["plan_back_mm"] = front, back
    return values


def shoot_settings(label: str, *, planned_focal_mm=None, planned_f_number=None, planned_focus_mm=None,
                   coc_policy_text=None) -> dict:
    """The checked planned settings of a shoot."""
    return {
        "planned_focal_mm": positive(planned_focal_mm, f"{label}: planned focal length", "mm"),
        "planned_f_number": f_number(planned_f_number, f"{label}: planned f-number"),
        "planned_focus_mm": positive(planned_focus_mm, f"{label}: planned focus distance", "mm", allow_inf=True),
        "coc_policy": coc_policy(coc_policy_text),
    }


def _format_row(values: dict) -> dict:
    from sharpzone.optics.formats import SensorFormat

    name = clean_name(values.get("name"), "format")
    for column in ("width_mm", "height_mm", "coc_divisor"):
        if column in values:
            positive(values[column], f"format {name!r}: {column.replace('_mm', '').replace('_', ' ')}",
                     "mm" if column.endswith("_mm") else "")
    if "width_mm" in values and "height_mm" in values:
        SensorFormat(name, values["width_mm"], values["height_mm"], values.get("coc_divisor", DIAGONAL_DIVISOR))
    aliases = values.get("aliases") or ""
    if any(alias != alias.strip() for alias in aliases.split(";")):
        raise InvalidValue(f"format {name!r}: aliases {aliases!r} must not have spaces around them")
    return values


def alias_list(aliases: str | None) -> list[str]:
    """A format's stored aliases (one text, ``;`` between them) as a list, empty ones dropped."""
    return [alias for alias in (aliases or "").split(";") if alias]


def format_answers_to(wanted: str, name: str, aliases: str | None) -> bool:
    """Whether the format called ``name``, with the stored ``aliases``, is the one a person
    means by ``wanted``: its name or one of its aliases, ignoring case and surrounding space."""
    wanted = wanted.strip().lower()
    return wanted == name.lower() or wanted in (alias.lower() for alias in alias_list(aliases))


def _body_row(values: dict) -> dict:
    name = clean_name(values.get("name"), "body")
    clean_name(values.get("exif_make"), f"body {name!r}: EXIF make")
    clean_name(values.get("exif_model"), f"body {name!r}: EXIF model")
    positive_int(values.get("pixel_width"), f"body {name!r}: pixel width")
    positive_int(values.get("pixel_height"), f"body {name!r}: pixel height")
    return values


def _lens_row(values: dict) -> dict:
    fields = {key: values[key] for key in ("name", "focal_min_mm", "focal_max_mm", "max_aperture_wide",
                                            "max_aperture_tele", "min_aperture", "close_focus_mm",
                                            "pupil_magnification", "max_magnification") if key in values}
    return {**values, **{key: value for key, value in lens_values(**fields).items() if key in values}}


def _alias_row(values: dict) -> dict:
    clean_name(values.get("exif_name"), "EXIF lens")
    return values


def _shoot_row(values: dict) -> dict:
    name = clean_name(values.get("name"), "shoot")
    label = f"shoot {name!r}"
    plan_values(label, values.get("plan_kind"), values.get("plan_near_mm"), values.get("plan_far_mm"),
                values.get("plan_front_mm"), values.get("plan_back_mm"))
    settings = shoot_settings(label, planned_focal_mm=values.get("planned_focal_mm"),
                              planned_f_number=values.get("planned_f_number"),
                              planned_focus_mm=values.get("planned_focus_mm"),
                              coc_policy_text=values.get("coc_policy"))
    return {**values, "coc_policy": settings["coc_policy"]} if "coc_policy" in values else values


# A frame's single values: column → (what a person calls it, the check).
_FRAME_VALUE_RULES = {
    "subject_distance_range": ("subject distance range",
                               lambda v, what: one_of(v, SUBJECT_DISTANCE_RANGES, what)),
    "focal_mm": ("focal length", lambda v, what: positive(v, what, "mm")),
    "focal_35mm_mm": ("35 mm equivalent focal length", lambda v, what: positive(v, what, "mm")),
    "f_number": ("f-number", f_number),
    "exposure_s": ("exposure time", lambda v, what: positive(v, what, "s")),
    "iso": ("ISO", positive_int),
    "width_px": ("width", positive_int),
    "height_px": ("height", positive_int),
    "utc_offset_minutes": ("UTC offset (minutes)",
                           lambda v, what: whole_number(v, what, low=-MAX_UTC_OFFSET_MINUTES, high=MAX_UTC_OFFSET_MINUTES)),
    "focus_mm": ("focus distance", lambda v, what: positive(v, what, "mm", allow_inf=True)),
    "focus_near_mm": ("nearest focus distance", lambda v, what: positive(v, what, "mm", allow_inf=True)),
    "focus_far_mm": ("farthest focus distance", lambda v, what: positive(v, what, "mm", allow_inf=True)),
    **{f"focus_point_{axis}": (f"focus point {axis}", fraction) for axis in ("x", "y", "w", "h")},
}

# Values each rule above surely accepts, told by type and range alone (low ≤ value ≤ high),
# so that a row of ordinary values is checked without a call per value; anything else goes
# to the rule itself, which decides. The smallest positive float stands for "above 0", the
# largest finite one for "finite".
_ABOVE_0, _FINITE = 5e-324, 1.7976931348623157e308
_NUMBERS, _WHOLE = frozenset((int, float)), frozenset((int,))
_SURELY_ACCEPTED = {
    "focal_mm": (_NUMBERS, _ABOVE_0, _FINITE),
    "focal_35mm_mm": (_NUMBERS, _ABOVE_0, _FINITE),
    "f_number": (_NUMBERS, MIN_F_NUMBER, _FINITE),
    "exposure_s": (_NUMBERS, _ABOVE_0, _FINITE),
    "iso": (_WHOLE, 1, INTEGER_RANGE[1]),
    "width_px": (_WHOLE, 1, INTEGER_RANGE[1]),
    "height_px": (_WHOLE, 1, INTEGER_RANGE[1]),
    "utc_offset_minutes": (_WHOLE, -MAX_UTC_OFFSET_MINUTES, MAX_UTC_OFFSET_MINUTES),
    "focus_mm": (_NUMBERS, _ABOVE_0, math.inf),
    "focus_near_mm": (_NUMBERS, _ABOVE_0, math.inf),
    "focus_far_mm": (_NUMBERS, _ABOVE_0, math.inf),
    **{f"focus_point_{axis}": (_NUMBERS, 0.0, 1.0) for axis in ("x", "y", "w", "h")},
}


def _focus_bracket(values: dict, label: str) -> None:
    _check_bracket(values.get("focus_near_mm"), values.get("focus_mm"), values.get("focus_far_mm"), label)


def _check_bracket(near, focus, far, label: str) -> None:
    known = [value for value in (near, focus, far) if value is not None]
    if known != sorted(known):
        raise InvalidValue(f"{label}: focus bracket {near!r} – {far!r} mm must hold the focus distance {focus!r} mm "
                           "(nearest ≤ focus ≤ farthest)")


def frame_checks(values: dict, label: str) -> None:
    """A frame's capture settings: each in range, the focus bracket around the distance."""
    one_of(values.get("focus_source", "none"), FOCUS_SOURCES, f"{label}: focus source", optional=False)
    whole_number(values.get("file_size"), f"{label}: file size", low=0, high=BIG_INTEGER_RANGE[1])
    for column, (what, rule) in _FRAME_VALUE_RULES.items():
        rule(values.get(column), f"{label}: {what}")
    _focus_bracket(values, label)


@functools.lru_cache(maxsize=16)
def frame_values_checker(columns: tuple[str, ...]):
    """A frame's values read from a file, given as lists of the values of ``columns`` (in that
    order), made to fit the catalogue's rules: returns ``check(values, warnings) -> values``,
    which cleans the list in place, each value that breaks a rule dropped (``None``; a focus
    source unknown to the catalogue becomes "none") with a warning for it, so what a reader
    hands over always fits the CHECK constraints.
    Built once per set of columns; the ingest checks every frame it writes with it."""
    at = {column: index for index, column in enumerate(columns)}
    source_at = at.get("focus_source")
    bracket = tuple(at.get(column) for column in ("focus_near_mm", "focus_mm", "focus_far_mm"))
    plan = tuple((at[column], what, rule, *_SURELY_ACCEPTED.get(column, (frozenset(), 0, 0)))
                 for column, (what, rule) in _FRAME_VALUE_RULES.items() if column in at)

    def check(values: list, warnings: list[str]) -> list:
        if source_at is not None and values[source_at] not in FOCUS_SOURCES:
            warnings.append(f"focus source {values[source_at]!r} ignored: not one the catalogue knows")
            values[source_at] = "none"
        for index, what, rule, types, low, high in plan:
            value = values[index]
            if value is None or (type(value) in types and low <= value <= high):
                continue
            try:
                rule(value, what)
            except InvalidValue as error:
                warnings.append(f"{error.message}: ignored")
                values[index] = None
        near, focus, far = (None if index is None else values[index] for index in bracket)
        try:
            _check_bracket(near, focus, far, "focus")
        except InvalidValue as error:
            warnings.append(f"{error.message}: bracket ignored")
            for index in (bracket[0], bracket[2]):
                if index is not None:
                    values[index] = None
        return values

    return check


def _frame_row(values: dict) -> dict:
    frame_checks(values, f"frame {values.get('path')!r}")
    return values


def _blur_row(values: dict) -> dict:
    label = "measured blur"
    clean_name(values.get("method"), f"{label}: method")
    whole_number(values.get("method_version"), f"{label}: method version", low=0)
    positive_int(values.get("analysed_long_px"), f"{label}: analysed long side (px)")
    for column in ("focus_blur_px", "best_blur_px", "median_blur_px"):
        at_least_zero(values.get(column), f"{label}: {column.replace('_', ' ')}")
    for column in ("focus_x", "focus_y", "best_x", "best_y"):
        fraction(values.get(column), f"{label}: {column.replace('_', ' ')}")
    for column in ("focus_edges", "regions_measured", "regions_total"):
        whole_number(values.get(column), f"{label}: {column.replace('_', ' ')}", low=0)
    if values.get("regions_measured", 0) > values.get("regions_total", 0):
        raise InvalidValue(f"{label}: {values['regions_measured']} regions measured of only {values['regions_total']}")
    return values


def _problem_row(values: dict) -> dict:
    if not (values.get("path") or "").strip() or not (values.get("reason") or "").strip():
        raise InvalidValue("ingest problem: path and reason must not be empty")
    return values


ROW_RULES = {
    "sensor_format": _format_row,
    "body": _body_row,
    "lens": _lens_row,
    "lens_alias": _alias_row,
    "shoot": _shoot_row,
    "frame": _frame_row,
    "frame_blur": _blur_row,
    "ingest_problem": _problem_row,
}


def check_row(table: str, values: dict) -> dict:
    """``values`` (model columns of one ``table`` row; a missing one takes its default)
    checked by the same rules the service functions apply; returns them cleaned
    (e.g. a CoC policy in its canonical form)."""
    return ROW_RULES[table](values)


# ---- what the database enforces (migration 0004) ------------------------------------------


def _quoted(words: tuple[str, ...]) -> str:
    return ", ".join(f"'{word}'" for word in words)


def _between_0_and_1(*columns: str) -> list[tuple[str, str]]:
    return [(f"{column}_fraction", f"{column} IS NULL OR ({column} >= 0 AND {column} <= 1)") for column in columns]


def _above_0(*columns: str) -> list[tuple[str, str]]:
    return [(f"{column}_positive", f"{column} IS NULL OR {column} > 0") for column in columns]


def _at_least_0(*columns: str) -> list[tuple[str, str]]:
    return [(f"{column}_not_negative", f"{column} IS NULL OR {column} >= 0") for column in columns]


def _f_numbers(*columns: str) -> list[tuple[str, str]]:
    return [(f"{column}_f_number", f"{column} IS NULL OR {column} >= {MIN_F_NUMBER!r}") for column in columns]


# table → [(short name, SQL condition)]; the full name is ``ck_<table>_<short name>``
# (models.NAMING_CONVENTION). The conditions are plain SQL that SQLite and PostgreSQL share.
CHECKS: dict[str, list[tuple[str, str]]] = {
    "sensor_format": _above_0("width_mm", "height_mm", "coc_divisor"),
    "body": _above_0("pixel_width", "pixel_height"),
    "lens": [
        *_above_0("focal_min_mm", "pupil_magnification", "close_focus_mm", "max_magnification"),
        ("focal_range", "focal_max_mm >= focal_min_mm"),
        *_f_numbers("max_aperture_wide", "max_aperture_tele"),
        ("aperture_range", "min_aperture >= max_aperture_wide AND min_aperture >= max_aperture_tele"),
    ],
    "shoot": [
        ("plan_kind", f"plan_kind IS NULL OR plan_kind IN ({_quoted(PLAN_KINDS)})"),
        ("plan_shape",
         "(plan_kind IS NULL AND plan_near_mm IS NULL AND plan_far_mm IS NULL AND plan_front_mm IS NULL "
         "AND plan_back_mm IS NULL) "
         "OR (plan_kind = 'range' AND plan_near_mm > 0 AND plan_far_mm > plan_near_mm "
         "AND plan_front_mm IS NULL AND plan_back_mm IS NULL) "
         "OR (plan_kind = 'depth' AND plan_front_mm >= 0 AND plan_back_mm >= 0 "
         "AND plan_front_mm + plan_back_mm > 0 AND plan_near_mm IS NULL AND plan_far_mm IS NULL)"),
        *_above_0("planned_focal_mm", "planned_focus_mm"),
        *_f_numbers("planned_f_number"),
    ],
    "frame": [
        ("focus_source", f"focus_source IN ({_quoted(FOCUS_SOURCES)})"),
        ("subject_distance_range",
         f"subject_distance_range IS NULL OR subject_distance_range IN ({_quoted(SUBJECT_DISTANCE_RANGES)})"),
        *_above_0("focal_mm", "focal_35mm_mm", "exposure_s", "iso", "width_px", "height_px",
                  "focus_mm", "focus_near_mm", "focus_far_mm"),
        *_f_numbers("f_number"),
        *_at_least_0("file_size"),
        ("focus_bracket",
         "(focus_near_mm IS NULL OR focus_mm IS NULL OR focus_near_mm <= focus_mm) "
         "AND (focus_far_mm IS NULL OR focus_mm IS NULL OR focus_mm <= focus_far_mm) "
         "AND (focus_near_mm IS NULL OR focus_far_mm IS NULL OR focus_near_mm <= focus_far_mm)"),
        *_between_0_and_1("focus_point_x", "focus_point_y", "focus_point_w", "focus_point_h"),
    ],
    "frame_blur": [
        *_at_least_0("focus_blur_px", "best_blur_px", "median_blur_px", "focus_edges", "regions_measured",
                     "method_version"),
        *_above_0("analysed_long_px"),
        *_between_0_and_1("focus_x", "focus_y", "best_x", "best_y"),
        ("regions", "regions_measured <= regions_total"),
    ],
}
