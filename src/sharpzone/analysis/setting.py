"""One-off answers: the sharp zone of one setting (``sharpzone dof``) and a focus-stack plan
(``sharpzone stack``). Pure computation over the optics core; no catalogue needed unless a
sensor format is not one of the shipped ones."""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass, field

from sharpzone.errors import InvalidValue
from sharpzone.optics import dof as dof_core
from sharpzone.optics.coc import CocPolicy, DiagonalFraction, FixedCoc, parse_coc_policy
from sharpzone.optics.diffraction import airy_disk_diameter_mm, diffraction_limited_f_number
from sharpzone.optics.formats import SensorFormat
from sharpzone.optics.macro import MacroSpec, check_macro_spec, sharp_zone_focusing
from sharpzone.optics.planning import DEFAULT_STACK_OVERLAP, StackPlan, plan_focus_stack
from sharpzone.optics.stops import stop_difference
from sharpzone.seed import find_shipped_format

DEFAULT_SENSOR = "36x24"

FormatLookup = Callable[[str], SensorFormat]


def format_lookup(catalog_location: str | None = None) -> FormatLookup:
    """A lookup of sensor formats as ``sheet`` sees them: the catalogue's own (so ``format
    edit`` counts), or the shipped list while no catalogue file exists yet (``dof`` then
    needs no database and creates none). A current SQLite catalogue is asked through
    ``sqlite3`` alone (``catalog.peek.sensor_format``); anything else, or a name it does not
    know, goes through the catalogue service."""

    def lookup(name: str) -> SensorFormat:
        from sharpzone.catalog.location import resolve_catalog_url, sqlite_path

        url = resolve_catalog_url(catalog_location)
        path = sqlite_path(url)
        if path is not None and not path.exists():
            return find_shipped_format(name)
        from sharpzone.catalog.migrate import head_revision
        from sharpzone.catalog.peek import sensor_format

        found = sensor_format(url, name, head_revision())  # a current SQLite file: no SQLAlchemy
        if found is not None:
            return found
        from sharpzone.catalog.engine import session_scope
        from sharpzone.catalog.service import get_format

        with session_scope(url, write=False) as session:  # a look-up: never creates or changes one
            return get_format(session, name).to_core()

    return lookup


@dataclass(frozen=True)
class LensOptics:
    """What a one-off answer takes from a catalogued lens: focal length (a prime's own, else
    ``None``), the long end, close focus (mm from the sensor), maximum magnification and pupil magnification."""

    name: str
    focal_mm: float | None
    focal_max_mm: float
    close_focus_mm: float | None
    max_magnification: float | None
    pupil_magnification: float


def catalog_lens_optics(name: str, catalog_location: str | None = None) -> LensOptics:
    """The lens called ``name`` (or answering to that EXIF name) in the catalogue."""
    from sharpzone.catalog.engine import session_scope
    from sharpzone.catalog.location import resolve_catalog_url
    from sharpzone.catalog.service import get_lens

    with session_scope(resolve_catalog_url(catalog_location), write=False) as session:  # read only
        row = get_lens(session, name)  # by name or EXIF alias
        prime = row.focal_min_mm if row.focal_min_mm == row.focal_max_mm else None
        return LensOptics(row.name, prime, row.focal_max_mm, row.close_focus_mm, row.max_magnification, row.pupil_magnification or 1.0)


@dataclass(frozen=True)
class CocChoice:
    """The CoC used, the policy it came from and the format it applied to."""

    coc_mm: float
    policy: CocPolicy
    sensor: SensorFormat | None

    def describe(self) -> str:
        """E.g. 'diagonal / 1500 of 36x24' or 'fixed 0.03 mm'."""
        if isinstance(self.policy, FixedCoc) or self.sensor is None:
            return self.policy.describe()
        if isinstance(self.policy, DiagonalFraction) and self.policy.divisor is None:
            return f"diagonal / {self.sensor.coc_divisor:g} of {self.sensor.name}"
        return f"{self.policy.describe()} of {self.sensor.name}"


def choose_coc(
    *,
    sensor: str | None = None,
    coc_mm: float | None = None,
    coc_policy: str | None = None,
    pixel_pitch_mm: float | None = None,
    lookup: FormatLookup = find_shipped_format,
) -> CocChoice:
    """Decide the circle of confusion: a fixed ``coc_mm`` wins, else ``coc_policy`` applied to
    ``sensor`` (default: the 36 × 24 mm format and its own diagonal rule)."""
    if coc_mm is not None:
        if coc_policy:
            raise InvalidValue("give either --coc or --coc-policy, not both")
        policy: CocPolicy = FixedCoc(coc_mm)
        fmt = lookup(sensor) if sensor else None
        return CocChoice(policy.coc_mm(fmt), policy, fmt)  # type: ignore[arg-type]
    fmt = lookup(sensor or DEFAULT_SENSOR)
    policy = parse_coc_policy(coc_policy)
    return CocChoice(policy.coc_mm(fmt, pixel_pitch_mm), policy, fmt)


