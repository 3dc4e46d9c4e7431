"""``sharpzone demo``: an invented wedding shoot run end to end in a folder of its own.

It writes demo image files with EXIF (Pillow), a catalogue inside the demo folder (never the
user's own), the body, lenses and shoot plans; then ingests the cards, measures every
frame's blur from its pixels, checks every shoot and writes sharp-zone sheets. The pictures
are procedural scenes (``demo_scenes``). The scenario lives in ``seed_data/demo_scenario.toml``.
"""

from __future__ import annotations

import io
import math
import os
import shutil
import tomllib
from dataclasses import dataclass, field
from importlib import resources
from pathlib import Path
from typing import TYPE_CHECKING

from sharpzone.errors import InvalidValue
from sharpzone.units import parse_distance

if TYPE_CHECKING:
    from sharpzone.analysis.frames import CheckResult
    from sharpzone.ingest.pipeline import IngestSummary
    from sharpzone.measure.service import MeasureSummary

MARKER = ".sharpzone-demo"
DEFAULT_FOLDER = "sharpzone-demo"
# Written for the lens the scenario's group portraits used, and for the portrait lens.
SHEETS = (("Altamira 24-70/2.8", ("pdf", "html", "csv", "md")), ("Altamira 85/1.4", ("png",)))

# EXIF tag numbers (CIPA DC-008 / JEITA CP-3451).
_MAKE, _MODEL, _EXIF_IFD = 0x010F, 0x0110, 0x8769
_EXPOSURE, _F_NUMBER, _ISO, _DATETIME_ORIGINAL, _OFFSET_ORIGINAL = 0x829A, 0x829D, 0x8827, 0x9003, 0x9011
_SUBJECT_DISTANCE, _FOCAL_LENGTH, _PIXEL_X, _PIXEL_Y = 0x9206, 0x920A, 0xA002, 0xA003
_FOCAL_35MM, _LENS_SPEC, _LENS_MODEL, _SUBJECT_AREA = 0xA405, 0xA432, 0xA434, 0x9214
from sharpzone.vocabulary import SUBJECT_DISTANCE_INFINITY as _INFINITY_NUMERATOR  # noqa: E402


@dataclass
class DemoShoot:
    name: str
    ingest: IngestSummary
    check: CheckResult
    report_path: Path
    measure: MeasureSummary | None = None
    page_path: Path | None = None


@dataclass
class DemoResult:
    """Where everything the demo made lies, and what it found."""

    folder: Path
    catalog_path: Path
    title: str
    shoots: list[DemoShoot] = field(default_factory=list)
    sheets: list[Path] = field(default_factory=list)


def load_scenario() -> dict:
    """The invented scenario shipped in ``seed_data/demo_scenario.toml``."""
    text = resources.files("sharpzone.seed_data").joinpath("demo_scenario.toml").read_text(encoding="utf-8")
    return tomllib.loads(text)


def _prepare_folder(folder: Path) -> None:
    """Use an empty or earlier demo folder; refuse to touch anything else."""
    if folder.exists():
        if not folder.is_dir():
            raise InvalidValue(f"demo folder {str(folder)!r} is a file", hint="choose another with --folder")
        if any(folder.iterdir()) and not (folder / MARKER).exists():
            raise InvalidValue(f"demo folder {str(folder)!r} is not empty and not an earlier demo",
                               hint="choose another with --folder")
        for name in ("cards", "sheets", "reports", "catalog.sqlite", "catalog.sqlite-wal", "catalog.sqlite-shm",
                     "distances.csv"):
            target = folder / name
            if target.is_dir():
                shutil.rmtree(target)
            elif target.exists():
                target.unlink()
    folder.mkdir(parents=True, exist_ok=True)
    (folder / MARKER).write_text("Made by 'sharpzone demo'; the demo may empty this folder when run again.\n")


def _rational(value: float, denominator: int = 100):
    from PIL.TiffImagePlugin import IFDRational

    return IFDRational(int(round(value * denominator)), denominator)


