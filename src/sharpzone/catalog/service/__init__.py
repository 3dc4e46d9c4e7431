"""Service functions over the catalogue: each takes a ``Session`` and plain values, checks
everything before writing, and raises one clear ``SharpzoneError`` when it cannot.

Commands call exactly one of these inside one unit of work (``catalog.session_scope()``).
Each name is imported from its module on first use, so a command loads only the modules it
calls (``body list`` needs neither the bundle code nor the lens checks' numpy).
"""

from __future__ import annotations

import importlib
from typing import TYPE_CHECKING

# Which module holds each function: ``from sharpzone.catalog.service import get_body``
# imports ``service.bodies`` alone.
_MODULES = {
    "bodies": ("add_body", "edit_body", "find_body_for_exif", "get_body", "list_bodies", "remove_body"),
    "bundle": ("export_catalog", "import_catalog"),
    "formats": ("add_format", "edit_format", "find_format", "get_format", "list_formats", "remove_format"),
    "info": ("CatalogInfo", "catalog_info"),
    "lenses": ("add_lens", "add_lens_alias", "edit_lens", "find_lens_for_exif", "get_lens", "list_lenses",
               "remove_lens", "remove_lens_alias"),
    "sheets": ("sheet_from_catalog",),
    "shoots": ("add_shoot", "edit_shoot", "get_shoot", "list_shoots", "remove_shoot", "shoot_frame_count"),
}
_HOME = {name: module for module, names in _MODULES.items() for name in names}

__all__ = [name for names in _MODULES.values() for name in names]

if TYPE_CHECKING:
    from sharpzone.catalog.service.bodies import (
        add_body, edit_body, find_body_for_exif, get_body, list_bodies, remove_body,
    )
    from sharpzone.catalog.service.bundle import export_catalog, import_catalog
    from sharpzone.catalog.service.formats import (
        add_format, edit_format, find_format, get_format, list_formats, remove_format,
    )
    from sharpzone.catalog.service.info import CatalogInfo, catalog_info
    from sharpzone.catalog.service.lenses import (
        add_lens, add_lens_alias, edit_lens, find_lens_for_exif, get_lens, list_lenses,
        remove_lens, remove_lens_alias,
    )
    from sharpzone.catalog.service.sheets import sheet_from_catalog
    from sharpzone.catalog.service.shoots import (
        add_shoot, edit_shoot, get_shoot, list_shoots, remove_shoot, shoot_frame_count,
    )


def __getattr__(name: str):
    module = _HOME.get(name)
    if module is None:
        raise AttributeError(f"module {__name__!r} has no attribute {name!r}")
    value = getattr(importlib.import_module(f"{__name__}.{module}"), name)
    globals()[name] = value
    return value


def __dir__() -> list[str]:
    return sorted(set(globals()) | set(__all__))
