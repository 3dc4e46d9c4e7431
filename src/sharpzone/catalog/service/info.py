"""What and where the catalogue is: location (password masked), schema revision, counts."""

from __future__ import annotations

from dataclasses import dataclass, field

from sqlalchemy import func, select
from sqlalchemy.orm import Session

from sharpzone.catalog.location import display_url, sqlite_path
from sharpzone.catalog.models import TABLES_IN_DEPENDENCY_ORDER


@dataclass(frozen=True)
class CatalogInfo:
    """``location`` is the URL with any password masked; ``file_size_bytes`` is for SQLite
    files only; ``row_counts`` maps table name to number of rows."""

    location: str
    backend: str
    path: str | None
    file_size_bytes: int | None
    revision: str | None
    newest_revision: str
    row_counts: dict[str, int] = field(default_factory=dict)


def catalog_info(session: Session) -> CatalogInfo:
    """Describe the catalogue ``session`` is bound to."""
    from sharpzone.catalog.migrate import current_revision, head_revision

    engine = session.get_bind()
    url = engine.url.render_as_string(hide_password=False)
    path = sqlite_path(url)
    counts = {
        model.__tablename__: session.scalar(select(func.count()).select_from(model)) or 0
        for model in TABLES_IN_DEPENDENCY_ORDER
    }
    return CatalogInfo(
        location=display_url(url),
        backend=engine.dialect.name,
        path=str(path) if path else None,
        file_size_bytes=path.stat().st_size if path and path.exists() else None,
        revision=current_revision(session.connection()),
        newest_revision=head_revision(),
        row_counts=counts,
    )
