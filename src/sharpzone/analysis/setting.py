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
from sharpzone.optics.planning import StackPlan, plan_focus_stack
from sharpzone.optics.stops import stop_difference
from sharpzone.seed import find_shipped_format

DEFAULT_SENSOR = "36x24"

FormatLookup = Callable[[str], SensorFormat]


def format_lookup(catalog_location: str | None = None) -> FormatLookup:
    """A lookup of sensor formats as ``sheet`` sees them: the catalogue's own (so ``format
    edit`` counts), or the shipped list while no catalogue file exists yet (``dof`` then
    needs no database and creates none)."""

    def lookup(name: str) -> SensorFormat:
        from sharpzone.catalog.location import resolve_catalog_url, sqlite_path

        url = resolve_catalog_url(catalog_location)
        path = sqlite_path(url)
        if path is not None and not path.exists():
            return find_shipped_format(name)
        from sharpzone.catalog.engine import session_scope
        from sharpzone.catalog.service import get_format

        with session_scope(url) as session:
            return get_format(session, name).to_core()

    return lookup


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
    light_loss_stops: float
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
    lookup: FormatLookup = find_shipped_format,
) -> SettingReport:
    """The sharp zone of a lens of ``focal_mm`` at ``f_number`` focused at ``focus_mm`` (mm,
    measured from ``reference``), with the CoC, diffraction and close-up figures around it."""
    coc = choose_coc(sensor=sensor, coc_mm=coc_mm, coc_policy=coc_policy, lookup=lookup)
    zone = dof_core.sharp_zone(focal_mm, f_number, coc.coc_mm, focus_mm, reference=reference,
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
    return SettingReport(
        focal_mm=float(focal_mm), f_number=float(f_number), focus_mm=float(focus_mm), reference=reference,
        coc=coc, zone=zone, pupil_magnification=float(pupil_magnification), airy_disk_mm=float(airy),
        diffraction_limited_f_number=float(limit), closeup_total_mm=closeup_total,
        light_loss_stops=float(stop_difference(f_number, zone.effective_f_number)), notes=tuple(notes),
    )


@dataclass(frozen=True)
class StackReport:
    """A focus-stack plan with the CoC it was made for."""

    focal_mm: float
    coc: CocChoice
    near_target_mm: float
    far_target_mm: float
    plan: StackPlan


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
    overlap: float = 0.1,
    lookup: FormatLookup = find_shipped_format,
) -> StackReport:
    """Frames (focus distances, near to far) at ``f_number`` that together hold the range."""
    coc = choose_coc(sensor=sensor, coc_mm=coc_mm, coc_policy=coc_policy, lookup=lookup)
    plan = plan_focus_stack(focal_mm, f_number, coc.coc_mm, near_target_mm, far_target_mm,
                            reference=reference, pupil_magnification=pupil_magnification, overlap=overlap)
    return StackReport(float(focal_mm), coc, float(near_target_mm), float(far_target_mm), plan)
