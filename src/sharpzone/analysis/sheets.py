"""Per-lens sharp-zone sheets: for each focal length of a lens, the near and far limits at
every marked f-number over a ladder of focus distances, plus the hyperfocal distances.

``build_sheet`` is pure (a ``LensSpec`` and a ``CocChoice`` in, a ``Sheet`` of numbers in
mm out); ``catalog.service.sheets.sheet_from_catalog`` resolves a catalogued lens and body
or format first. The
renderers in ``sharpzone.report.sheet_text`` and ``sharpzone.report.sheet_chart`` turn a
``Sheet`` into CSV, Markdown, HTML, PDF or PNG.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass
import numpy as np

from sharpzone.analysis.setting import CocChoice
from sharpzone.errors import InvalidValue
from sharpzone.optics.diffraction import diffraction_limited_f_number
from sharpzone.optics.dof import check_reference, hyperfocal_mm, lens_to_sensor_distance, sensor_to_lens_distance
from sharpzone.optics.macro import sharp_zone_focusing
from sharpzone.optics.stops import STEPS_PER_STOP, check_scale, stop_series
from sharpzone.units import MM_PER_FOOT, MM_PER_INCH, format_distance

CAVEAT = ("Sharp-zone figures are optical estimates for making pictures, not safety distances: "
          "keep to local rules for distances to people, animals, traffic and hazards.")

# Common focal-length steps (mm) that zoom sheets pick their intermediate columns from
# (common practice: the lengths engraved on zoom rings and sold as primes).
COMMON_FOCAL_LENGTHS_MM = (10, 12, 14, 16, 18, 20, 24, 28, 35, 40, 50, 70, 85, 100, 135, 200, 300, 400, 500, 600, 800)
# An intermediate step must sit at least this factor inside either end of the zoom range.
FOCAL_END_MARGIN = 1.15

# Focus ladders: round distances people set on a lens scale, metric (mm) and imperial.
_FINE_STEPS = (1.0, 1.5, 2.0, 3.0, 5.0, 7.0)
_COARSE_STEPS = (1.0, 2.0, 5.0)
_IMPERIAL_INCHES = (2, 3, 4, 6, 8)
MAX_LADDER_ROWS = 14
# The distances portraits are usually taken at, head-and-shoulders to full length (common
# practice): added to the ladder wherever it spans them, beyond MAX_LADDER_ROWS.
PORTRAIT_DISTANCES_MM = (2000.0, 2500.0, 3000.0, 4000.0, 5000.0)
PORTRAIT_DISTANCES_FT = (7.0, 8.0, 10.0, 12.0, 15.0)
# Close-up rows for a lens whose focal length follows its focus (a macro lens): the range
# where product and detail work happens, in round steps (metric mm, imperial inches).
CLOSE_UP_DISTANCES_MM = (200.0, 250.0, 350.0, 400.0, 450.0, 600.0, 800.0)
CLOSE_UP_DISTANCES_IN = (8.0, 10.0, 14.0, 16.0, 18.0, 21.0, 30.0)
# A ladder step closer than this factor to the close-focus row would repeat it.
LADDER_GAP = 1.15
# Without a catalogued close-focus distance the ladder starts at this many focal lengths:
# a rough default, not a measured value; the sheet says so.
DEFAULT_CLOSE_FOCUS_FOCAL_LENGTHS = 10.0
# Samples per chart curve (log-spaced from the nearest ladder row past the farthest one).
CURVE_SAMPLES = 160

# Two f-numbers within this relative difference name the same marked stop.
_SAME_STOP = 0.006


@dataclass(frozen=True)
class LensSpec:
    """A lens as a sheet needs it: focal range (mm), widest f-number at each end, narrowest
    f-number, closest focus (mm from the sensor; ``None`` if unknown) and pupil magnification."""

    name: str
    focal_min_mm: float
    focal_max_mm: float
    max_aperture_wide: float
    max_aperture_tele: float
    min_aperture: float
    close_focus_mm: float | None = None
    pupil_magnification: float = 1.0
    max_magnification: float | None = None

    def __post_init__(self) -> None:
        from sharpzone.catalog.rules import lens_values  # the catalogue's own lens rules

        lens_values(name=self.name, focal_min_mm=self.focal_min_mm, focal_max_mm=self.focal_max_mm,
                    max_aperture_wide=self.max_aperture_wide, max_aperture_tele=self.max_aperture_tele,
                    min_aperture=self.min_aperture, close_focus_mm=self.close_focus_mm,
                    pupil_magnification=self.pupil_magnification, max_magnification=self.max_magnification)
        self.macro_at(self.focal_max_mm)  # the one check of the pair (optics.macro)

    def macro_at(self, focal_mm: float):
        """The close-focusing model at ``focal_mm`` (``optics.macro.MacroSpec``), or ``None``:
        a recorded maximum magnification applies to a prime and to a zoom's long end."""
        from sharpzone.optics.macro import check_macro_spec

        if self.max_magnification is None or abs(focal_mm - self.focal_max_mm) > _SAME_STOP * focal_mm:
            return None
        return check_macro_spec(self.focal_max_mm, self.close_focus_mm, self.max_magnification,
                                what=f"lens {self.name!r}")

    @classmethod
    def from_row(cls, row) -> LensSpec:
        """The spec of a catalogue ``Lens`` row (or anything with the same attributes)."""
        return cls(row.name, row.focal_min_mm, row.focal_max_mm, row.max_aperture_wide, row.max_aperture_tele,
                   row.min_aperture, row.close_focus_mm, row.pupil_magnification or 1.0,
                   getattr(row, "max_magnification", None))

    @property
    def is_prime(self) -> bool:
        return self.focal_min_mm == self.focal_max_mm

    def widest_f_number_at(self, focal_mm: float) -> float:
        """The smallest f-number the lens offers at ``focal_mm``, as a marked stop.

        Between the ends the value is interpolated linearly in focal length (an estimate:
        real zooms close down in steps the catalogue does not hold) and rounded up to the
        next marked third stop, so the sheet never claims a wider aperture than the lens has.
        """
        if self.is_prime:
            return self.max_aperture_wide
        share = (focal_mm - self.focal_min_mm) / (self.focal_max_mm - self.focal_min_mm)
        share = min(max(share, 0.0), 1.0)
        return _as_marked_stop(self.max_aperture_wide + share * (self.max_aperture_tele - self.max_aperture_wide))