@dataclass(frozen=True)
class SettingReport:
    """Everything ``sharpzone dof`` says about one setting; lengths in mm."""

    focal_mm: float
    f_number: float
    focus_mm: float
    reference: str
    coc: CocChoice
    zone: dof_core.SharpZone
    pupil_magnification: float
    airy_disk_mm: float
    diffraction_limited_f_number: float
    closeup_total_mm: float | None
    notes: tuple[str, ...] = field(default_factory=tuple)

    @property
    def is_closeup(self) -> bool:
        return self.zone.magnification >= dof_core.CLOSEUP_MAGNIFICATION

    @property
    def past_diffraction_limit(self) -> bool:
        return self.zone.effective_f_number > self.diffraction_limited_f_number


def evaluate_setting(
    focal_mm: float,
    f_number: float,
    focus_mm: float,
    *,
    sensor: str | None = None,
    coc_mm: float | None = None,
    coc_policy: str | None = None,
    reference: str = "sensor",
    pupil_magnification: float = 1.0,
    close_focus_mm: float | None = None,
    max_magnification: float | None = None,
    lookup: FormatLookup = find_shipped_format,
) -> SettingReport:
    """The sharp zone of a lens of ``focal_mm`` at ``f_number`` focused at ``focus_mm`` (mm,
    measured from ``reference``), with the CoC, diffraction and close-up figures around it.

    With ``max_magnification`` (reached at ``close_focus_mm`` from the sensor) the focal
    length follows the lens's close focusing (``optics.macro``)."""
    coc = choose_coc(sensor=sensor, coc_mm=coc_mm, coc_policy=coc_policy, lookup=lookup)
    macro = check_macro_spec(focal_mm, close_focus_mm, max_magnification, what="the lens")
    zone = sharp_zone_focusing(macro, focal_mm, f_number, coc.coc_mm, focus_mm, reference=reference,
                               pupil_magnification=pupil_magnification)
    airy = airy_disk_diameter_mm(zone.effective_f_number)
    limit = diffraction_limited_f_number(coc.coc_mm)
    closeup_total = None
    if zone.magnification >= dof_core.CLOSEUP_MAGNIFICATION:
        closeup_total = dof_core.closeup_total_depth_mm(f_number, coc.coc_mm, zone.magnification,
                                                        pupil_magnification)
    notes = []
    if zone.effective_f_number > limit:
        notes.append(
            f"past the diffraction limit: the Airy disk ({airy * 1000:.1f} µm) is wider than the CoC "
            f"({coc.coc_mm * 1000:.1f} µm); opening up to about f/{limit / (1 + zone.magnification / pupil_magnification):.1f} "
            "keeps the plane of focus crisper"
        )
    if zone.magnification >= dof_core.CLOSEUP_MAGNIFICATION:
        notes.append(
            f"close-up: {zone.magnification:.2f}× magnification, the lens works at f/{zone.effective_f_number:.1f} "
            f"({stop_difference(f_number, zone.effective_f_number):.1f} stops less light than marked)"
        )
    if math.isinf(zone.far_mm):
        notes.append("the zone reaches infinity: focusing nearer (towards the hyperfocal distance) gains depth in front")
    if macro is not None:
        notes.append(focusing_note(macro, float(zone.focus_mm)))
    return SettingReport(
        focal_mm=float(focal_mm), f_number=float(f_number), focus_mm=float(focus_mm), reference=reference,
        coc=coc, zone=zone, pupil_magnification=float(pupil_magnification), airy_disk_mm=float(airy),
        diffraction_limited_f_number=float(limit), closeup_total_mm=closeup_total, notes=tuple(notes),
    )


def focusing_note(macro: MacroSpec, focus_mm: float) -> str:
    """What the close-focusing model did at ``focus_mm`` (from the sensor), in words."""
    from sharpzone.optics.macro import effective_focal_mm

    focal = float(effective_focal_mm(macro, macro.focal_mm, focus_mm))
    return (f"the lens focuses close by shortening its focal length ({macro.describe()}); "
            f"focused here it works as {focal:.1f} mm")


