"""``sharpzone demo`` writes each shoot's report page and says where."""

from __future__ import annotations

from typer.testing import CliRunner

from sharpzone.cli.app import app


def test_demo_writes_a_report_page_per_shoot(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    result = CliRunner().invoke(app, ["demo", "--folder", str(tmp_path / "demo")])
    assert result.exit_code == 0, result.output
    pages = sorted((tmp_path / "demo" / "reports").glob("page-*.html"))
    assert [p.name for p in pages] == ["page-boathouse-groups.html", "page-couple-portraits.html",
                                       "page-ring-details.html"]
    for page in pages:
        assert f"Report page:      {page}" in result.stdout.replace("\n", "") or page.name in result.stdout
        text = page.read_text(encoding="utf-8")
        assert text.count('<article class="frame') >= 3 and "data:image/jpeg;base64," in text
    assert not list((tmp_path / "demo" / "cards").rglob("*.html"))  # nothing beside the images