def _as_marked_stop(f_number: float) -> float:
    """``f_number`` itself when it is a marked third or half stop, else the next third stop up."""
    thirds = [s.label for s in stop_series("third", 0.5, 128.0)]
    for label in thirds + [s.label for s in stop_series("half", 0.5, 128.0)]:
        if abs(label - f_number) <= _SAME_STOP * label:
            return label
    return min(label for label in thirds if label > f_number)


@dataclass(frozen=True, eq=False)
class FocalTable:
    """One focal length's numbers; every length in mm in the sheet's reference.

    Rows are ``focus_mm`` (the ladder, ``inf`` last when present), columns ``f_numbers``;
    ``near_mm``/``far_mm``/``total_mm`` have shape (rows, columns) and ``far_mm`` is ``inf``
    where the zone reaches infinity; ``magnification`` is each row's image scale.
    ``hyperfocal_mm`` and ``hyperfocal_near_mm`` (the near
    limit when focused there) have one value per column. ``close_focus_raised`` says the
    catalogued close focus was nearer than the model reaches (4 f from the sensor) and the
    rows start there instead. ``curve_*`` hold the same limits sampled densely in focus
    distance for charts.
    """

    focal_mm: float
    f_numbers: tuple[float, ...]
    past_diffraction_limit: tuple[bool, ...]
    focus_mm: np.ndarray
    near_mm: np.ndarray
    far_mm: np.ndarray
    total_mm: np.ndarray
    magnification: np.ndarray
    hyperfocal_mm: np.ndarray
    hyperfocal_near_mm: np.ndarray
    close_focus_mm: float
    close_focus_raised: bool
    curve_focus_mm: np.ndarray
    curve_near_mm: np.ndarray
    curve_far_mm: np.ndarray
    # The close-focusing model the rows follow (``optics.macro``: the focal length shortens
    # close up), if the lens has one.
    macro: object | None = None


@dataclass(frozen=True, eq=False)
class Sheet:
    """A lens's sharp-zone sheet: one ``FocalTable`` per focal length, and what they assume."""

    lens: LensSpec
    coc: CocChoice
    reference: str
    stops: str
    diffraction_limited_f_number: float
    tables: tuple[FocalTable, ...]
    close_focus_assumed: bool
    caveat: str = CAVEAT