def _demo_jpeg(scenario: dict, lens: dict, frame: list, index: int) -> bytes:
    """A small JPEG with the EXIF a camera would write for this frame."""
    from PIL import Image

    from sharpzone.demo_scenes import SUBJECT, render_scene

    _file_name, _lens_name, focal, f_number, focus, exposure, iso, clock = frame[:8]
    scene = frame[8] if len(frame) > 8 else "sharp"
    image = Image.fromarray(render_scene(scene, seed=index))
    exif = Image.Exif()
    exif[_MAKE] = scenario["body"]["make"]
    exif[_MODEL] = scenario["body"]["model"]
    ifd = exif.get_ifd(_EXIF_IFD)
    numerator, denominator = (int(part) for part in exposure.split("/"))
    from PIL.TiffImagePlugin import IFDRational

    ifd[_EXPOSURE] = IFDRational(numerator, denominator)
    ifd[_F_NUMBER] = _rational(f_number, 10)
    ifd[_ISO] = iso
    ifd[_DATETIME_ORIGINAL] = f"{scenario['date']} {clock}"
    ifd[_OFFSET_ORIGINAL] = scenario["utc_offset"]
    ifd[_FOCAL_LENGTH] = _rational(focal, 1)
    ifd[_FOCAL_35MM] = int(focal)  # the 36 × 24 mm body: no crop
    ifd[_PIXEL_X], ifd[_PIXEL_Y] = scenario["body"]["pixels"]
    ifd[_LENS_MODEL] = lens["exif_name"]
    # Where the camera focused: the subject's box as SubjectArea (centre x, y, width, height
    # in pixels of the main image, EXIF 2.3 tag 0x9214). The demo's JPEGs are small copies of
    # a 6000 × 4000 frame, so the box is given in the frame's own pixels, as a camera would.
    main_width, main_height = scenario["body"]["pixels"]
    ifd[_SUBJECT_AREA] = tuple(int(round(v * size)) for v, size in
                               zip(SUBJECT, (main_width, main_height, main_width, main_height)))
    low, high = lens["focal"]
    wide, tele = lens["aperture"]
    ifd[_LENS_SPEC] = (_rational(low, 1), _rational(high, 1), _rational(wide, 10), _rational(tele, 10))
    if focus:
        distance_mm = parse_distance(focus)
        ifd[_SUBJECT_DISTANCE] = (IFDRational(_INFINITY_NUMERATOR, 1) if math.isinf(distance_mm)
                                  else _rational(distance_mm / 1000, 1000))
    buffer = io.BytesIO()
    image.save(buffer, "JPEG", exif=exif, quality=80)
    return buffer.getvalue()


def _set_up_catalogue(url: str, scenario: dict, folder: Path) -> None:
    from sharpzone.catalog.engine import session_scope
    from sharpzone.catalog.service import add_body, add_lens, add_shoot

    with session_scope(url) as session:
        body = scenario["body"]
        add_body(session, body["name"], exif_make=body["make"], exif_model=body["model"],
                 format_name=body["format"], pixel_width=body["pixels"][0], pixel_height=body["pixels"][1])
        for lens in scenario["lens"]:
            add_lens(session, lens["name"], focal_min_mm=lens["focal"][0], focal_max_mm=lens["focal"][1],
                     max_aperture_wide=lens["aperture"][0], max_aperture_tele=lens["aperture"][1],
                     min_aperture=lens["min_aperture"], close_focus_mm=parse_distance(lens["close_focus"]),
                     exif_names=[lens["exif_name"]])
        for shoot in scenario["shoot"]:
            def optional(key, parse=parse_distance):
                return parse(shoot[key]) if key in shoot else None

            add_shoot(session, shoot["name"], root_folder=folder / "cards" / shoot["folder"],
                      near_mm=optional("near"), far_mm=optional("far"), front_mm=optional("front"),
                      back_mm=optional("back"), planned_focal_mm=shoot.get("planned_focal"),
                      planned_f_number=shoot.get("planned_aperture"), planned_focus_mm=optional("planned_focus"),
                      notes=shoot.get("notes"))


