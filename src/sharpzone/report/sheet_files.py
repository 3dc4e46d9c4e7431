"""Writing a sharp-zone sheet to a file whose extension picks the form."""

from __future__ import annotations

import os
from pathlib import Path

from sharpzone.analysis.sheets import Sheet
from sharpzone.errors import InvalidValue, SharpzoneError

# Extension → what it holds; the order is the one error messages list them in.
SHEET_FORMS = {
    ".csv": "tidy CSV rows",
    ".md": "Markdown tables",
    ".html": "printable HTML, charts and tables",
    ".pdf": "PDF on A4 or Letter, charts and table per focal length",
    ".png": "PNG image of the PDF's pages",
}
PAPERS = ("a4", "letter")


def sheet_form(path: str | os.PathLike) -> str:
    """The form (``.csv``, ``.md``, ``.html``, ``.pdf`` or ``.png``) that ``path`` asks for;
    any other extension raises ``InvalidValue`` naming it and the expected ones."""
    suffix = Path(path).suffix.lower()
    if suffix not in SHEET_FORMS:
        shown = f"extension {suffix!r}" if suffix else "no extension"
        expected = ", ".join(SHEET_FORMS)
        raise InvalidValue(f"sheet file {str(path)!r} has {shown}: expected one of {expected}")
    return suffix


def check_paper(paper: str) -> str:
    """``"a4"`` (the default) or ``"letter"``, any case; else ``InvalidValue``."""
    lowered = str(paper).strip().lower()
    if lowered not in PAPERS:
        raise InvalidValue(f"paper {paper!r} is not valid: expected one of {', '.join(PAPERS)}")
    return lowered


def render_sheet(sheet: Sheet, form: str, *, imperial: bool = False, paper: str = "a4") -> bytes:
    """The bytes of ``sheet`` in ``form`` (an extension from ``SHEET_FORMS``); PDF, PNG and
    HTML are laid out for ``paper`` (landscape A4 or Letter)."""
    form = sheet_form(f"sheet{form}")
    paper = check_paper(paper)
    if form in (".pdf", ".png"):
        from sharpzone.report import sheet_chart

        render = sheet_chart.render_pdf if form == ".pdf" else sheet_chart.render_png
        return render(sheet, imperial=imperial, paper=paper)
    from sharpzone.report import sheet_text

    if form == ".csv":
        return sheet_text.render_csv(sheet).encode("utf-8")
    if form == ".md":
        return sheet_text.render_markdown(sheet, imperial=imperial).encode("utf-8")
    return sheet_text.render_html(sheet, imperial=imperial, paper=paper).encode("utf-8")


def write_sheet(sheet: Sheet, path: str | os.PathLike, imperial: bool = False, paper: str = "a4") -> Path:
    """Write ``sheet`` to ``path`` in the form its extension names; returns the absolute path.

    The file appears whole or not at all: it is written beside the target and renamed over
    it, so a failed render never leaves half a sheet or destroys an older one.
    """
    target = Path(path).expanduser().absolute()
    data = render_sheet(sheet, sheet_form(target), imperial=imperial, paper=paper)
    if not target.parent.is_dir():
        raise SharpzoneError(f"cannot write sheet {str(target)!r}: folder {str(target.parent)!r} does not exist")
    # A fresh file of our own (mode from the umask, like any other file the user writes).
    temporary = target.with_name(f".{target.name}.{os.getpid()}.partial")
    try:
        try:
            with open(temporary, "xb") as out:
                out.write(data)
            os.replace(temporary, target)
        except BaseException:
            temporary.unlink(missing_ok=True)
            raise
    except OSError as error:
        raise SharpzoneError(f"cannot write sheet {str(target)!r}: {error.strerror or error}") from None
    return target