def sheet_focal_lengths(lens: LensSpec, requested: Sequence[float] | None = None) -> list[float]:
    """The focal lengths (mm) a sheet covers: ``requested`` (each checked against the range),
    a prime's one focal length, or a zoom's ends with one to three common steps between,
    spread evenly on a log scale (more for a longer zoom)."""
    if requested:
        chosen = []
        for focal in requested:
            if not (lens.focal_min_mm * (1 - _SAME_STOP) <= focal <= lens.focal_max_mm * (1 + _SAME_STOP)):
                raise InvalidValue(f"focal length {focal:g} mm is outside the range of {lens.name!r} "
                                   f"({focal_range_text(lens)})")
            chosen.append(float(focal))
        return sorted(set(chosen))
    if lens.is_prime:
        return [float(lens.focal_min_mm)]
    low, high = float(lens.focal_min_mm), float(lens.focal_max_mm)
    ratio = high / low
    wanted = 1 if ratio < 2 else 2 if ratio < 3.5 else 3
    candidates = [float(c) for c in COMMON_FOCAL_LENGTHS_MM if low * FOCAL_END_MARGIN <= c <= high / FOCAL_END_MARGIN]
    steps: list[float] = []
    for k in range(1, wanted + 1):
        target = low * ratio ** (k / (wanted + 1))
        free = [c for c in candidates if c not in steps]
        if free:
            steps.append(min(free, key=lambda c: abs(math.log(c / target))))
    return sorted({low, high, *steps})


def focal_range_text(lens: LensSpec) -> str:
    """'50 mm' for a prime, '24–70 mm' for a zoom."""
    return f"{lens.focal_min_mm:g} mm" if lens.is_prime else f"{lens.focal_min_mm:g}–{lens.focal_max_mm:g} mm"


def sheet_f_numbers(lens: LensSpec, focal_mm: float, stops: str = "full") -> list[float]:
    """The columns at ``focal_mm``: wide open, then the marked stops of the ``stops`` scale
    down to the lens's minimum aperture. A marked stop less than half a step narrower than
    wide open is left out (f/1.8 is followed by f/2.8 on the full-stop scale, not f/2)."""
    scale = check_scale(stops)
    widest = lens.widest_f_number_at(focal_mm)
    half_step = 2.0 ** (1 / (4 * STEPS_PER_STOP[scale]))
    narrower = [s.label for s in stop_series(scale, 0.5, 128.0)
                if s.label >= widest * half_step * (1 - _SAME_STOP) and s.label <= lens.min_aperture * (1 + _SAME_STOP)]
    return [widest, *narrower]


def focus_ladder_mm(nearest_mm: float, farthest_mm: float, *, imperial: bool = False,
                    close_up: bool = False) -> list[float]:
    """Round focus distances (mm) from ``nearest_mm`` (kept as the first row) to
    ``farthest_mm``, then infinity: 1, 1.5, 2, 3, 5, 7 per decade of metres or feet, or
    1, 2, 5 when that would give more than ``MAX_LADDER_ROWS`` rows; the portrait distances
    besides, and with ``close_up`` (a macro lens) the close-up distances too."""
    for steps in (_FINE_STEPS, _COARSE_STEPS):
        rounds = round_distances_mm(steps, imperial=imperial)
        between = [d for d in rounds if nearest_mm * LADDER_GAP <= d <= farthest_mm]
        if len(between) + 2 <= MAX_LADDER_ROWS:
            break
    extra = [feet * MM_PER_FOOT for feet in PORTRAIT_DISTANCES_FT] if imperial else list(PORTRAIT_DISTANCES_MM)
    if close_up:
        extra += [inches * MM_PER_INCH for inches in CLOSE_UP_DISTANCES_IN] if imperial else list(CLOSE_UP_DISTANCES_MM)
    for d in extra:
        if nearest_mm * LADDER_GAP <= d <= farthest_mm and not any(math.isclose(d, kept, rel_tol=1e-9) for kept in between):
            between.append(d)
    return [nearest_mm, *sorted(between), math.inf]


def round_distances_mm(steps: tuple[float, ...], *, imperial: bool) -> list[float]:
    """Round distances (mm), ascending: ``steps`` × each power of ten from 10 cm to 7 km, or
    from 1 ft (after 2, 3, 4, 6 and 8 in) to 7000 ft."""
    if imperial:
        small = [inches * MM_PER_INCH for inches in _IMPERIAL_INCHES]
        return small + [step * 10**k * MM_PER_FOOT for k in range(0, 4) for step in steps]
    return [step * 10**k for k in range(2, 7) for step in steps]


