"""Service functions over the catalogue: each takes a ``Session`` and plain values, checks
everything before writing, and raises one clear ``SharpzoneError`` when it cannot.

Commands call exactly one of these inside one unit of work (``catalog.session_scope()``).
"""

from sharpzone.catalog.service.bodies import (
    add_body,
    edit_body,
    find_body_for_exif,
    get_body,
    list_bodies,
    remove_body,
)
from sharpzone.catalog.service.bundle import export_catalog, import_catalog
from sharpzone.catalog.service.formats import add_format, edit_format, find_format, get_format, list_formats, remove_format
from sharpzone.catalog.service.info import CatalogInfo, catalog_info
from sharpzone.catalog.service.lenses import (
    add_lens,
    add_lens_alias,
    edit_lens,
    find_lens_for_exif,
    get_lens,
    list_lenses,
    remove_lens,
    remove_lens_alias,
)
from sharpzone.catalog.service.shoots import (
    add_shoot,
    edit_shoot,
    get_shoot,
    list_shoots,
    remove_shoot,
    shoot_frame_count,
)

__all__ = [
    "add_body", "edit_body", "find_body_for_exif", "get_body", "list_bodies", "remove_body",
    "add_format", "edit_format", "find_format", "get_format", "list_formats", "remove_format",
    "add_lens", "add_lens_alias", "edit_lens", "find_lens_for_exif", "get_lens",
    "list_lenses", "remove_lens", "remove_lens_alias",
    "add_shoot", "edit_shoot", "get_shoot", "list_shoots", "remove_shoot", "shoot_frame_count",
    "CatalogInfo", "catalog_info", "export_catalog", "import_catalog",
]
