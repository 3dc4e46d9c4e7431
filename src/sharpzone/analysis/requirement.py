"""What had to be sharp: a ``Requirement`` from the command line or a shoot's plan (words and
rules only, no numpy, so parsing the options of ``frames``/``check``/``stats`` stays light;
``analysis.checks`` judges the frames against it)."""

from __future__ import annotations

from dataclasses import dataclass

from sharpzone.errors import InvalidValue
from sharpzone.units import format_distance


@dataclass(frozen=True)
class Requirement:
    """What had to be sharp, in mm from the sensor: a ``range`` or a ``depth`` around focus."""

    kind: str
    near_mm: float | None = None
    far_mm: float | None = None
    front_mm: float | None = None
    back_mm: float | None = None

    def __post_init__(self) -> None:
        # The plan rules (kinds, ranges) live in one place, ``catalog.rules.plan_values``:
        # what a shoot's plan may be, a requirement may be.
        from sharpzone.catalog.rules import plan_values

        label = {"range": "--near/--far", "depth": "--front/--back"}.get(self.kind, "requirement")
        if self.kind is None:
            raise InvalidValue("a requirement needs a kind: range or depth")
        plan_values(label, self.kind, self.near_mm, self.far_mm, self.front_mm, self.back_mm)

    @classmethod
    def from_options(cls, *, near_mm=None, far_mm=None, front_mm=None, back_mm=None) -> Requirement | None:
        """The requirement the command line gives, ``None`` when it gives none."""
        if near_mm is not None or far_mm is not None:
            if front_mm is not None or back_mm is not None:
                raise InvalidValue("give either --near/--far (a range) or --front/--back (a depth), not both")
            if near_mm is None or far_mm is None:
                raise InvalidValue("a range requirement needs both --near and --far")
            return cls("range", near_mm=near_mm, far_mm=far_mm)
        if front_mm is not None or back_mm is not None:
            if front_mm is None or back_mm is None:
                raise InvalidValue("a depth requirement needs both --front and --back")
            return cls("depth", front_mm=front_mm, back_mm=back_mm)
        return None

    @classmethod
    def from_plan(cls, kind, near_mm=None, far_mm=None, front_mm=None, back_mm=None) -> Requirement | None:
        """A shoot's stored plan as a requirement (unknown limits as NaN or ``None``);
        ``None`` when the shoot has no plan."""
        if kind not in ("range", "depth"):
            return None

        def known(value):
            return None if value is None or value != value else float(value)

        return cls(kind, near_mm=known(near_mm), far_mm=known(far_mm), front_mm=known(front_mm),
                   back_mm=known(back_mm))

    def describe(self, imperial: bool = False) -> str:
        if self.kind == "range":
            return f"sharp from {format_distance(self.near_mm, imperial=imperial)} to {format_distance(self.far_mm, imperial=imperial)}"
        return (f"{format_distance(self.front_mm, imperial=imperial)} in front of and "
                f"{format_distance(self.back_mm, imperial=imperial)} behind the focus point")