def build_sheet(
    lens: LensSpec,
    coc: CocChoice,
    *,
    focal_lengths: Sequence[float] | None = None,
    stops: str = "full",
    distances: Sequence[float] | None = None,
    reference: str = "sensor",
    imperial: bool = False,
) -> Sheet:
    """The sharp-zone sheet of ``lens`` with the circle of confusion ``coc``.

    ``focal_lengths`` (mm) default to ``sheet_focal_lengths``; ``stops`` is the f-number
    scale ('full', 'half', 'third'); ``distances`` (mm, measured from ``reference``) default
    to a ladder of round distances from the close-focus distance to the hyperfocal distance
    at the widest aperture, then infinity (rounded in feet when ``imperial``). The f-numbers
    computed are the marked labels, as a camera shows them and ``sharpzone dof`` takes them.
    """
    reference = check_reference(reference)
    scale = check_scale(stops)
    limit = float(diffraction_limited_f_number(coc.coc_mm))
    tables = tuple(
        _focal_table(lens, coc.coc_mm, focal, scale, distances, reference, imperial, limit)
        for focal in sheet_focal_lengths(lens, focal_lengths)
    )
    return Sheet(lens=lens, coc=coc, reference=reference, stops=scale, diffraction_limited_f_number=limit,
                 tables=tables, close_focus_assumed=lens.close_focus_mm is None)


def _close_focus_mm(lens: LensSpec, focal_mm: float, reference: str) -> tuple[float, bool]:
    """The closest focus at ``focal_mm`` in ``reference`` (catalogued from the sensor), and
    whether it was raised to 4 f from the sensor, the nearest a thin lens can focus: real
    macro lenses (thick, internally focusing) get nearer than the model can follow unless
    they record their maximum magnification (then the focal length follows the focus)."""
    if reference == "sensor" and lens.macro_at(focal_mm) is not None:
        return float(lens.close_focus_mm), False
    from_sensor = lens.close_focus_mm if lens.close_focus_mm is not None else DEFAULT_CLOSE_FOCUS_FOCAL_LENGTHS * focal_mm
    raised = from_sensor < 4 * focal_mm
    from_sensor = max(from_sensor, 4 * focal_mm)
    close = from_sensor if reference == "sensor" else float(sensor_to_lens_distance(from_sensor, focal_mm))
    return close, raised


def _focal_table(lens, coc_mm, focal_mm, scale, distances, reference, imperial, limit) -> FocalTable:
    f_numbers = np.array(sheet_f_numbers(lens, focal_mm, scale))
    hyperfocal = np.asarray(hyperfocal_mm(focal_mm, f_numbers, coc_mm))
    if reference == "sensor":
        hyperfocal = np.asarray(lens_to_sensor_distance(hyperfocal, focal_mm))
    close, close_raised = _close_focus_mm(lens, focal_mm, reference)
    if distances:
        ladder = sorted(set(float(d) for d in distances))
        nearer = [d for d in ladder if d < close * (1 - 1e-9)]
        if nearer:
            raise InvalidValue(f"focus distance {format_distance(nearer[0])} is nearer than the close-focus "
                               f"distance of {lens.name!r} at {focal_mm:g} mm ({format_distance(close)})")
    else:
        ladder = focus_ladder_mm(close, float(hyperfocal.max()), imperial=imperial,
                                 close_up=reference == "sensor" and lens.macro_at(focal_mm) is not None)
    finite = [d for d in ladder if math.isfinite(d)] or [close]
    chart_far = max(max(finite), float(hyperfocal.max())) * 1.5
    curve = np.geomspace(min(finite), chart_far, CURVE_SAMPLES)
    rows, columns = len(ladder), len(f_numbers)
    # One vectorised call: the ladder rows, then focus at each column's hyperfocal distance,
    # then the chart samples.
    focus = np.vstack([
        np.broadcast_to(np.array(ladder)[:, None], (rows, columns)),
        hyperfocal[None, :],
        np.broadcast_to(curve[:, None], (CURVE_SAMPLES, columns)),
    ])
    macro = lens.macro_at(focal_mm) if reference == "sensor" else None
    zone = sharp_zone_focusing(macro, focal_mm, f_numbers[None, :], coc_mm, focus, reference=reference,
                               pupil_magnification=lens.pupil_magnification)
    near, far, total = (np.asarray(values) for values in (zone.near_mm, zone.far_mm, zone.total_mm))
    return FocalTable(
        focal_mm=float(focal_mm),
        f_numbers=tuple(float(n) for n in f_numbers),
        past_diffraction_limit=tuple(bool(n > limit) for n in f_numbers),
        focus_mm=np.array(ladder),
        near_mm=near[:rows],
        far_mm=far[:rows],
        total_mm=total[:rows],
        magnification=np.asarray(zone.magnification)[:rows, 0],
        hyperfocal_mm=hyperfocal,
        hyperfocal_near_mm=near[rows],
        close_focus_mm=close,
        close_focus_raised=close_raised,
        curve_focus_mm=curve,
        curve_near_mm=near[rows + 1:],
        curve_far_mm=far[rows + 1:],
        macro=macro,
    )