@dataclass(frozen=True)
class RailPlan:
    """The same range shot on a focusing rail: focus left at the first frame's setting and
    the camera moved ``step_mm`` between frames (every frame then has the same depth)."""

    focus_mm: float
    depth_mm: float
    step_mm: float
    frame_count: int


@dataclass(frozen=True)
class StackReport:
    """A focus-stack plan with the CoC it was made for; lengths in mm.

    ``airy_disk_mm`` has one value per frame (2.44 λ N_eff, 550 nm); ``diffraction_soft``
    says which frames it softens beyond the CoC. ``rail`` is given for a finite range.
    """

    focal_mm: float
    coc: CocChoice
    near_target_mm: float
    far_target_mm: float
    plan: StackPlan
    macro: MacroSpec | None = None
    airy_disk_mm: tuple[float, ...] = ()
    diffraction_soft: tuple[bool, ...] = ()
    rail: RailPlan | None = None
    notes: tuple[str, ...] = ()

    @property
    def steps_mm(self) -> tuple[float, ...]:
        """Change of focus distance from each frame to the next (one fewer than frames)."""
        focus = self.plan.focus_mm
        return tuple(b - a for a, b in zip(focus, focus[1:]))


def plan_stack(
    focal_mm: float,
    f_number: float,
    near_target_mm: float,
    far_target_mm: float,
    *,
    sensor: str | None = None,
    coc_mm: float | None = None,
    coc_policy: str | None = None,
    reference: str = "sensor",
    pupil_magnification: float = 1.0,
    overlap: float = DEFAULT_STACK_OVERLAP,
    close_focus_mm: float | None = None,
    max_magnification: float | None = None,
    lookup: FormatLookup = find_shipped_format,
) -> StackReport:
    """Frames (focus distances, near to far) at ``f_number`` that together hold the range,
    each frame's working f-number and Airy disk, and the same range on a focusing rail.

    With ``max_magnification`` (reached at ``close_focus_mm`` from the sensor) the focal
    length follows the lens's close focusing, so the plan reaches as near as the lens does."""
    coc = choose_coc(sensor=sensor, coc_mm=coc_mm, coc_policy=coc_policy, lookup=lookup)
    macro = check_macro_spec(focal_mm, close_focus_mm, max_magnification, what="the lens")
    try:
        plan = plan_focus_stack(focal_mm, f_number, coc.coc_mm, near_target_mm, far_target_mm,
                                reference=reference, pupil_magnification=pupil_magnification, overlap=overlap,
                                macro=macro)
    except InvalidValue as error:
        if macro is None and near_target_mm <= 4 * focal_mm and error.hint is None:
            raise InvalidValue(error.message, hint="a lens that focuses closer (a macro lens) records its maximum "
                               "magnification: give --max-magnification with --close-focus, or --lens") from None
        raise
    airy = tuple(float(airy_disk_diameter_mm(n)) for n in plan.effective_f_number)
    soft = tuple(a > coc.coc_mm for a in airy)
    rail = None
    if math.isfinite(far_target_mm) and plan.frame_count > 1:
        first = sharp_zone_focusing(macro, focal_mm, f_number, coc.coc_mm, plan.focus_mm[0], reference=reference,
                                    pupil_magnification=pupil_magnification)
        depth = float(first.total_mm)
        step = depth * (1 - plan.overlap)
        count = 1 + math.ceil(max(0.0, far_target_mm - near_target_mm - depth) / step - 1e-9)
        rail = RailPlan(plan.focus_mm[0], depth, step, count)
    notes = []
    if soft and all(soft):
        limit = float(diffraction_limited_f_number(coc.coc_mm))
        notes.append(
            f"diffraction softens every frame: at the working f-number (f/{min(plan.effective_f_number):.1f} or more) "
            f"the Airy disk ({min(airy) * 1000:.0f} µm) is wider than the CoC ({coc.coc_mm * 1000:.0f} µm); "
            f"open up to a working f/{limit:.1f} or less (marked about "
            f"f/{limit / (1 + plan.magnification[0] / pupil_magnification):.1f}) and take more frames")
    elif any(soft):
        count = sum(soft)
        notes.append(f"diffraction softens {count} of {plan.frame_count} frames beyond the CoC (marked ‡)")
    if macro is not None:
        notes.append(focusing_note(macro, plan.focus_mm[0]))
    return StackReport(float(focal_mm), coc, float(near_target_mm), float(far_target_mm), plan, macro, airy,
                       soft, rail, tuple(notes))