def _write_cards(scenario: dict, folder: Path) -> None:
    lenses = {lens["name"]: lens for lens in scenario["lens"]}
    index = 0
    for shoot in scenario["shoot"]:
        card = folder / "cards" / shoot["folder"]
        card.mkdir(parents=True, exist_ok=True)
        for frame in shoot["frames"]:
            (card / frame[0]).write_bytes(_demo_jpeg(scenario, lenses[frame[1]], frame, index))
            index += 1
        for damaged in shoot.get("damaged", []):
            whole = _demo_jpeg(scenario, lenses[shoot["frames"][0][1]], shoot["frames"][0], index)
            (card / damaged).write_bytes(whole[:200])  # cut inside the EXIF block
    lines = ["file,distance"] + [f"{name},{distance}" for name, distance in scenario.get("distances", {}).items()]
    (folder / "distances.csv").write_text("\n".join(lines) + "\n", encoding="utf-8")


def _write_report_page(checked: CheckResult, shoot: dict, folder: Path) -> Path:
    """The shoot's report page (thumbnails, zone bars, verdicts) beside its JSON report."""
    from sharpzone.analysis.report_page import report_from_check
    from sharpzone.report.page_html import write_page

    data = report_from_check(checked, title=shoot["name"], jobs=1)
    return write_page(data, folder / "reports" / f"page-{shoot['folder']}.html")


def run_demo(folder: str | os.PathLike = DEFAULT_FOLDER, *, progress=None) -> DemoResult:
    """Run the invented scenario in ``folder`` (created; an earlier demo there is replaced):
    catalogue, cards, ingest, check of every shoot, sharp-zone sheets. Returns where it all is."""
    from sharpzone.analysis.frames import FrameFilter, check_shoot
    from sharpzone.catalog.service.sheets import sheet_from_catalog
    from sharpzone.catalog.engine import open_catalog
    from sharpzone.catalog.location import sqlite_url
    from sharpzone.ingest.pipeline import ingest_paths
    from sharpzone.measure.service import measure_frames
    from sharpzone.report.frames_machine import check_json, rows_json
    from sharpzone.report.jsonout import dumps
    from sharpzone.report.sheet_files import write_sheet

    folder = Path(folder).expanduser().absolute()
    _prepare_folder(folder)
    scenario = load_scenario()
    catalog_path = folder / "catalog.sqlite"
    url = sqlite_url(catalog_path)
    result = DemoResult(folder, catalog_path, scenario["title"])
    _set_up_catalogue(url, scenario, folder)
    _write_cards(scenario, folder)
    (folder / "reports").mkdir()
    (folder / "sheets").mkdir()
    with open_catalog(url) as catalog:
        for shoot in scenario["shoot"]:
            summary = ingest_paths(catalog, [folder / "cards" / shoot["folder"]], shoot=shoot["name"],
                                   distances_csv=folder / "distances.csv", jobs=1, progress=progress)
            measured = measure_frames(catalog, shoot=shoot["name"], jobs=1, progress=progress)
            with catalog.session_scope() as session:
                checked = check_shoot(session, FrameFilter(shoot=shoot["name"]))
            report = folder / "reports" / f"check-{shoot['folder']}.json"
            report.write_text(dumps(rows_json(checked.frames, check_json)) + "\n", encoding="utf-8")
            result.shoots.append(DemoShoot(shoot["name"], summary, checked, report, measured,
                                           _write_report_page(checked, shoot, folder)))
        with catalog.session_scope() as session:
            for lens_name, forms in SHEETS:
                sheet = sheet_from_catalog(session, lens_name, body=scenario["body"]["name"])
                stem = lens_name.lower().replace("/", "-").replace(" ", "-")
                for form in forms:
                    result.sheets.append(write_sheet(sheet, folder / "sheets" / f"{stem}.{form}"))
    return result
